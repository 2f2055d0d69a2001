#!/bin/sh
# `steamloft sweep` over text keys (--vary site.atmosphere=A,B): each row
# gives the numbers `run --set site.atmosphere=A` gives, the CSV carries the
# text and the netCDF file the index with CF flags, 1 and 2 threads write the
# same bytes, bad text values are refused naming the valid ones, and a large
# grid prints its statistics with a line pointing at the CSV.
. "$(dirname "$0")/lib.inc"
PY=/usr/bin/python3
EX="$SL_SRCDIR/examples"
[ -x "$PY" ] || { echo "1..0 # SKIP python3 is missing"; exit 77; }

sl_expect_exit 0 "sweep over two atmospheres" "$SL_BIN" sweep "$EX/demo.ini" \
  --vary site.atmosphere=tropical,subarctic-winter --json
cp "$SL_TMP/out" "$SL_TMP/sweep.json"
for a in tropical subarctic-winter; do
  "$SL_BIN" run "$EX/demo.ini" --set site.atmosphere=$a --json >"$SL_TMP/run-$a.json" 2>"$SL_TMP/err" ||
    sl_fail "run --set site.atmosphere=$a"
done
$PY - "$SL_TMP/sweep.json" "$SL_TMP/run-tropical.json" "$SL_TMP/run-subarctic-winter.json" <<'PYEOF' >"$SL_TMP/py.txt" 2>&1
import json, math, sys
rows = json.load(open(sys.argv[1]))["rows"]
assert [r["site.atmosphere"] for r in rows] == ["tropical", "subarctic-winter"], rows
def close(a, b):
    return a == b or (a is not None and b is not None and abs(a - b) <= 1e-8 * max(abs(a), abs(b)))
for r, path in zip(rows, sys.argv[2:]):
    run = json.load(open(path))
    assert r["status"] == "ok", r
    pairs = [(r["energy_at_sea_Mt"] * 4.184e15, run["energy_at_sea_J"]),
             (r["stratospheric_water_Tg"] * 1e9, run["stratospheric_water_kg"]),
             (r["percent_of_background"], run["percent_of_background"]),
             (r["efolding_years"], run["efolding_years"])]
    for a, b in pairs:
        assert close(a, b), (r["site.atmosphere"], a, b)
    assert r["regime"] == run["regime"] and r["validity"] == run["validity"], (r, run["regime"])
# The two atmospheres must give different water (else the key was not set).
assert rows[0]["stratospheric_water_Tg"] != rows[1]["stratospheric_water_Tg"], rows
print("ok")
PYEOF
if [ $? -eq 0 ]; then sl_ok "each sweep row = run --set site.atmosphere=... (energy at sea, water, % of background, e-folding, regime, validity)"; else
  sl_fail "sweep rows vs run"; sed 's/^/#   /' "$SL_TMP/py.txt" | tail -3; fi

# A choice key of the box model (the members rebuild it): the same numbers as run --set.
sl_expect_exit 0 "sweep over strat.extratropics_atmosphere" "$SL_BIN" sweep "$EX/ocean-stony-300m.ini" \
  --vary strat.extratropics_atmosphere=us1976-humid,subarctic-winter --json
cp "$SL_TMP/out" "$SL_TMP/strat.json"
for a in us1976-humid subarctic-winter; do
  "$SL_BIN" run "$EX/ocean-stony-300m.ini" --set strat.extratropics_atmosphere=$a --json >"$SL_TMP/srun-$a.json" 2>"$SL_TMP/err" ||
    sl_fail "run --set strat.extratropics_atmosphere=$a"
done
$PY - "$SL_TMP/strat.json" "$SL_TMP/srun-us1976-humid.json" "$SL_TMP/srun-subarctic-winter.json" <<'PYEOF' >"$SL_TMP/py.txt" 2>&1
import json, sys
rows = json.load(open(sys.argv[1]))["rows"]
for r, path in zip(rows, sys.argv[2:]):
    run = json.load(open(path))
    for k in ("percent_of_background", "efolding_years"):
        a, b = r[k], run[k]
        assert abs(a - b) <= 1e-8 * max(abs(a), abs(b)), (k, a, b)
assert rows[0]["percent_of_background"] != rows[1]["percent_of_background"], rows
PYEOF
if [ $? -eq 0 ]; then sl_ok "a box-model choice key swept: each row = run --set (percent of background, e-folding)"; else
  sl_fail "strat choice sweep vs run"; sed 's/^/#   /' "$SL_TMP/py.txt" | tail -3; fi

