#!/bin/sh
# `decay` is the chain entered at the injection stage: the injection profile a
# `run` wrote (netCDF, doubles, so nothing is rounded on the way) gives the
# same box-model results, to the last printed digit, through `run` and
# through `decay` with the same keys; without --scenario decay takes the
# table's defaults, which are run's (an earlier decay had a month default of
# its own, and the same profile decayed in 1.916 yr there and 1.926 yr in run).
# The comparison is shown to fail when one key differs.
. "$(dirname "$0")/lib.inc"
EX=${SL_SRCDIR:-.}/examples
PY=/usr/bin/python3
[ -x "$PY" ] || { echo "# SKIP /usr/bin/python3 missing"; exit 77; }

# Every box-model member of decay's JSON that run's JSON also has must be equal.
same() {
  $PY - "$1" "$2" <<'PYEOF'
import json, sys
r, d = (json.load(open(p)) for p in sys.argv[1:3])
common = [k for k in d if k in r and k not in ("caution", "source")]
assert len(common) >= 12, common  # the box model's keys are there at all
diff = [(k, r[k], d[k]) for k in common if r[k] != d[k]]
for k, a, b in diff:
    print("#   %s: run %r, decay %r" % (k, a, b))
sys.exit(1 if diff else 0)
PYEOF
}

# 1. A scenario with a month and [site] keys, impactor: decay --scenario.
S="$EX/ocean-stony-300m.ini"
sl_expect_exit 0 "run (impactor, July)" "$SL_BIN" run "$S" --json -o "$SL_TMP/a.nc"
cp "$SL_TMP/out" "$SL_TMP/run_a.json"
sl_expect_exit 0 "decay --scenario of its profile" "$SL_BIN" decay --scenario "$S" "$SL_TMP/a.nc" --json
if same "$SL_TMP/run_a.json" "$SL_TMP/out"; then sl_ok "run and decay --scenario: identical box model"
else sl_fail "run and decay --scenario differ"; fi

# 2. --set reaches both the same way ([strat] keys and the month).
set -- --set strat.span_years=6 --set strat.step_days=10 --set strat.antarctic_vortex_fraction=0.3 \
       --set site.month=2 --set strat.extratropics_atmosphere=midlatitude-winter
sl_expect_exit 0 "run with --set" "$SL_BIN" run "$S" --json -o "$SL_TMP/b.nc" "$@"
cp "$SL_TMP/out" "$SL_TMP/run_b.json"
sl_expect_exit 0 "decay with the same --set" "$SL_BIN" decay --scenario "$S" "$SL_TMP/b.nc" --json "$@"
if same "$SL_TMP/run_b.json" "$SL_TMP/out"; then sl_ok "run and decay with --set: identical box model"
else sl_fail "run and decay with --set differ"; fi
# The short forms are the same keys.
sl_expect_exit 0 "decay with the short forms" "$SL_BIN" decay --scenario "$S" "$SL_TMP/b.nc" --json \
  --span-years 6 --step-days 10 --month 2 --extratropics-atmosphere midlatitude-winter \
  --set strat.antarctic_vortex_fraction=0.3
if same "$SL_TMP/run_b.json" "$SL_TMP/out"; then sl_ok "short forms equal --set"
else sl_fail "short forms differ from --set"; fi

# 3. A scenario with every box-model key at its default (explosion, no
# month): decay without --scenario uses the same defaults.
S="$EX/explosion-surface-burst.ini"
sl_expect_exit 0 "run (explosion, defaults)" "$SL_BIN" run "$S" --json -o "$SL_TMP/c.nc"
cp "$SL_TMP/out" "$SL_TMP/run_c.json"
sl_expect_exit 0 "decay without --scenario" "$SL_BIN" decay "$SL_TMP/c.nc" --json
if same "$SL_TMP/run_c.json" "$SL_TMP/out"; then sl_ok "decay's defaults are run's"
else sl_fail "decay's defaults differ from run's"; fi

# 3b. A run file carries its month (issue 13): decay on the file alone,
# without --scenario, reproduces a run whose scenario has a month.
sl_expect_exit 0 "decay of a July run's file alone" "$SL_BIN" decay "$SL_TMP/a.nc" --json
if same "$SL_TMP/run_a.json" "$SL_TMP/out"; then sl_ok "decay reads the month back from the run file"
else sl_fail "decay on the run file alone differs from the run"; fi

# 3c. The injection table `run --injection-table` writes is a profile decay
# reads: the run's box model again, with a date (July run) and without one.
S="$EX/ocean-stony-300m.ini"
sl_expect_exit 0 "run --injection-table (nominal time, July)" "$SL_BIN" run "$S" --json --injection-table "$SL_TMP/a_table.csv"
cp "$SL_TMP/out" "$SL_TMP/run_at.json"
sl_expect_exit 0 "decay of the run's injection table" "$SL_BIN" decay "$SL_TMP/a_table.csv" --json
if same "$SL_TMP/run_at.json" "$SL_TMP/out"; then sl_ok "run --injection-table then decay TABLE: identical box model"
else sl_fail "decay of the run's injection table differs from the run"; fi
sl_expect_exit 0 "run --injection-table (a [site] date)" "$SL_BIN" run "$S" --json --set site.date=2022-07-15T04:15:00Z \
  --injection-table "$SL_TMP/d_table.csv"
cp "$SL_TMP/out" "$SL_TMP/run_dt.json"
sl_expect_exit 0 "decay of the dated table" "$SL_BIN" decay "$SL_TMP/d_table.csv" --json
if same "$SL_TMP/run_dt.json" "$SL_TMP/out"; then sl_ok "dated table: decay takes the month from the rows"
else sl_fail "decay of the dated table differs from the run"; fi

# 4. The comparison can fail: one key changed on one side only.
sl_expect_exit 0 "decay with another month" "$SL_BIN" decay "$SL_TMP/c.nc" --json --month 1
if same "$SL_TMP/run_c.json" "$SL_TMP/out" >/dev/null; then sl_fail "a changed month went unnoticed"
else sl_ok "a changed month is seen"; fi
sl_done
