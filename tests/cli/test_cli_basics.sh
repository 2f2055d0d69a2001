#!/bin/sh
# Command-line skeleton: help, version, unknown command/option, help command.
. "$(dirname "$0")/lib.inc"

sl_expect_exit 0 "--help" "$SL_BIN" --help
sl_expect_grep "$SL_TMP/out" "Usage: steamloft" "--help prints usage to stdout"
sl_expect_grep "$SL_TMP/out" "Screening estimate" "--help carries the caution"
sl_expect_exit 0 "--version" "$SL_BIN" --version
sl_expect_grep "$SL_TMP/out" "^steamloft [0-9][0-9.]* (git [0-9a-f]*" "--version prints version and git hash"
sl_expect_grep "$SL_TMP/out" "^Build: serial (without MPI" "--version says which build (serial)"
sl_expect_exit 64 "unknown command" "$SL_BIN" frobnicate
sl_expect_grep "$SL_TMP/err" "unknown command 'frobnicate'" "unknown command is named"
sl_expect_grep "$SL_TMP/err" "steamloft --help" "unknown command points to --help"
sl_expect_exit 64 "unknown global option" "$SL_BIN" --bogus
sl_expect_grep "$SL_TMP/err" "unknown option '--bogus'" "unknown option is named"
sl_expect_exit 64 "no command" "$SL_BIN"
sl_expect_exit 0 "help command" "$SL_BIN" help
sl_expect_exit 64 "help of unknown command" "$SL_BIN" help frobnicate

# Options that mean one thing.  One message (and the --help pointer) per mistake.
ex="$SL_SRCDIR/examples/explosion-surface-burst.ini"
ex2="$SL_SRCDIR/examples/explosion-50Mt-low-airburst.ini"
sl_expect_exit 64 "unknown command option" "$SL_BIN" run --frobnicate "$ex"
sl_expect_grep "$SL_TMP/err" "^steamloft run: unknown option '--frobnicate'" "the unknown option is named"
[ "$(wc -l <"$SL_TMP/err")" -eq 2 ] && sl_ok "one message for one mistake" || sl_fail "$(wc -l <"$SL_TMP/err") lines on stderr"
sl_expect_exit 64 "option without its value" "$SL_BIN" run "$ex" -o
sl_expect_grep "$SL_TMP/err" "option '-o' needs a value" "the missing value is named"
[ "$(wc -l <"$SL_TMP/err")" -eq 2 ] && sl_ok "one message for a missing value" || sl_fail "$(wc -l <"$SL_TMP/err") lines on stderr"

# Global options anywhere on the line: -f/--force after the command overwrites
# exactly as before it.  Each overwrite uses another scenario, and `decay`
# reads the file back, so a file that was not replaced is caught.
D="$SL_TMP/force"; mkdir -p "$D"
strat() { "$SL_BIN" decay --json "$1" | sed -n 's/.*"strat_injected_kg": \([^,]*\),*/\1/p'; }
want1=$("$SL_BIN" run --json "$ex" | sed -n 's/.*"strat_injected_kg": \([^,]*\),*/\1/p')
want2=$("$SL_BIN" run --json "$ex2" | sed -n 's/.*"strat_injected_kg": \([^,]*\),*/\1/p')
sl_expect_exit 0 "run -o out.nc" "$SL_BIN" run "$ex" -o "$D/out.nc"
sl_expect_exit 73 "no overwrite without --force" "$SL_BIN" run "$ex2" -o "$D/out.nc"
sl_expect_grep "$SL_TMP/err" "to replace it, run: $SL_BIN --force run " "the overwrite error gives the command"
hint=$(sed -n 's/^steamloft: to replace it, run: //p' "$SL_TMP/err")
sl_expect_exit 0 "the hint's command works as printed" sh -c "$hint"
[ "$(strat "$D/out.nc")" = "$want2" ] && sl_ok "the hint's command replaced the file" || sl_fail "file not replaced by the hint's command"
sl_expect_exit 0 "run x.ini --force -o out.nc" "$SL_BIN" run "$ex" --force -o "$D/out.nc"
[ "$(strat "$D/out.nc")" = "$want1" ] && sl_ok "--force after the command replaced the file" || sl_fail "--force after the command"
sl_expect_exit 0 "steamloft --force run x.ini -o out.nc" "$SL_BIN" --force run "$ex2" -o "$D/out.nc"
[ "$(strat "$D/out.nc")" = "$want2" ] && sl_ok "--force before the command replaced the file" || sl_fail "--force before the command"
# The two placements write the same file: every variable and attribute equal
# but the history (the command line and time it records).
if command -v ncdump >/dev/null 2>&1; then
  "$SL_BIN" run "$ex" --force -o "$D/after.nc" >/dev/null 2>&1
  "$SL_BIN" --force run "$ex" -o "$D/before.nc" >/dev/null 2>&1
  "$SL_BIN" run "$ex" --force -o "$D/after.nc" >/dev/null 2>&1
  "$SL_BIN" --force run "$ex" -o "$D/before.nc" >/dev/null 2>&1
  for f in after before; do ncdump "$D/$f.nc" | sed '1d; /:history = /d' >"$SL_TMP/$f.cdl"; done
  if [ "$(wc -l <"$SL_TMP/after.cdl")" -gt 100 ] && cmp -s "$SL_TMP/after.cdl" "$SL_TMP/before.cdl"; then
    sl_ok "run x.ini --force -o F and --force run x.ini -o F write the same file (all but history)"
  else sl_fail "the two --force placements write different files"; diff "$SL_TMP/after.cdl" "$SL_TMP/before.cdl" | head -5 | sed 's/^/#   /'; fi
  ncdump -h "$D/after.nc" | grep -q -- ":history = .*steamloft run $ex --force -o $D/after.nc\"" \
    && sl_ok "the history records the command line as given" || sl_fail "history lacks the command line"
else
  sl_skip "ncdump (netcdf-bin) missing: the two --force placements are compared by decay only"
fi
sl_expect_exit 0 "run -o out.nc -f (short, at the end)" "$SL_BIN" run "$ex" -o "$D/out.nc" -f
[ "$(strat "$D/out.nc")" = "$want1" ] && sl_ok "-f at the end replaced the file" || sl_fail "-f at the end"
sl_expect_exit 0 "-q after the command" "$SL_BIN" run "$ex" -q
sl_expect_exit 64 "a global option after '--' is an argument" "$SL_BIN" run -- "$ex" --force
# The format follows the file name: never CSV (or anything) into .nc, never netCDF into .csv.
sl_expect_exit 64 "run -o out.csv is refused" "$SL_BIN" run "$ex" -o "$D/out.csv"
sl_expect_grep "$SL_TMP/err" "must end in .nc; for CSV files give --csv DIR" "the refusal says what to do"
[ ! -e "$D/out.csv" ] && sl_ok "no out.csv was written" || sl_fail "out.csv exists"
if command -v ncdump >/dev/null 2>&1; then
  ncdump -k "$D/out.nc" >"$SL_TMP/kind" 2>&1 && sl_ok "out.nc is netCDF ($(cat "$SL_TMP/kind"))" || sl_fail "out.nc is not netCDF"
else
  echo "# ncdump missing: netCDF kind of out.nc not checked (decay read it above)"
fi
# One meaning per short option: -j is --threads wherever it exists, not --json.
sl_expect_exit 64 "run -j is refused" "$SL_BIN" run -j "$ex"
sl_done