# The text table: a row per point with the atmosphere's name first.
sl_expect_exit 0 "sweep table" "$SL_BIN" sweep "$EX/demo.ini" --vary site.atmosphere=tropical,subarctic-winter
if [ "$(grep -c '^tropical \|^subarctic-winter ' "$SL_TMP/out")" -eq 2 ] && grep -q "regime" "$SL_TMP/out"; then
  sl_ok "the table has one row per atmosphere"; else sl_fail "sweep table rows"; sed 's/^/#   /' "$SL_TMP/out" | head -8; fi

# A grid mixing a text and a numeric key; 1 and 2 threads give the same files.
mkdir -p "$SL_TMP/t1" "$SL_TMP/t2"
for t in 1 2; do
  (cd "$SL_TMP/t$t" && OMP_NUM_THREADS=$t "$SL_BIN" sweep "$EX/demo.ini" --vary impactor.angle_deg=30,60 \
    --vary site.atmosphere=tropical,midlatitude-winter -o m.csv --netcdf m.nc >out.txt 2>err.txt) ||
    sl_fail "mixed sweep on $t thread(s)"
done
if cmp -s "$SL_TMP/t1/m.csv" "$SL_TMP/t2/m.csv" && cmp -s "$SL_TMP/t1/m.nc" "$SL_TMP/t2/m.nc"; then
  sl_ok "mixed text/numeric sweep: CSV and netCDF identical for 1 and 2 threads"; else
  sl_fail "sweep files differ between 1 and 2 threads"; fi
$PY - "$SL_TMP/t1/m.csv" <<'PYEOF' >"$SL_TMP/py.txt" 2>&1
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1])))
got = [(r["impactor.angle_deg"], r["site.atmosphere"]) for r in rows]
assert got == [("30", "tropical"), ("30", "midlatitude-winter"), ("60", "tropical"), ("60", "midlatitude-winter")], got
assert all(r["status"] == "ok" for r in rows), rows
PYEOF
if [ $? -eq 0 ]; then sl_ok "CSV: the atmosphere's text in its own column, last key fastest"; else
  sl_fail "CSV text column"; sed 's/^/#   /' "$SL_TMP/py.txt" | tail -3; fi
if command -v ncdump >/dev/null 2>&1; then
  ncdump "$SL_TMP/t1/m.nc" >"$SL_TMP/nc.txt" 2>&1
  if grep -q 'site_atmosphere:flag_meanings = "tropical midlatitude-winter"' "$SL_TMP/nc.txt" &&
     grep -q 'site_atmosphere:flag_values = 0, 1' "$SL_TMP/nc.txt" &&
     grep -q 'site_atmosphere = 0, 1, 0, 1' "$SL_TMP/nc.txt"; then
    sl_ok "netCDF: the atmosphere as an index with flag_values/flag_meanings"; else
    sl_fail "netCDF text input"; grep site_atmosphere "$SL_TMP/nc.txt" | sed 's/^/#   /' | head -5; fi
else
  sl_skip "ncdump is missing"
fi

# Bad text values: refused before any member runs, naming the valid values.
sl_expect_exit 64 "--vary with an unknown atmosphere" "$SL_BIN" sweep "$EX/demo.ini" --vary site.atmosphere=tropical,tropicl
sl_expect_grep "$SL_TMP/err" "'tropicl' is neither a built-in profile nor a file (valid: one of us1976," \
  "the message names the value and the built-in profiles"
sl_expect_exit 64 "--vary with a bad choice" "$SL_BIN" sweep "$EX/demo.ini" --vary partition.method=shock,shok
sl_expect_grep "$SL_TMP/err" "'shok' is not a value of partition.method (valid: one of shock|budget)" \
  "the message names the choices"
sl_expect_exit 64 "--vary with a repeated text value" "$SL_BIN" sweep "$EX/demo.ini" --vary site.atmosphere=tropical,tropical
printf 'altitude_km,temperature_K\nnot,a profile\n' >"$SL_TMP/bad.csv"
sl_expect_exit 64 "--vary with a profile file that does not read" "$SL_BIN" sweep "$EX/demo.ini" \
  --vary "site.atmosphere=$SL_TMP/bad.csv"
sl_expect_grep "$SL_TMP/err" "does not read" "the message says the file does not read"

# A grid above the row limit prints the statistics and says where the rows are.
sl_expect_exit 0 "a 201-point sweep" "$SL_BIN" sweep "$EX/ocean-stony-300m.ini" \
  --vary impactor.angle_deg=20:60:0.2 -o "$SL_TMP/big.csv"
sl_expect_grep "$SL_TMP/out" "201 grid points: the statistics above; one row per point is in the CSV" \
  "a large grid points at the CSV"
sl_done
