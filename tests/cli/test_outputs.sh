#!/bin/sh
# File outputs of the commands (-o, --format, --csv, --plot), end to end, read
# back by tools that share no code with steamloft: python3-netcdf4
# (tests/tools/nc_check.py), ncdump, CDO, Python's csv module.  Also the
# safe-output rules: no overwrite without --force (exit 73), a missing or
# read-only directory (exit 73, checked before the run, nothing left), and two
# identical runs giving identical ncdump text apart from the history line.
. "$(dirname "$0")/lib.inc"
SRC=${SL_SRCDIR:-.}
PY=/usr/bin/python3
PROF="$SRC/examples/injection-profile.csv"
D="$SL_TMP/o"
mkdir -p "$D"

# A full decay run with every output.
sl_expect_exit 0 "decay with -o, --csv, --plot" "$SL_BIN" decay "$PROF" -o "$D/decay.nc" --csv "$D/csv" --plot "$D/plot"
cp "$SL_TMP/out" "$SL_TMP/summary"
sl_expect_grep "$SL_TMP/summary" "Screening estimate" "summary still printed with the caution"

# The independent reader: CF structure plus values.  The example profile holds
# 60 Tg vapour and 6 Tg ice (its own comment; exact in binary after x1e9).
cat >"$SL_TMP/expect" <<EOF
format NETCDF4_CLASSIC
sum vapor_mass 6.0e10 1e-12
sum ice_mass 6.0e9 1e-12
var total_vapor_mass 0 6.0e10 1e-12
var tropopause_altitude 0 16500 0
var altitude_bnds 0 16000 0
var altitude_bnds 15 32000 0
var latitude 0 -5 0
var injected_water_mass 0 6.6e10 1e-12
att . Conventions CF-1.11
att . scenario_decay_source $PROF
att altitude axis Z
att altitude positive up
att buoyancy_frequency_squared standard_name square_of_brunt_vaisala_frequency_in_air
att time calendar standard
has excess_water_mass
has removed_troposphere
EOF
if $PY "$SRC/tests/tools/nc_check.py" "$D/decay.nc" "$SL_TMP/expect" >"$SL_TMP/chk" 2>&1; then
  sl_ok "netCDF read back by python3-netcdf4: CF attributes and masses ($(tail -1 "$SL_TMP/chk" | sed 's/.*: //'))"
else sl_fail "netCDF check"; sed 's/^/#   /' "$SL_TMP/chk" | grep -v '^#   ok' | head -20; fi

# Masses in the file equal the run's own report (decay --json prints %.6g).
"$SL_BIN" decay "$PROF" --json >"$SL_TMP/json"
$PY - "$D/decay.nc" "$SL_TMP/json" >"$SL_TMP/cmp" 2>&1 <<'EOF'
import json, sys, netCDF4
j = json.load(open(sys.argv[2]))
with netCDF4.Dataset(sys.argv[1]) as ds:
    pairs = [("injected_water_mass", j["strat_injected_kg"]),
             ("reference_background_water_mass", j["background_burden_kg"]),
             ("efolding_time", j["efolding_years"] * 365.25 * 86400),
             ("peak_percent_of_background", j["percent_of_background"])]
    bad = 0
    for name, want in pairs:
        got = float(ds.variables[name][...])
        if abs(got - want) > 5e-6 * abs(want):  # %.6g in the JSON: half a unit in the 6th digit
            print("mismatch", name, got, want); bad += 1
    last = ds.variables["global_excess_water_mass"][-1]
    if abs(float(last) - j["strat_remaining_kg"]) > 5e-6 * abs(j["strat_remaining_kg"]):
        print("mismatch remaining", float(last), j["strat_remaining_kg"]); bad += 1
sys.exit(bad)
EOF
if [ $? -eq 0 ]; then sl_ok "netCDF scalars and series equal the run's JSON report"; else sl_fail "netCDF vs JSON"; sed 's/^/#   /' "$SL_TMP/cmp"; fi

