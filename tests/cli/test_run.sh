#!/bin/sh
# `steamloft run`: the example, JSON keys, stdin, and one test per kind of
# scenario mistake with its message (file, line, key, range) and exit code.
. "$(dirname "$0")/lib.inc"
ex="$SL_SRCDIR/examples/ocean-stony-300m.ini"

sl_expect_exit 0 "run the example" "$SL_BIN" run "$ex"
sl_expect_grep "$SL_TMP/out" "sea water turned to vapour" "text summary names the vapour"
sl_expect_grep "$SL_TMP/out" "Screening estimate" "text summary carries the caution"
sl_expect_exit 0 "run --json" "$SL_BIN" run --json "$ex"
cp "$SL_TMP/out" "$SL_TMP/ex.json"
if /usr/bin/python3 - "$SL_TMP/ex.json" <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
for k in ("energy_J", "energy_Mt", "airburst", "burst_altitude_m", "energy_at_sea_J",
          "water_vaporized_kg", "sources", "caution", "parameters"):
    assert k in d, k
assert isinstance(d["airburst"], bool)
assert d["burst_altitude_m"] is None or isinstance(d["burst_altitude_m"], float)
assert abs(d["energy_J"] / 4.184e15 - d["energy_Mt"]) < 1e-6 * d["energy_Mt"]
assert d["water_vaporized_kg"] > 0 and len(d["sources"]) >= 1
for s in d["sources"]:
    for k in ("kind", "altitude_m", "radius_m", "air_mass_kg", "vapor_mass_kg", "heat_J"):
        assert k in s, k
assert d["parameters"]["impactor.diameter_m"]["value"] == 300
PY
then sl_ok "JSON parses and has the required keys"; else sl_fail "JSON keys"; fi

# Every shipped example runs.
for f in "$SL_SRCDIR"/examples/*.ini; do
  case "$f" in */ensemble-*) continue ;; esac # distributions: for `steamloft ensemble`
  sl_expect_exit 0 "example $(basename "$f") runs" "$SL_BIN" run --json "$f"
done

# A distribution given to `run` is named as one.
sl_expect_exit 65 "run on an ensemble scenario" "$SL_BIN" run "$SL_SRCDIR/examples/ensemble-stony.ini"
sl_expect_grep "$SL_TMP/err" "is not a number but a distribution: run the scenario with 'steamloft ensemble'" "run points to ensemble"

# Chelyabinsk through stdin: an airburst near 30 km.
printf '[impactor]\ndiameter_m = 19\ndensity_kg_m3 = 3300\nspeed_km_s = 19.16\nangle_deg = 18\n[site]\nlatitude_deg = 54.8\nocean_depth_m = 0\n' >"$SL_TMP/chel.ini"
sl_expect_exit 0 "run from stdin" sh -c "'$SL_BIN' run --json - <'$SL_TMP/chel.ini'"
sl_expect_grep "$SL_TMP/out" '"airburst": true' "Chelyabinsk airbursts"
sl_expect_grep "$SL_TMP/out" '"burst_altitude_m": 3[01][0-9]*\.' "Chelyabinsk bursts near 30 km"

# An explosion.
printf '[explosion]\nenergy_Mt = 15\n[site]\nlatitude_deg = 11.7\n' >"$SL_TMP/bravo.ini"
sl_expect_exit 0 "run an explosion" "$SL_BIN" run --json "$SL_TMP/bravo.ini"
sl_expect_grep "$SL_TMP/out" '"kind": "explosion"' "explosion source"

# A relative profile path is found next to the scenario file.
mkdir -p "$SL_TMP/sub"
cp "$SL_SRCDIR/atmospheres/tropical.txt" "$SL_TMP/sub/myprofile.txt"
printf '[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\natmosphere = myprofile.txt\n' >"$SL_TMP/sub/near.ini"
sl_expect_exit 0 "profile next to the scenario" "$SL_BIN" run --json "$SL_TMP/sub/near.ini"
sl_expect_grep "$SL_TMP/out" '"burst_altitude_m": null' "surface explosion has no burst altitude"

# One test per kind of mistake.
base='[impactor]\ndiameter_m = 19\ndensity_kg_m3 = 3300\nspeed_km_s = 19.16\nangle_deg = 18\n'
site='[site]\nlatitude_deg = 54.8\n'
bad() { printf "$1" >"$SL_TMP/bad.ini"; sl_expect_exit "$2" "$3" "$SL_BIN" run "$SL_TMP/bad.ini"; sl_expect_grep "$SL_TMP/err" "$4" "$3: message"; }
bad "${base}colour_1 = 3\n${site}" 78 "unknown key" "bad.ini:6: unknown key 'colour_1' in \[impactor\]"
bad "${base}angle_deg = 20\n${site}" 78 "duplicate key" "bad.ini:6: duplicate key \[impactor\] angle_deg (first given on line 5"
bad "[impactor]\ndiameter_m = 19\ndensity_kg_m3 = 3300\nangle_deg = 18\n${site}" 78 "missing required key" "\[impactor\] speed_km_s is required.*11 to 73 km/s"
bad "${base}[site]\nlatitude_deg = north\n" 65 "value not a number" "bad.ini:7: \[site\] latitude_deg: 'north' is not a number (valid range: -90 to 90 degree)"
bad "${base}[site]\nlatitude_deg = 95\n" 65 "value out of range" "bad.ini:7: \[site\] latitude_deg: 95 is out of range (valid range: -90 to 90 degree)"
bad "[impactor]\ndiameter_m = 19\ndensity_kg_m3 = 3300\nspeed_km_s = 8\nangle_deg = 18\n${site}" 65 "speed below escape" "bad.ini:4: \[impactor\] speed_km_s: 8 is out of range (valid range: 11 to 73 km/s)"
bad "${base}${site}[ocean]\ndepth_m = 3\n" 78 "unknown section" "bad.ini:9: unknown section \[ocean\]"
bad "${base}this line has no equals sign\n${site}" 78 "syntax error" "bad.ini:6: syntax error"
bad "${base}[explosion]\nenergy_Mt = 1\n${site}" 78 "impactor and explosion" "cannot go with \[impactor\]"
bad "${base}[airburst]\naltitude_m = 30000\n${site}" 78 "half an airburst" "energy_fraction is required"
bad "${base}[partition]\nmethod = magic\n${site}" 65 "unknown choice" "bad.ini:7: \[partition\] method: 'magic' is not a valid choice (valid: one of shock|budget)"
bad "${base}[site]\nlatitude_deg = 54.8\natmosphere = /nonexistent/atm.txt\n" 66 "missing atmosphere file" "bad.ini:8: \[site\] atmosphere = /nonexistent/atm.txt"
sl_expect_exit 66 "missing scenario file" "$SL_BIN" run "$SL_TMP/none.ini"
sl_expect_grep "$SL_TMP/err" "none.ini: cannot open scenario file" "missing file is named"
sl_expect_exit 64 "no scenario" "$SL_BIN" run
sl_expect_exit 64 "unknown option" "$SL_BIN" run --frobnicate "$ex"
sl_done
