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
# One regime per source (issue 12: "the regime is a per-source field in every output"): the
# kind and regime of each source, in order, are the same in the text summary (-v: "thermal N
# (kind, regime)"), the JSON ("sources"[].kind, "thermals"[].regime), the CSV (sources.csv) and
# the netCDF (source_kind, source_regime: CF flags, decoded through flag_meanings), the ensemble
# columns (sea_plume_regime, airburst_regime: codes, CF flags in its netCDF), and the event's
# regime (the highest) likewise.  Two cases: a 1 km stony body at 18 km/s into 4 km of
# ocean (the size and speed of Pierazzo et al. 2010; a release much wider than the scale height,
# so a source outside the buoyant-thermal picture: PRACTICE, the model's own classification) and
# a small airburst over the sea whose two sources are thermals.  Common practice, no source.
printf '[impactor]\ndiameter_m = 1000\ndensity_kg_m3 = 3000\nspeed_km_s = 18\nangle_deg = 45\n[site]\nlatitude_deg = 40\nocean_depth_m = 4000\n' >"$SL_TMP/km.ini"
cp "$SL_SRCDIR/examples/airburst-small.ini" "$SL_TMP/small.ini"
for c in km small; do
  sl_expect_exit 0 "$c: run -v with netCDF and CSV" "$SL_BIN" -v run "$SL_TMP/$c.ini" -o "$SL_TMP/$c.nc" --csv "$SL_TMP/${c}csv"
  cp "$SL_TMP/out" "$SL_TMP/$c.txt"
  "$SL_BIN" run --json "$SL_TMP/$c.ini" >"$SL_TMP/$c.json"
  "$SL_BIN" run "$SL_TMP/$c.ini" -o "$SL_TMP/${c}3.nc" --format classic >/dev/null 2>&1
  # The same body as an ensemble of two identical members: its regime columns.
  sed 's/^diameter_m *= *\([0-9.]*\).*/diameter_m = choice(\1)/' "$SL_TMP/$c.ini" >"$SL_TMP/${c}e.ini"
  "$SL_BIN" ensemble "$SL_TMP/${c}e.ini" -n 2 --no-progress -o "$SL_TMP/${c}e.csv" >/dev/null 2>&1
  "$SL_BIN" ensemble "$SL_TMP/${c}e.ini" -n 2 --no-progress -o "$SL_TMP/${c}e.nc" >/dev/null 2>&1
  if /usr/bin/python3 - "$SL_TMP" "$c" <<'PY'
import csv, json, re, sys, netCDF4
t, c = sys.argv[1], sys.argv[2]
j = json.load(open("%s/%s.json" % (t, c)))
want = [(s["kind"], th["regime"]) for s, th in zip(j["sources"], j["thermals"])]
event = j["regime"]
bad = []
if len(j["sources"]) != len(j["thermals"]) or not want:
    bad.append("JSON: %d sources, %d thermals" % (len(j["sources"]), len(j["thermals"])))
txt = open("%s/%s.txt" % (t, c)).read()
got = re.findall(r"^  thermal \d+ \(([a-z_]+), ([a-z-]+)\)$", txt, re.M)
if got != want: bad.append("text %r against JSON %r" % (got, want))
m = re.search(r"plume regime +([a-z-]+)", txt)
if not m or m.group(1) != event: bad.append("text event regime %r against JSON %r" % (m and m.group(1), event))
lines = [l for l in open("%s/%scsv/sources.csv" % (t, c)) if not l.startswith("#")]
got = [(r["kind"], r["regime"]) for r in csv.DictReader(lines)]
if got != want: bad.append("CSV %r against JSON %r" % (got, want))
if ("event regime: %s " % event) not in open("%s/%scsv/sources.csv" % (t, c)).read():
    bad.append("CSV comment lacks the event regime %s" % event)
for nc in ("%s/%s.nc" % (t, c), "%s/%s3.nc" % (t, c)):
    with netCDF4.Dataset(nc) as ds:
        def decode(name):
            v = ds.variables[name]
            names = v.flag_meanings.split()
            codes = list(v.flag_values)
            return [names[codes.index(x)] for x in v[...].reshape(-1).tolist()]
        got = list(zip(decode("source_kind"), decode("source_regime")))
        if got != want: bad.append("%s: %r against JSON %r" % (nc, got, want))
        if decode("regime") != [event]: bad.append("%s: event regime %r against %r" % (nc, decode("regime"), event))
# Ensemble columns <kind>_regime and regime: codes whose names are the netCDF's flag_meanings.
rows = [r for r in csv.DictReader(l for l in open("%s/%se.csv" % (t, c)) if not l.startswith("#"))]
with netCDF4.Dataset("%s/%se.nc" % (t, c)) as ds:
    names = ds.variables["regime"].flag_meanings.split()
    if list(ds.variables["regime"].flag_values) != list(range(len(names))): bad.append("ensemble flag_values")
    for kind in ("sea_plume", "airburst"):
        have = [r for k, r in want if k == kind]
        for where, vals in (("CSV", [rw[kind + "_regime"] for rw in rows]),
                            ("netCDF", [str(int(x)) if x is not None else "" for x in
                                        ds.variables[kind + "_regime"][...].filled(-1).tolist()])):
            got = [names[int(v)] if v not in ("", "-1") else None for v in vals]
            if got != [have[0] if have else None] * 2:
                bad.append("ensemble %s %s_regime %r against JSON %r" % (where, kind, got, have))
    got = [names[int(rw["regime"])] for rw in rows] + [names[int(x)] for x in ds.variables["regime"][...].tolist()]
    if got != [event] * 4: bad.append("ensemble event regime %r against %r" % (got, event))
regimes = [r for _, r in want]
if c == "km" and all(r == "thermal" for r in regimes): bad.append("1 km body: every source thermal")
if c == "km" and not j["validity"].startswith("rough"): bad.append("1 km body: validity %r" % j["validity"])
if c == "small" and any(r != "thermal" for r in regimes): bad.append("small airburst: %r" % regimes)
for b in bad: print("# " + b)
print("# %s: %s; event %s" % (c, ", ".join("%s %s" % w for w in want), event))
sys.exit(1 if bad else 0)
PY
  then sl_ok "$c: one regime per source in text, JSON, CSV, netCDF (both formats) and ensemble columns"
  else sl_fail "$c: the regime per source differs between outputs"; fi
done
sl_done