# ncdump reads it; CDO reads the vertical axis with its bounds.
if ncdump -h "$D/decay.nc" >"$SL_TMP/hdr" 2>&1; then sl_ok "ncdump reads the file"; else sl_fail "ncdump"; fi
sl_expect_grep "$SL_TMP/hdr" 'altitude:bounds = "altitude_bnds"' "ncdump shows altitude bounds"
if command -v cdo >/dev/null 2>&1; then
  if cdo -s zaxisdes -selname,vapor_mass "$D/decay.nc" >"$SL_TMP/cdo" 2>&1 && grep -q 'lbounds' "$SL_TMP/cdo" \
     && grep -q 'zaxistype = altitude' "$SL_TMP/cdo"; then
    sl_ok "CDO reads the altitude axis with bounds"
  else sl_fail "CDO zaxisdes"; sed 's/^/#   /' "$SL_TMP/cdo" | head -5; fi
  if cdo -s sinfon "$D/decay.nc" >"$SL_TMP/cdo2" 2>&1; then sl_ok "cdo sinfon reads every variable"
  else sl_fail "cdo sinfon"; sed 's/^/#   /' "$SL_TMP/cdo2" | head -5; fi
else
  sl_skip "cdo not installed: CDO checks not run"
fi

# CSV: the profile written equals the profile read (Python csv module).
$PY - "$PROF" "$D/csv/profile.csv" >"$SL_TMP/csvcmp" 2>&1 <<'EOF'
import csv, sys
def rows(p):
    return [r for r in csv.DictReader(l for l in open(p) if not l.startswith('#'))]
a, b = rows(sys.argv[1]), rows(sys.argv[2])
assert len(a) == len(b), (len(a), len(b))
for x, y in zip(a, b):
    for k in ("bottom_km", "top_km", "vapor_Tg", "ice_Tg"):
        assert abs(float(x[k]) - float(y[k])) <= 5e-10 * max(1.0, abs(float(x[k]))), (k, x[k], y[k])
s = list(csv.DictReader(l for l in open(sys.argv[2].replace("profile.csv", "series.csv")) if not l.startswith('#')))
assert float(s[0]["time_days"]) == 0 and len(s) > 12
EOF
if [ $? -eq 0 ]; then sl_ok "CSV profile equals the input profile; series readable"; else sl_fail "CSV"; sed 's/^/#   /' "$SL_TMP/csvcmp"; fi

# Plots rendered when gnuplot is installed.
if command -v gnuplot >/dev/null 2>&1; then
  good=1
  for f in profile decay column; do
    [ -s "$D/plot/$f.svg" ] && head -c 200 "$D/plot/$f.svg" | grep -q '<svg\|<?xml' || good=0
    [ "$(head -c 8 "$D/plot/$f.png" | od -An -tx1 | tr -d ' \n')" = "89504e470d0a1a0a" ] || good=0
  done
  if [ $good = 1 ]; then sl_ok "SVG and PNG plots rendered"; else sl_fail "plots"; ls -l "$D/plot" | sed 's/^/#   /'; fi
else
  sl_skip "gnuplot not installed: rendering not checked"
fi
[ -s "$D/plot/steamloft.gp" ] && sl_ok "editable gnuplot script written" || sl_fail "no steamloft.gp"

# No overwrite without --force; checked before the run (no summary printed).
sum_before=$(cat "$D/decay.nc" "$D/csv/profile.csv" | cksum)
sl_expect_exit 73 "existing netCDF without --force" "$SL_BIN" decay "$PROF" -o "$D/decay.nc"
sl_expect_grep "$SL_TMP/err" "decay.nc' exists" "message names the existing file"
sl_expect_grep "$SL_TMP/err" "force" "message points to --force"
if [ ! -s "$SL_TMP/out" ]; then sl_ok "refused before the run (no summary)"; else sl_fail "ran before refusing"; fi
sl_expect_exit 73 "existing CSV without --force" "$SL_BIN" decay "$PROF" --csv "$D/csv"
[ "$(cat "$D/decay.nc" "$D/csv/profile.csv" | cksum)" = "$sum_before" ] && sl_ok "existing files untouched" || sl_fail "files changed"
sl_expect_exit 0 "--force replaces" "$SL_BIN" --force decay "$PROF" -o "$D/decay.nc" --csv "$D/csv"

