#!/bin/sh
# Run every unit-test program and every command-line test script; print one
# summary line; exit non-zero if anything failed.  A program that exits 77
# skipped (an optional tool is missing; it says which): it is counted as
# skipped, neither passed nor failed.
#   tests/run-all.sh BUILD_DIR
set -u
build=${1:-build}
export SL_BIN="$PWD/$build/steamloft"
export SL_SRCDIR="$PWD"
export CK_DEFAULT_TIMEOUT=${CK_DEFAULT_TIMEOUT:-120}
pass=0; fail=0; failed=""; skip=0; skipped=""
# result NAME STATUS
result() {
  case "$2" in
    0) pass=$((pass + 1)) ;;
    77) skip=$((skip + 1)); skipped="$skipped $1" ;;
    *) fail=$((fail + 1)); failed="$failed $1" ;;
  esac
}
for t in "$build"/tests/test_*; do
  case "$t" in *.d) continue ;; esac
  [ -x "$t" ] || continue
  echo "== $(basename "$t")"
  "$t"; result "$(basename "$t")" $?
done
for s in tests/cli/*.sh; do
  [ -f "$s" ] || continue
  echo "== $(basename "$s")"
  sh "$s"; result "$(basename "$s")" $?
done
[ "$skip" -eq 0 ] || echo "steamloft tests: $skip skipped ($skipped ): an optional tool is missing"
echo "steamloft tests: $pass programs passed, $fail failed${failed:+ ($failed )}"
[ "$fail" -eq 0 ]
