#!/bin/sh
# Fault injection: every allocation that our code makes is made to fail in
# turn on `run` (all outputs),
# `decay` and a small `ensemble`, in the spirit of SQLite's fault-injection
# tests.  Each failure must give exit 71 (EX_OSERR) with one message that says
# memory ran out, no crash, no leak of our allocations, and no partial or
# staged file in the output folder.  PRACTICE: our own rule (README, Exit
# codes).  The preload library is tests/tools/failalloc.c.
. "$SL_SRCDIR/tests/cli/lib.inc"
if ! command -v cc >/dev/null 2>&1; then
  sl_skip "no C compiler to build the preload library"; sl_done; exit $?
fi
if nm "$SL_BIN" 2>/dev/null | grep -q '__asan_init\|__tsan_init'; then
  sl_skip "sanitizer build: its allocator cannot be preloaded over"; sl_done; exit $?
fi
SO="$SL_TMP/failalloc.so"
if ! cc -O1 -shared -fPIC -o "$SO" "$SL_SRCDIR/tests/tools/failalloc.c" 2>"$SL_TMP/cc.err"; then
  sl_fail "building the preload library"; sed 's/^/#   /' "$SL_TMP/cc.err"; sl_done; exit $?
fi
EX="$SL_SRCDIR/examples"

# sweep NAME OUTDIR-COMMAND...: the command runs in a fresh folder $W that
# holds one file of the user's (keep.txt), which must survive every failure.
sweep() {
  name=$1; shift
  W="$SL_TMP/w"; rm -rf "$W"; mkdir -p "$W"; echo keep >"$W/keep.txt"
  (cd "$W" && SL_FAIL_ALLOC_REPORT="$SL_TMP/rep" LD_PRELOAD="$SO" "$@" >/dev/null 2>"$SL_TMP/err"); rc=$?
  read -r total leaked <"$SL_TMP/rep"
  if [ "$rc" -ne 0 ] || [ "$leaked" -ne 0 ] || [ "$total" -lt 10 ]; then
    sl_fail "$name without faults: exit $rc, $leaked of $total allocations not freed"
    sed 's/^/#   /' "$SL_TMP/err" | head -3; return
  fi
  ls -A "$W" | sort >"$SL_TMP/complete"
  bad=0; i=1
  while [ "$i" -le "$total" ]; do
    rm -rf "$W"; mkdir -p "$W"; echo keep >"$W/keep.txt"
    (cd "$W" && SL_FAIL_ALLOC=$i SL_FAIL_ALLOC_REPORT="$SL_TMP/rep" LD_PRELOAD="$SO" "$@" \
       >/dev/null 2>"$SL_TMP/err"); rc=$?
    read -r n leaked <"$SL_TMP/rep" 2>/dev/null || leaked=unknown
    ls -A "$W" | sort >"$SL_TMP/left"
    why=""
    if [ "$rc" -eq 71 ]; then
      [ "$(wc -l <"$SL_TMP/err")" -eq 1 ] || why="$why; $(wc -l <"$SL_TMP/err") message lines"
      grep -qi 'memory\|allocat' "$SL_TMP/err" || why="$why; message does not say memory ran out"
      [ "$(cat "$SL_TMP/left")" = "keep.txt" ] || why="$why; left: $(tr '\n' ' ' <"$SL_TMP/left")"
    elif [ "$rc" -eq 0 ]; then
      cmp -s "$SL_TMP/left" "$SL_TMP/complete" || why="$why; exit 0 with incomplete outputs"
    else
      why="$why; exit $rc"
    fi
    [ "$leaked" = 0 ] || why="$why; $leaked allocations not freed"
    if [ -n "$why" ]; then
      bad=$((bad + 1))
      [ "$bad" -le 8 ] && echo "#   $name, allocation $i:${why} ($(head -c 160 "$SL_TMP/err"))"
    fi
    i=$((i + 1))
  done
  if [ "$bad" -eq 0 ]; then sl_ok "$name: each of $total allocations failed in turn, each a clean exit 71"
  else sl_fail "$name: $bad of $total allocation failures handled badly"; fi
}

sweep "run with every output" "$SL_BIN" run "$EX/demo.ini" -o out.nc --csv csv --plot plots
sweep "run --json" "$SL_BIN" run --json "$EX/demo.ini"
sweep "decay" "$SL_BIN" decay "$EX/injection-profile.csv" -o decay.nc
sweep "small ensemble" "$SL_BIN" ensemble "$EX/ensemble-stony.ini" -n 8 -o members.csv
sl_done