# Missing directory: exit 73, names the path, nothing created.
sl_expect_exit 73 "-o in a missing directory" "$SL_BIN" decay "$PROF" -o "$D/nosuch/x.nc"
sl_expect_grep "$SL_TMP/err" "nosuch" "message names the missing directory"
sl_expect_exit 73 "--csv under a missing parent" "$SL_BIN" decay "$PROF" --csv "$D/nosuch/deeper"
[ ! -e "$D/nosuch" ] && sl_ok "nothing created for the missing directory" || sl_fail "something created"

# Read-only directory.  Root ignores permission bits, so as root the command
# runs with CAP_DAC_OVERRIDE dropped (setpriv, util-linux).
RO="$D/ro"; mkdir -p "$RO"; chmod 555 "$RO"
run_ro() { if [ "$(id -u)" = 0 ]; then setpriv --bounding-set=-dac_override,-dac_read_search "$@"; else "$@"; fi; }
if [ "$(id -u)" != 0 ] || command -v setpriv >/dev/null 2>&1; then
  sl_expect_exit 73 "-o in a read-only directory" run_ro "$SL_BIN" decay "$PROF" -o "$RO/x.nc"
  sl_expect_grep "$SL_TMP/err" "$RO" "message names the read-only directory"
  sl_expect_exit 73 "--plot into a read-only directory" run_ro "$SL_BIN" decay "$PROF" --plot "$RO"
  [ -z "$(ls -A "$RO")" ] && sl_ok "nothing left in the read-only directory" || sl_fail "files left in $RO"
else
  sl_skip "root without setpriv: read-only directory not checked"
fi
chmod 755 "$RO"

# A netCDF named like a CSV file is refused before anything is written (the
# format follows the name), so it can no longer clash with the CSV set.
mkdir -p "$D/clash"
sl_expect_exit 64 "-o with a .csv name is refused" "$SL_BIN" decay "$PROF" -o "$D/clash/profile.csv" --csv "$D/clash"
sl_expect_grep "$SL_TMP/err" "must end in .nc" "the refusal says why"
[ -z "$(ls -A "$D/clash")" ] && sl_ok "nothing was written" || sl_fail "left: $(ls -A "$D/clash")"

# Usage mistakes.
sl_expect_exit 64 "-o - (netCDF to stdout)" "$SL_BIN" decay "$PROF" -o -
sl_expect_exit 64 "--format without -o" "$SL_BIN" decay "$PROF" --format classic
sl_expect_exit 64 "--format bogus" "$SL_BIN" decay "$PROF" -o "$D/f.nc" --format hdf9
sl_expect_grep "$SL_TMP/err" "classic" "--format error lists the valid formats"

# netCDF-3 classic.
sl_expect_exit 0 "--format classic" "$SL_BIN" decay "$PROF" -o "$D/classic.nc" --format classic
[ "$(ncdump -k "$D/classic.nc")" = "classic" ] && sl_ok "ncdump -k says classic" || sl_fail "not classic"

# Reproducible: same inputs, same ncdump text apart from the history line.
mkdir -p "$D/r1" "$D/r2"
"$SL_BIN" decay "$PROF" -o "$D/r1/same.nc" >/dev/null 2>&1
"$SL_BIN" decay "$PROF" -o "$D/r2/same.nc" >/dev/null 2>&1
ncdump "$D/r1/same.nc" | grep -v ':history = ' >"$SL_TMP/d1"
ncdump "$D/r2/same.nc" | grep -v ':history = ' >"$SL_TMP/d2"
if [ -s "$SL_TMP/d1" ] && cmp -s "$SL_TMP/d1" "$SL_TMP/d2"; then sl_ok "two identical runs: identical ncdump without history"
else sl_fail "runs differ"; diff "$SL_TMP/d1" "$SL_TMP/d2" | head -5 | sed 's/^/#   /'; fi

