#!/bin/sh
# Run every unit-test program and every command-line test script; print one
# summary line; exit non-zero if anything failed.
#   tests/run-all.sh BUILD_DIR
# A program that exits 77 was skipped as a whole (an optional tool is
# missing); a check inside a program that could not run prints a line with
# "# SKIP" (SL_SKIP in tests/sl_test.h, sl_skip in tests/cli/lib.inc).  Both
# are counted and listed, never counted as passes.
set -u
build=${1:-build}
export SL_BIN="$PWD/$build/steamloft"
export SL_SRCDIR="$PWD"
export CK_DEFAULT_TIMEOUT=${CK_DEFAULT_TIMEOUT:-120}
pass=0; fail=0; skip=0; checks_skipped=0; failed=""; skipped=""
log=$(mktemp "${TMPDIR:-/tmp}/sl-run-all.XXXXXX")
trap 'rm -f "$log"' EXIT
one() {
  name=$1; shift
  echo "== $name"
  "$@" >"$log" 2>&1; rc=$?
  cat "$log"
  n=$(grep -c '# SKIP' "$log")
  checks_skipped=$((checks_skipped + n))
  if [ "$rc" -eq 77 ]; then skip=$((skip + 1)); skipped="$skipped $name"
  elif [ "$rc" -eq 0 ]; then pass=$((pass + 1))
  else fail=$((fail + 1)); failed="$failed $name"; fi
}
for t in "$build"/tests/test_*; do
  case "$t" in *.d) continue ;; esac
  [ -x "$t" ] || continue
  one "$(basename "$t")" "$t"
done
for s in tests/cli/*.sh; do
  [ -f "$s" ] || continue
  one "$(basename "$s")" sh "$s"
done
echo "steamloft tests: $pass programs passed, $fail failed${failed:+ ($failed )}, $skip skipped${skipped:+ ($skipped )}; $checks_skipped checks skipped"
[ "$fail" -eq 0 ]
