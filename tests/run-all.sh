#!/bin/sh
# Run every unit-test program and every command-line test script; print one
# summary line; exit non-zero if anything failed.
#   tests/run-all.sh BUILD_DIR
set -u
build=${1:-build}
export SL_BIN="$PWD/$build/steamloft"
export SL_SRCDIR="$PWD"
export CK_DEFAULT_TIMEOUT=${CK_DEFAULT_TIMEOUT:-120}
pass=0; fail=0; failed=""
for t in "$build"/tests/test_*; do
  case "$t" in *.d) continue ;; esac
  [ -x "$t" ] || continue
  echo "== $(basename "$t")"
  if "$t"; then pass=$((pass + 1)); else fail=$((fail + 1)); failed="$failed $(basename "$t")"; fi
done
for s in tests/cli/*.sh; do
  [ -f "$s" ] || continue
  echo "== $(basename "$s")"
  if sh "$s"; then pass=$((pass + 1)); else fail=$((fail + 1)); failed="$failed $(basename "$s")"; fi
done
echo "steamloft tests: $pass programs passed, $fail failed${failed:+ ($failed )}"
[ "$fail" -eq 0 ]