# run: the chain's results in the file equal its own JSON report (10 digits).
SCEN="$SRC/examples/ocean-stony-300m.ini"
sl_expect_exit 0 "run with -o, --csv, --plot" "$SL_BIN" run "$SCEN" -o "$D/run.nc" --csv "$D/runcsv" --plot "$D/runplot"
"$SL_BIN" run --json "$SCEN" >"$SL_TMP/runjson"
cat >"$SL_TMP/expect_run" <<EOF
att . scenario_impactor_diameter_m 300
att . scenario_site_atmosphere us1976-humid
att . scenario_file $SCEN
att air_temperature standard_name air_temperature
has vapor_mass_content
has excess_water_mass
has efolding_time
has region_tropopause_altitude
EOF
if $PY "$SRC/tests/tools/nc_check.py" "$D/run.nc" "$SL_TMP/expect_run" >"$SL_TMP/chk" 2>&1; then
  sl_ok "run netCDF passes the independent CF check ($(tail -1 "$SL_TMP/chk" | sed 's/.*: //'))"
else sl_fail "run netCDF check"; sed 's/^/#   /' "$SL_TMP/chk" | head -20; fi
$PY - "$D/run.nc" "$SL_TMP/runjson" >"$SL_TMP/cmp" 2>&1 <<'EOF'
import json, sys, netCDF4, numpy as np
j = json.load(open(sys.argv[2]))
bad = 0
with netCDF4.Dataset(sys.argv[1]) as ds:
    def close(name, got, want, rtol=1e-9):   # JSON prints 10 significant digits
        global bad
        if abs(got - want) > rtol * abs(want):
            print("mismatch", name, got, want); bad += 1
    close("sum vapor_mass", float(np.sum(ds.variables["vapor_mass"][:])), j["injected_vapor_kg"])
    close("sum ice_mass", float(np.sum(ds.variables["ice_mass"][:])), j["injected_ice_kg"])
    close("stratospheric_vapor", float(ds.variables["stratospheric_vapor"][...]), j["stratospheric_vapor_kg"])
    close("event_energy", float(ds.variables["event_energy"][...]), j["energy_J"])
    close("water_vaporized", float(ds.variables["water_vaporized"][...]), j["water_vaporized_kg"])
    # The box model of the same run (10 digits in the JSON; years of 365.25 d).
    close("injected_water_mass", float(ds.variables["injected_water_mass"][...]), j["strat_injected_kg"])
    close("efolding_time", float(ds.variables["efolding_time"][...]), j["efolding_years"] * 365.25 * 86400)
    close("peak_percent_of_background", float(ds.variables["peak_percent_of_background"][...]), j["percent_of_background"])
    close("remaining", float(ds.variables["global_excess_water_mass"][-1]), j["strat_remaining_kg"])
    n = 0
    for b in j["bands"]:
        i = int(round(b["bottom_m"] / 1000.0))
        if b["vapor_kg"] > 0:
            close("vapor_mass[%d]" % i, float(ds.variables["vapor_mass"][i]), b["vapor_kg"]); n += 1
    if n == 0:
        print("no band with vapour in the report"); bad += 1
