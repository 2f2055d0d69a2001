#!/bin/sh
# Model inputs of `steamloft run`: the injection table (CSV and JSON) sums to
# the summary's water above the tropopause, [site] date sets the month and the
# event time, the emission files (CF and CESM) carry what a model needs, the
# forcing series has year bounds, and bad dates, durations, grids and
# templates fail with file, key and valid form, leaving no file behind.
# External readers (ncdump) are used when installed, else those checks SKIP.
. "$(dirname "$0")/lib.inc"

cat >"$SL_TMP/ev.ini" <<'INI'
; invented: a 100 Mt burst over the tropical South Pacific
[explosion]
energy_Mt = 100
[site]
latitude_deg = -20.5
longitude_deg = 184.6
date = 2022-01-15T04:15:00Z
[emission]
duration_s = 10800
INI
cd "$SL_TMP" || exit 1
sl_expect_exit 0 "run with every model input" "$SL_BIN" run --json --injection-table t.csv \
  --emission e.nc --forcing-series f.csv ev.ini
cp "$SL_TMP/out" run.json
sl_expect_exit 0 "the JSON table" "$SL_BIN" run --injection-table t.json ev.ini
if /usr/bin/python3 - run.json t.csv t.json <<'PY'
import csv, json, sys
run = json.load(open(sys.argv[1]))
def find(o, k):
    if isinstance(o, dict):
        for a, b in o.items():
            if a == k:
                yield b
            yield from find(b, k)
    elif isinstance(o, list):
        for x in o:
            yield from find(x, k)
want = next(find(run, "strat_injected_kg"))
lines = open(sys.argv[2]).read().splitlines()
head = [l for l in lines if l.startswith("#")]
assert any("Screening estimate" in l for l in head), head
assert any("version: steamloft" in l for l in head), head
assert any("scenario digest: " in l for l in head), head
rows = list(csv.DictReader(l for l in lines if not l.startswith("#")))
got = sum(float(r["mass_kg"]) for r in rows)
assert abs(got - want) <= 1e-8 * want, (got, want)
assert all(r["event_time_utc"] == "2022-01-15T04:15:00Z" for r in rows)
assert all(float(r["duration_s"]) == 10800 for r in rows)
assert all(float(r["mass_kg"]) > 0 for r in rows)
assert {r["species"] for r in rows} <= {"water_vapour", "ice"}
for r in rows:  # pressure falls with height
    assert float(r["bottom_hPa"]) > float(r["top_hPa"]) > 0, r
j = json.load(open(sys.argv[3]))
assert abs(sum(r["mass_kg"] for r in j["rows"]) - want) <= 1e-8 * want
assert j["time_is_nominal"] is False and "caution" in j
PY
then sl_ok "the table sums to the summary's water above the tropopause"; else sl_fail "table sum"; fi
# The month follows from the date (January: the summary's provenance says so).
sl_expect_exit 0 "params of a dated scenario" "$SL_BIN" run --json ev.ini
if /usr/bin/python3 -c '
import json, sys
s = json.dumps(json.load(open(sys.argv[1])))
assert "\"site.month\": {\"value\": 1, \"unit\": \"\", \"origin\": \"derived\"}" in s, s[:200]
assert "\"site.date\": {\"value\": \"2022-01-15T04:15:00Z\"" in s
' "$SL_TMP/out"; then sl_ok "date in the provenance, month 1 derived from it"; else sl_fail "date and derived month in the provenance"; fi
# Forcing series: header with the caution and the comment, whole years with bounds.
sl_expect_grep f.csv "Screening estimate" "forcing series carries the caution"
sl_expect_grep f.csv "^# comment: annual means of the box model's forcing indicator" "forcing series comment"
sl_expect_grep f.csv "^0,1," "forcing series: first year with its bounds"
# Emission file: CESM flavour, a model top, water above it reported.
sl_expect_exit 0 "cesm flavour with a model top" "$SL_BIN" run --emission c.nc --emission-convention cesm \
  --grid 96x144 --model-top-km 30 ev.ini
sl_expect_grep "$SL_TMP/err" "above the model top (30 km)" "the water above the model top is reported"
if command -v ncdump >/dev/null 2>&1; then
  ncdump -h e.nc >h.txt
  sl_expect_grep h.txt "time = UNLIMITED" "CF emission: unlimited time"
  sl_expect_grep h.txt 'water_vapour_emission:units = "kg m-3 s-1"' "CF emission: units"
  sl_expect_grep h.txt 'time:bounds = "time_bnds"' "CF emission: time bounds"
  ncdump -v date,datesec c.nc >c.txt
  sl_expect_grep c.txt 'H2O:units = "molecules/cm3/s"' "CESM emission: units"
  sl_expect_grep c.txt "altitude_int = " "CESM emission: altitude interfaces"
  sl_expect_grep c.txt "date = 20220115, 20220115, 20220115, 20220115" "CESM emission: integer dates"
  sl_expect_grep c.txt "datesec = 15300, 15301, 26100, 26101" "CESM emission: zero/on/on/zero seconds"
  sl_expect_grep c.txt "water_above_model_top_kg = " "CESM emission: water above the top as an attribute"
else
  sl_skip "ncdump not installed (netcdf-bin)"
fi
# Bad input: file, line, key and valid form; nothing left behind.
printf '[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\ndate = 15.01.2022\n' >bad1.ini
sl_expect_exit 65 "a date that is not ISO 8601" "$SL_BIN" run --injection-table b.csv bad1.ini
sl_expect_grep "$SL_TMP/err" "bad1.ini:5: \[site\] date" "the date message names file, line and key"
sl_expect_grep "$SL_TMP/err" "YYYY-MM-DD" "the date message gives the valid form"
printf '[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\ndate = 2022-01-15\nmonth = 7\n' >bad2.ini
sl_expect_exit 65 "a month that disagrees with the date" "$SL_BIN" run bad2.ini
printf '[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\n[emission]\nduration_s = 0\n' >bad3.ini
sl_expect_exit 65 "a duration <= 0" "$SL_BIN" run --injection-table b.csv bad3.ini
sl_expect_grep "$SL_TMP/err" "bad3.ini:6: \[emission\] duration_s" "the duration message names file, line and key"
sl_expect_exit 64 "a grid that does not parse" "$SL_BIN" run --emission b.nc --grid 180by360 ev.ini
sl_expect_grep "$SL_TMP/err" "NLATxNLON" "the grid message gives the valid form"
sl_expect_exit 64 "--grid without --emission" "$SL_BIN" run --grid 90x180 ev.ini
if command -v ncgen >/dev/null 2>&1; then
  printf 'netcdf t {\ndimensions:\n x = 3 ;\nvariables:\n float T(x) ;\ndata:\n T = 1, 2, 3 ;\n}\n' >nolat.cdl
  ncgen -o nolat.nc nolat.cdl
  sl_expect_exit 65 "a template with no lat/lon" "$SL_BIN" run --emission b.nc --grid nolat.nc ev.ini
  sl_expect_grep "$SL_TMP/err" "nolat.nc: variable lat/lon" "the template message names file and variable"
else
  sl_skip "ncgen not installed (netcdf-bin)"
fi
if [ ! -e b.csv ] && [ ! -e b.nc ]; then sl_ok "no file left behind"; else sl_fail "a file was left behind"; fi
sl_expect_exit 73 "no overwrite without --force" "$SL_BIN" run --injection-table t.csv ev.ini
sl_done
