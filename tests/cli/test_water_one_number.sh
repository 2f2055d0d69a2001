#!/bin/sh
# One stratospheric number (issue 12): the water above the tropopause of one run is the same value
# in the text summary, the JSON, the netCDF file, the CSV injection profile and an ensemble member's
# column, and equals what enters the box model (one tropopause).  Common practice, no source.
. "$(dirname "$0")/lib.inc"
[ -x /usr/bin/python3 ] || { echo "# SKIP: /usr/bin/python3 missing"; exit 77; }
/usr/bin/python3 -c 'import netCDF4' 2>/dev/null || { echo "# SKIP: python3 netCDF4 missing"; exit 77; }
printf '[impactor]\ndiameter_m = 140\ndensity_kg_m3 = 2700\nspeed_km_s = 18\nangle_deg = 45\n[site]\nlatitude_deg = 25\nocean_depth_m = 4000\natmosphere = us1976-humid\n' >"$SL_TMP/one.ini"
sl_expect_exit 0 "run --json" "$SL_BIN" run --json "$SL_TMP/one.ini"
cp "$SL_TMP/out" "$SL_TMP/one.json"
sl_expect_exit 0 "run text with netCDF and CSV" "$SL_BIN" run "$SL_TMP/one.ini" -o "$SL_TMP/one.nc" --csv "$SL_TMP/csv"
cp "$SL_TMP/out" "$SL_TMP/one.txt"
sed 's/^diameter_m = 140/diameter_m = choice(140)/' "$SL_TMP/one.ini" >"$SL_TMP/ens.ini"
(cd "$SL_TMP" && "$SL_BIN" ensemble ens.ini -n 2 --no-progress -o ens.csv >/dev/null 2>"$SL_TMP/ens.err")
if /usr/bin/python3 - "$SL_TMP" <<'PY'
import csv, glob, json, re, sys, netCDF4
t = sys.argv[1]
j = json.load(open(t + "/one.json"))
s = j["stratospheric_water_kg"]
assert s > 0, s
bad = []
def close(what, got, rtol):
    if not abs(got - s) <= rtol * s:
        bad.append("%s: %r against JSON %r" % (what, got, s))
close("vapour + ice (JSON)", j["stratospheric_vapor_kg"] + j["stratospheric_ice_kg"], 1e-9)  # JSON: 10 digits
close("entering the box model (JSON strat_injected_kg)", j["strat_injected_kg"], 1e-9)
with netCDF4.Dataset(t + "/one.nc") as ds:
    close("netCDF stratospheric_water", float(ds.variables["stratospheric_water"][...]), 1e-9)
csvtext = "".join(open(f).read() for f in glob.glob(t + "/csv/*.csv"))
m = re.search(r"stratospheric_water_Tg: ([0-9.eE+-]+)", csvtext)
if m: close("CSV comment", float(m.group(1)) * 1e9, 1e-9)
else: bad.append("no stratospheric_water_Tg in the CSV files")
txt = open(t + "/one.txt").read()
m = re.search(r"= above the tropopause +([0-9.eE+-]+)", txt)
if m: close("text budget table (3 figures)", float(m.group(1)) * 1e9, 5e-3)
else: bad.append("no budget line in the text")
m = re.search(r"water above the tropopause +([0-9.eE+-]+) Tg", txt)
if m: close("text answer (3 figures)", float(m.group(1)) * 1e9, 5e-3)
else: bad.append("no answer line in the text")
rows = [r for r in csv.DictReader(l for l in open(t + "/ens.csv") if not l.startswith("#"))]
if rows: close("ensemble column stratospheric_water_Tg", float(rows[0]["stratospheric_water_Tg"]) * 1e9, 1e-9)
else: bad.append("no ensemble rows")
for b in bad: print("# " + b)
print("# stratospheric water %.6g Tg in text, JSON, netCDF, CSV, ensemble" % (s / 1e9))
sys.exit(1 if bad else 0)
PY
then sl_ok "one stratospheric number in text, JSON, netCDF, CSV and ensemble output"
else sl_fail "stratospheric water differs between outputs"; sed 's/^/#   /' "$SL_TMP/ens.err" | head -5; fi
sl_done