sys.exit(bad)
EOF
if [ $? -eq 0 ]; then sl_ok "run netCDF masses and box-model results equal the run's JSON report"; else sl_fail "run netCDF vs JSON"; sed 's/^/#   /' "$SL_TMP/cmp" | head; fi
[ -s "$D/runcsv/series.csv" ] && [ -s "$D/runplot/decay.dat" ] && sl_ok "run CSV and plot files include the box-model series" || sl_fail "run CSV/plot"
"$SL_BIN" run "$SCEN" -o "$D/r1/run.nc" >/dev/null 2>&1
"$SL_BIN" run "$SCEN" -o "$D/r2/run.nc" >/dev/null 2>&1
ncdump "$D/r1/run.nc" | grep -v ':history = ' >"$SL_TMP/d1"
ncdump "$D/r2/run.nc" | grep -v ':history = ' >"$SL_TMP/d2"
if [ -s "$SL_TMP/d1" ] && cmp -s "$SL_TMP/d1" "$SL_TMP/d2"; then sl_ok "run twice: identical ncdump without history"
else sl_fail "run outputs differ"; diff "$SL_TMP/d1" "$SL_TMP/d2" | head -5 | sed 's/^/#   /'; fi

# Undefined results (issue 13): a region without a box in a layer (the
# tropics' lowest layer lies below their tropopause) is _FillValue in the
# netCDF and an empty CSV field, never 0; the defined boxes sum to the global
# excess.  A layer that never enters the stratosphere leaves the e-folding time
# and the fractions undefined: JSON null, netCDF _FillValue (no result_
# attribute), never 0.
sl_expect_exit 0 "decay of a tropospheric layer" "$SL_BIN" decay --json --inject 1e9 --between 5000 6000 --latitude 0 -o "$D/none.nc"
cp "$SL_TMP/out" "$SL_TMP/none.json"
$PY - "$D/run.nc" "$D/runcsv/series_layers.csv" "$D/none.nc" "$SL_TMP/none.json" >"$SL_TMP/fill" 2>&1 <<'PYEOF'
import csv, json, sys, netCDF4, numpy as np
bad = 0
def check(cond, what):
    global bad
    if not cond:
        print("FAIL", what); bad += 1
with netCDF4.Dataset(sys.argv[1]) as ds:
    v = ds.variables["excess_water_mass"]
    raw = np.ma.filled(v[:].astype(float), np.nan)
    zb = ds.variables[v.dimensions[2] + "_bnds"][:]
    tp = ds.variables["region_tropopause_altitude"][:]
    check("_FillValue" in v.ncattrs(), "excess_water_mass has a _FillValue")
    empty = [(r, l) for r in range(raw.shape[1]) for l in range(raw.shape[2]) if np.isnan(raw[0, r, l])]
    check(len(empty) > 0, "some region has no box in some layer")
    for r, l in empty:   # only layers below the region's tropopause have no box
        check(zb[l][0] < tp[r], "empty cell (%d, %d) starts below its tropopause" % (r, l))
        check(bool(np.all(np.isnan(raw[:, r, l]))), "cell (%d, %d) empty at every time" % (r, l))
    # The box bounds per region: _FillValue exactly where the excess is, each
    # region's lowest box starting at its own tropopause.
    bb = np.ma.filled(ds.variables["box_bottom"][:].astype(float), np.nan)
    check(bool(np.array_equal(np.isnan(bb), np.isnan(raw[0]))), "box_bottom is _FillValue where excess_water_mass is")
    for r in range(raw.shape[1]):
        lowest = bb[r][~np.isnan(bb[r])][0]
        check(abs(lowest - tp[r]) <= 1e-9 * tp[r], "region %d: lowest box starts at its tropopause" % r)
    g = ds.variables["global_excess_water_mass"][:]
    s = np.nansum(raw, axis=(1, 2))
    check(bool(np.all(np.abs(s - g) <= 1e-9 * np.maximum(np.abs(g), 1.0))), "defined boxes sum to the global excess")
rows = [row for row in csv.reader(l for l in open(sys.argv[2]) if not l.startswith("#"))]
head, rows = rows[0], rows[1:]
cols = [i for i, h in enumerate(head) if h.startswith("excess_Tg_")]
for r, l in empty:
    check(rows[l][cols[r]] == "", "CSV: empty field for the empty cell (%d, %d)" % (r, l))
