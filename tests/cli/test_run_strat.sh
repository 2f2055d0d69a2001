#!/bin/sh
# `steamloft run` continues into the box model: the summary keys of issue 6
# in text and JSON, the [strat] keys, and a bad [strat] value.
. "$(dirname "$0")/lib.inc"
ex="$SL_SRCDIR/examples/explosion-surface-burst.ini"

sl_expect_exit 0 "run the example" "$SL_BIN" run "$ex"
sl_expect_grep "$SL_TMP/out" "How long it stays" "text summary has the box model"
sl_expect_grep "$SL_TMP/out" "e-folding time" "text summary has the e-folding time"
sl_expect_exit 0 "run --json" "$SL_BIN" run --json "$ex"
if /usr/bin/python3 - "$SL_TMP/out" <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
keys = ["efolding_years", "mean_residence_years", "percent_of_background", "peak_global_anomaly_ppmv",
        "peak_global_column_kg_m2", "peak_local_column_kg_m2", "forcing_indicator_W_m2",
        "fraction_remaining_1y", "fraction_remaining_3y", "strat_sinks_kg", "strat_injected_kg"]
missing = [k for k in keys if k not in d]
assert not missing, missing
# Budget: injected = remaining + sinks (to the printed digits).
tot = d["strat_remaining_kg"] + sum(d["strat_sinks_kg"].values())
assert abs(tot - d["strat_injected_kg"]) <= 1e-6 * max(d["strat_injected_kg"], 1.0), (tot, d["strat_injected_kg"])
assert 0.0 <= d["fraction_remaining_3y"] <= d["fraction_remaining_1y"] <= 1.0
assert d["parameters"]["strat.span_years"]["value"] == 20
PY
then sl_ok "JSON box-model keys and budget"; else sl_fail "JSON box-model keys and budget"; fi

# [strat] keys reach the run; a value out of range is refused with its range.
{ cat "$ex"; printf '\n[strat]\nspan_years = 3\ntropics_atmosphere = tropical\n'; } > "$SL_TMP/s.ini"
sl_expect_exit 0 "run with [strat] keys" "$SL_BIN" run --json "$SL_TMP/s.ini"
sl_expect_grep "$SL_TMP/out" '"strat.span_years"' "span in the parameters"
{ cat "$ex"; printf '\n[strat]\nstep_days = 0.5\n'; } > "$SL_TMP/bad.ini"
sl_expect_exit 65 "step_days out of range" "$SL_BIN" run "$SL_TMP/bad.ini"
sl_expect_grep "$SL_TMP/err" "step_days" "the key is named"
{ cat "$ex"; printf '\n[strat]\ntropics_atmosphere = mars\n'; } > "$SL_TMP/bad2.ini"
sl_expect_exit 65 "unknown background" "$SL_BIN" run "$SL_TMP/bad2.ini"

# Nothing enters the stratosphere (a small airburst): the decay times and
# fractions are undefined and reported as null / none, never as 0.
sl_expect_exit 0 "run with nothing injected" "$SL_BIN" run --json "$SL_SRCDIR/examples/airburst-small.ini"
sl_expect_grep "$SL_TMP/out" '"efolding_years": null' "e-folding null when nothing was injected"
sl_expect_grep "$SL_TMP/out" '"fraction_remaining_3y": null' "fraction remaining null when nothing was injected"
sl_done
