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
# The CF emission file through the independent reader: CF structure, every
# standard name in the table copy with convertible units.
if /usr/bin/python3 -c 'import netCDF4, numpy' 2>/dev/null; then
  if /usr/bin/python3 "$SL_SRCDIR/tests/tools/nc_check.py" --cf-only e.nc >chk.txt 2>&1; then
    sl_ok "CF emission file passes nc_check ($(tail -1 chk.txt | sed 's/.*: //'))"
  else sl_fail "CF emission file nc_check"; sed 's/^/#   /' chk.txt | head -10; fi
else
  sl_skip "python3-netcdf4 not installed"
fi
# Two runs (a second site) for the multi-file readers.
sed 's/^longitude_deg = 184.6/longitude_deg = 20/' ev.ini >ev2.ini
sl_expect_exit 0 "run netCDF, first site" "$SL_BIN" run -o ra.nc ev.ini
sl_expect_exit 0 "run netCDF, second site" "$SL_BIN" run -o rb.nc ev2.ini
want_kg=$(/usr/bin/python3 -c 'import json,sys; d=json.load(open(sys.argv[1]))
def f(o):
    if isinstance(o, dict):
        for k, v in o.items():
            if k == "strat_injected_kg": return v
            r = f(v)
            if r is not None: return r
print(repr(f(d)))' run.json)
if /usr/bin/python3 -c 'import xarray, dask, netCDF4' 2>/dev/null; then
  if /usr/bin/python3 "$SL_SRCDIR/tests/tools/model_inputs_check.py" ra.nc rb.nc e.nc "$want_kg" >xr.txt 2>&1; then
    sl_ok "xarray: open_dataset, open_mfdataset over two runs, emission mass to 1e-6"
  else sl_fail "xarray checks"; sed 's/^/#   /' xr.txt | head -10; fi
else
  sl_skip "python3-xarray/python3-dask not installed (scripts/deps.sh test)"
fi
# Zonal field: masked where a region has no box (the tropics start at their own,
# higher tropopause), and the mass per area times the region areas adds up to
# the run's global excess at every time.
sl_expect_exit 0 "run with --zonal" "$SL_BIN" run -o rz.nc --zonal z.nc ev.ini
if /usr/bin/python3 -c 'import netCDF4, numpy' 2>/dev/null; then
  if /usr/bin/python3 -c '
import sys, numpy as np, netCDF4
z = netCDF4.Dataset(sys.argv[1]); r = netCDF4.Dataset(sys.argv[2])
m = z["mass_per_area"][:]
assert z["mass_per_area"].dimensions == ("time", "altitude", "lat", "lon"), z["mass_per_area"].dimensions
m = m[..., 0]   # the one longitude cell, 0-360
lb = np.radians(z["lat_bnds"][:])
area = 2 * np.pi * 6371008.8 ** 2 * (np.sin(lb[:, 1]) - np.sin(lb[:, 0]))
tot = (m.filled(0) * area[None, None, :]).sum(axis=(1, 2))
g = r["global_excess_water_mass"][:]
assert np.all(np.abs(tot - g) <= 1e-9 * g.max()), np.max(np.abs(tot - g))
assert m.mask[:, 0, 1].all() and not m.mask[:, 0, 0].any(), "tropical lowest layer masked, others not"
assert z["box_bottom"][1, 1] > z["box_bottom"][0, 1] or z["box_bottom"][1, 1] >= 16000
assert z.dimensions["time"].isunlimited()
assert "area: mean" in z["mole_fraction_anomaly"].cell_methods
assert list(z["lon_bnds"][0]) == [0.0, 360.0] and z.dimensions["lon"].size == 1
assert z.event_time == "2022-01-15T04:15:00Z"
' z.nc rz.nc; then sl_ok "zonal field: fill where no box, masses add up to the global excess"
  else sl_fail "zonal field"; fi
else
  sl_skip "python3-netcdf4 not installed"
fi
# decay on the run file: the file carries the month (event_month) and the date;
# with that month the box model reproduces the run's e-folding to every digit.
if command -v ncdump >/dev/null 2>&1; then
  month=$(ncdump -h rz.nc | sed -n 's/.*:event_month = \([0-9]*\) ;.*/\1/p')
  if [ "$month" = 1 ]; then sl_ok "the run file carries event_month = 1"; else sl_fail "event_month: '$month'"; fi
else
  month=1; sl_skip "ncdump not installed (netcdf-bin)"
fi
sl_expect_exit 0 "decay on the run file with its month" "$SL_BIN" decay --json --month "$month" rz.nc
cp "$SL_TMP/out" decay.json
if /usr/bin/python3 -c '
import json, sys
def f(o, k):
    if isinstance(o, dict):
        for a, b in o.items():
            if a == k: return b
            r = f(b, k)
            if r is not None: return r
r = json.load(open(sys.argv[1])); d = json.load(open(sys.argv[2]))
assert f(r, "efolding_years") == f(d, "efolding_years"), (f(r, "efolding_years"), f(d, "efolding_years"))
' run.json decay.json; then sl_ok "decay on the run file reproduces the run's e-folding exactly"
else sl_fail "decay on the run file reproduces the run's e-folding"; fi
# NCO: the record operator joins two runs along the unlimited time; ncks reads one.
if command -v ncrcat >/dev/null 2>&1 && command -v ncks >/dev/null 2>&1; then
  if ncrcat -O ra.nc rb.nc cat.nc 2>nco.txt && ncdump -h cat.nc | grep -q "time = UNLIMITED ; // (482 currently)"; then
    sl_ok "ncrcat joins two runs along time (241 + 241 records)"
  else sl_fail "ncrcat over two runs"; sed 's/^/#   /' nco.txt | head -5; fi
  if ncks -v forcing_indicator ra.nc >ncks.txt 2>&1 && grep -q "forcing_indicator" ncks.txt; then
    sl_ok "ncks extracts a variable"
  else sl_fail "ncks"; fi
else
  sl_skip "NCO not installed (nco)"
fi
# CDO: its own grid reading of the emission file and a conservative remap.
if command -v cdo >/dev/null 2>&1; then
  if cdo -s sinfon e.nc >cdo.txt 2>&1; then sl_ok "cdo sinfon reads the emission file"; else sl_fail "cdo sinfon"; fi
  # The zonal field: CDO 2.1 (Debian 12) reports, for the demo-like run,
  #   Grid 2: lonlat points=3 (1x3), lon 180 degrees_east, lat -55 to 55 by 55
  #           degrees_north, available: cellbounds   (the fields)
  #   Vertical: altitude levels=11 with bounds;  Time: 241 steps
  # With lon a scalar coordinate (before) it warned "Inconsistent grid
  # structure" and put the fields on a generic grid without latitude.
  nt=$(ncdump -h z.nc | sed -n 's/.*time = UNLIMITED ; \/\/ (\([0-9]*\) currently).*/\1/p')
  if cdo -s sinfon z.nc >cdo.txt 2>&1 && ! grep -qi "warning" cdo.txt \
     && grep -q "lonlat  *: points=3 (1x3)" cdo.txt && grep -q "lat : .* degrees_north" cdo.txt \
     && grep -q "available : cellbounds" cdo.txt && grep -q "altitude  *: levels=11" cdo.txt \
     && grep -q "bounds : " cdo.txt && grep -q "time : $nt steps" cdo.txt \
     && [ "$(grep -E ': (mass_per_area|mole_fraction_anomaly) *$' cdo.txt | awk '{print $10}' | sort -u)" = \
          "$(sed -n 's/^ *\([0-9]*\) : lonlat  *: points=3 (1x3).*/\1/p' cdo.txt)" ]; then
    sl_ok "cdo sinfon on the zonal file: the fields on a 1x3 lon-lat grid with cell bounds, 11 altitude levels with bounds, $nt times, no warning"
  else sl_fail "cdo sinfon on the zonal file"; sed 's/^/#   /' cdo.txt | head -24; fi
  # Conservative remapping to a 5-degree grid keeps the mass within 1 %.
  if cdo -s remapcon,r72x36 e.nc rm.nc >cdo.txt 2>&1 && /usr/bin/python3 -c '
import sys, numpy as np, netCDF4
d = netCDF4.Dataset(sys.argv[1]); want = float(sys.argv[2])
lat = np.radians(d["lat"][:]); lon = d["lon"][:]
dlat = np.radians(180.0 / len(lat)); dlon = np.radians(360.0 / len(lon))
area = 6371008.8 ** 2 * dlon * np.abs(np.sin(np.minimum(lat + dlat / 2, np.pi / 2)) - np.sin(np.maximum(lat - dlat / 2, -np.pi / 2)))
zb = d["altitude_bnds"][:] * 1e3; tb = d["time_bnds"][:] * 86400.0
tot = 0.0
for v in ("water_vapour_emission", "ice_emission"):
    q = np.asarray(d[v][:], dtype=float)
    tot += np.einsum("tzyx,y,z,t->", q, area, zb[:, 1] - zb[:, 0], tb[:, 1] - tb[:, 0])
assert abs(tot / want - 1) < 0.01, (tot, want)
' rm.nc "$want_kg"; then sl_ok "cdo remapcon to 5 degrees keeps the mass within 1 %"
  else sl_fail "cdo remapcon mass"; sed 's/^/#   /' cdo.txt | head -5; fi
  # CDO keeps gridded variables only; the scalar results survive as global attributes.
  if cdo -s copy ra.nc cc.nc >cdo.txt 2>&1 && ncdump -h cc.nc | grep -q ":result_efolding_time = "; then
    sl_ok "cdo copy keeps the key results (result_* global attributes)"
  else sl_fail "cdo copy keeps the key results"; fi
else
  sl_skip "CDO not installed (scripts/deps.sh cdo)"
fi
# An event with no water above the tropopause still gets its files (zero rates, no rows).
printf '[explosion]\nenergy_Mt = 0.001\n[site]\nlatitude_deg = 10\n' >small.ini
sl_expect_exit 0 "a dry event with every model input" "$SL_BIN" run --injection-table s.csv --emission s.nc \
  --emission-convention cesm --zonal sz.nc --forcing-series sf.csv small.ini
if [ -s s.csv ] && [ -s s.nc ] && [ -s sz.nc ] && [ -s sf.csv ] && [ "$(grep -vc '^#' s.csv)" = 1 ]; then
  sl_ok "dry event: header-only table, empty emission file, zonal field, forcing series"
else sl_fail "dry event files"; fi
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