check(sum(row[c] == "" for row in rows for c in cols) == len(empty) * raw.shape[0],
      "CSV: empty fields exactly where the netCDF has _FillValue")
j = json.load(open(sys.argv[4]))
with netCDF4.Dataset(sys.argv[3]) as ds:
    for name, key in (("efolding_time", "efolding_years"), ("mean_residence_time", "mean_residence_years"),
                      ("fraction_remaining_1y", "fraction_remaining_1y"), ("fraction_remaining_3y", "fraction_remaining_3y")):
        check(j[key] is None, "JSON %s is null" % key)
        var = ds.variables[name]
        check(bool(np.ma.is_masked(var[...])), "%s is _FillValue in the netCDF (not %r)" % (name, var[...]))
        check("result_" + name not in ds.ncattrs(), "no result_%s attribute for an undefined result" % name)
sys.exit(bad)
PYEOF
if [ $? -eq 0 ]; then sl_ok "undefined results: _FillValue in netCDF, empty in CSV, null in JSON"
else sl_fail "undefined results"; sed 's/^/#   /' "$SL_TMP/fill" | head; fi
if $PY "$SRC/tests/tools/nc_check.py" "$D/none.nc" >"$SL_TMP/chk" 2>&1; then sl_ok "decay file with undefined results passes the CF check"
else sl_fail "CF check of the undefined-result file"; sed 's/^/#   /' "$SL_TMP/chk" | head; fi

# A netCDF-4 file built in memory holds just the HDF5 file, not the core
# driver's whole buffer (grown in 64 KiB steps): its size is the end-of-file
# address its superblock records (HDF5 File Format Specification, II.A).
sl_expect_exit 0 "run -o netCDF-4" "$SL_BIN" run "${SL_SRCDIR:-.}/examples/demo.ini" -o "$D/size4.nc"
if /usr/bin/python3 - "$D/size4.nc" <<'PY'
import os, struct, sys
b = open(sys.argv[1], "rb").read(64)
assert b[:8] == b"\x89HDF\r\n\x1a\n", "not HDF5"
v = b[8]
so = b[13] if v < 2 else b[9]
at = {0: 24, 1: 28}.get(v, 12) + 2 * so
eof = int.from_bytes(b[at:at + so], "little")
size = os.path.getsize(sys.argv[1])
print("# superblock v%d: end of file %d, file %d bytes" % (v, eof, size))
sys.exit(0 if eof == size else 1)
PY
then sl_ok "netCDF-4 file is as long as its superblock says"; else sl_fail "netCDF-4 file carries the in-memory buffer's slack"; fi

# netCDF-4 against netCDF-3 (issue 13: "netCDF-4 files that are smaller than
# netCDF-3").  Both formats of one run hold the same content: every dimension,
# global attribute (but history), variable, attribute and value, bit for bit
# (tests/tools/nc_same.py, python3-netcdf4, order-independent).  Sizes: an
# HDF5 dataset costs a few hundred bytes of object header and a chunked one a
# version-1 B-tree node (HDF5 File Format Specification III.A.1; 2.1 kB with
# HDF5's default K = 32, 112 bytes with the K = 1 our files are made with,
# output_nc.c), so netCDF-4 is smaller only when deflate saves more than the
# per-variable cost.  PRACTICE (our own bound, issue 13): netCDF-4 must be the
# smaller file for the demo run (78 variables, 13 on the unlimited time axis,
# which must be chunked; 219 kB against 178 kB before the file was made with
# its own creation properties), the same run with 10-day steps (731 records),
# the decay run with them, and a 2000-member ensemble against its netCDF-3
# copy (nccopy).
NCS="$SRC/tests/tools/nc_same.py"
size_of() { wc -c <"$1" | tr -d ' '; }
both_formats() { # NAME COMMAND...: -o NAME4.nc and -o NAME3.nc --format classic
  name=$1; shift
  "$@" -o "$D/${name}4.nc" >/dev/null 2>"$SL_TMP/err4" && "$@" -o "$D/${name}3.nc" --format classic >/dev/null 2>"$SL_TMP/err3"
}
if both_formats demo "$SL_BIN" run "$SRC/examples/demo.ini" && $PY "$NCS" "$D/demo3.nc" "$D/demo4.nc" >"$SL_TMP/same" 2>&1; then
  sl_ok "demo run: netCDF-4 and netCDF-3 files hold the same content ($(cat "$SL_TMP/same"))"
else sl_fail "demo run: the two formats differ"; sed 's/^/#   /' "$SL_TMP/same" "$SL_TMP/err4" "$SL_TMP/err3" 2>/dev/null | head; fi
# The comparison can fail: one value one bit off, and one attribute changed.
cp "$D/demo3.nc" "$D/demo3_ulp.nc"
$PY - "$D/demo3_ulp.nc" <<'PYEOF'
import sys, netCDF4, numpy as np
with netCDF4.Dataset(sys.argv[1], "a") as ds:
    v = ds.variables["air_density"]
    x = v[:]
    x[5] = np.nextafter(x[5], np.inf)
    v[:] = x
PYEOF
cp "$D/demo3.nc" "$D/demo3_att.nc"
$PY -c 'import sys, netCDF4; d = netCDF4.Dataset(sys.argv[1], "a"); d.variables["vapor_mass"].units = "g"; d.close()' "$D/demo3_att.nc"
if ! $PY "$NCS" "$D/demo3_ulp.nc" "$D/demo4.nc" >"$SL_TMP/same1" 2>&1 && grep -q "air_density: data differ" "$SL_TMP/same1" \
   && ! $PY "$NCS" "$D/demo3_att.nc" "$D/demo4.nc" >"$SL_TMP/same2" 2>&1 && grep -q "vapor_mass:units" "$SL_TMP/same2"; then
  sl_ok "nc_same.py fails on one value one bit off and on one changed attribute"
else sl_fail "nc_same.py did not see a one-bit or attribute difference"; cat "$SL_TMP/same1" "$SL_TMP/same2" | sed 's/^/#   /' | head; fi
smaller_nc4() { # NAME WHAT COMMAND...: both formats hold the same content and netCDF-4 is smaller
  name=$1; what=$2; shift 2
  if both_formats "$name" "$@" && $PY "$NCS" "$D/${name}3.nc" "$D/${name}4.nc" >"$SL_TMP/same" 2>&1; then
    s4=$(size_of "$D/${name}4.nc"); s3=$(size_of "$D/${name}3.nc")
    echo "# $what: netCDF-4 $s4 bytes, netCDF-3 $s3 bytes"
    if [ "$s4" -lt "$s3" ]; then sl_ok "$what: same content, netCDF-4 smaller ($s4 < $s3 bytes)"
    else sl_fail "$what: netCDF-4 $s4 bytes not smaller than netCDF-3 $s3"; fi
  else sl_fail "$what: the two formats differ"; sed 's/^/#   /' "$SL_TMP/same" | head; fi
}
s4=$(size_of "$D/demo4.nc"); s3=$(size_of "$D/demo3.nc")
echo "# demo run: netCDF-4 $s4 bytes, netCDF-3 $s3 bytes"
if [ "$s4" -gt 0 ] && [ "$s4" -lt "$s3" ]; then sl_ok "demo run: netCDF-4 smaller ($s4 < $s3 bytes)"
else sl_fail "demo run: netCDF-4 $s4 bytes not smaller than netCDF-3 $s3"; fi
# The netCDF-4 file lists its variables and global attributes in the order they
# were defined (as netCDF-3 does) and netCDF-C opens it for writing; a file
# made by nc_create_mem had neither (alphabetical order, "NetCDF: Can't write
# file").  netCDF-C (python3-netcdf4) is the judge.
cp "$D/demo4.nc" "$D/demo4_rw.nc"
if $PY - "$D/demo3.nc" "$D/demo4_rw.nc" >"$SL_TMP/order" 2>&1 <<'PYEOF'
import sys, netCDF4
with netCDF4.Dataset(sys.argv[1]) as d3, netCDF4.Dataset(sys.argv[2]) as d4:
    assert list(d4.variables) == list(d3.variables), "variable order differs"
    assert list(d4.ncattrs()) == list(d3.ncattrs()), "global attribute order differs"
with netCDF4.Dataset(sys.argv[2], "a") as d4:
    d4.setncattr("appended", "yes")
with netCDF4.Dataset(sys.argv[2]) as d4:
    assert d4.getncattr("appended") == "yes"
PYEOF
then sl_ok "netCDF-4 run file: definition order as netCDF-3, and netCDF-C opens it for writing"
else sl_fail "netCDF-4 run file order or reopening for writing"; sed 's/^/#   /' "$SL_TMP/order" | tail -3; fi
smaller_nc4 step10 "demo run with 10-day steps" "$SL_BIN" run "$SRC/examples/demo.ini" --set strat.step_days=10
smaller_nc4 dec "decay with 10-day steps" "$SL_BIN" decay "$PROF" --set strat.step_days=10
if command -v nccopy >/dev/null 2>&1; then
  if "$SL_BIN" ensemble "$SRC/examples/ensemble-stony.ini" --members 2000 --seed 1 --netcdf "$D/ens4.nc" >/dev/null 2>&1 \
     && nccopy -k classic "$D/ens4.nc" "$D/ens3.nc" && $PY "$NCS" "$D/ens3.nc" "$D/ens4.nc" >"$SL_TMP/same" 2>&1; then
    s4=$(size_of "$D/ens4.nc"); s3=$(size_of "$D/ens3.nc")
    echo "# ensemble of 2000: netCDF-4 $s4 bytes, its netCDF-3 copy $s3 bytes"
    if [ $((s4 * 2)) -lt "$s3" ]; then sl_ok "ensemble netCDF-4 under half its netCDF-3 copy ($s4 / $s3 bytes)"
    else sl_fail "ensemble netCDF-4 $s4 bytes, not under half of netCDF-3 $s3"; fi
  else sl_fail "ensemble netCDF-4 and its netCDF-3 copy"; sed 's/^/#   /' "$SL_TMP/same" | head; fi
else
  sl_skip "nccopy not installed: ensemble netCDF-3 copy not compared"
fi
if command -v nccopy >/dev/null 2>&1; then
  # The zonal field (always netCDF-4) against its netCDF-3 copy.
  if "$SL_BIN" run "$SRC/examples/demo.ini" --zonal "$D/zon4.nc" >/dev/null 2>&1 \
     && nccopy -k classic "$D/zon4.nc" "$D/zon3.nc" && $PY "$NCS" "$D/zon3.nc" "$D/zon4.nc" >"$SL_TMP/same" 2>&1; then
    s4=$(size_of "$D/zon4.nc"); s3=$(size_of "$D/zon3.nc")
    echo "# demo zonal field: netCDF-4 $s4 bytes, its netCDF-3 copy $s3 bytes"
    if [ "$s4" -lt "$s3" ]; then sl_ok "zonal field: netCDF-4 smaller than its netCDF-3 copy ($s4 < $s3 bytes)"
    else sl_fail "zonal field: netCDF-4 $s4 bytes not smaller than its netCDF-3 copy $s3"; fi
  else sl_fail "zonal field and its netCDF-3 copy"; sed 's/^/#   /' "$SL_TMP/same" | head; fi
else
  sl_skip "nccopy not installed: zonal netCDF-3 copy not compared"
fi

# Nothing stray anywhere: no staging directories left behind.
if [ -z "$(find "$D" -name '.steamloft-stage-*')" ]; then sl_ok "no staging directories left"; else sl_fail "staging left"; fi
sl_done
