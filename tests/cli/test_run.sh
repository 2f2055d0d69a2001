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

# The demo summary: water first, about a screen long, 3 significant figures.
demo="$SL_SRCDIR/examples/demo.ini"
sl_expect_exit 0 "run the demo" "$SL_BIN" run "$demo"
cp "$SL_TMP/out" "$SL_TMP/demo.txt"
n=$(wc -l <"$SL_TMP/demo.txt")
[ "$n" -le 60 ] && sl_ok "demo summary fits in 60 lines ($n)" || sl_fail "demo summary has $n lines"
"$SL_BIN" run --json "$demo" >"$SL_TMP/demo.json"
if /usr/bin/python3 - "$SL_TMP/demo.txt" "$SL_TMP/demo.json" <<'PY'
import json, re, sys
lines = open(sys.argv[1]).read().splitlines()
d = json.load(open(sys.argv[2]))
assert lines[0].startswith("steamloft run: demo "), lines[0]
assert lines[2] == "What reaches the stratosphere", lines[2]
labels = [l.split("  ")[1].strip() if l.startswith("  ") else "" for l in lines[3:8]]
assert labels == ["water above the tropopause", "share of the background", "e-folding time",
                  "plume regime", "validity"], labels
def first_number(line):
    return float(re.search(r"\s(-?[0-9][0-9.e+-]*)\s", line[36:] + " ").group(1))
def three_sig(x):
    return float("%.3g" % x)
assert first_number(lines[3]) == three_sig(d["strat_injected_kg"] * 1e-9), (lines[3], d["strat_injected_kg"])
assert first_number(lines[4]) == three_sig(d["percent_of_background"]), lines[4]
assert first_number(lines[5]) == three_sig(d["efolding_years"]), lines[5]
assert lines[6].split()[-1] == d["regime"], lines[6]
assert lines[7].endswith(d["validity"]), lines[7]
# Three significant figures everywhere in text (no 4-digit mantissas such as 437.9 or 1.832e+18).
for l in lines:
    for tok in re.findall(r"(?<![\w.])[0-9]+\.[0-9]+(?:e[+-][0-9]+)?", l):
        digits = re.sub(r"e.*", "", tok).replace(".", "").lstrip("0")
        assert len(digits) <= 3, (tok, l)
# One kinetic-energy line with both units; none of the old layout's wording.
ke = [l for l in lines if "kinetic energy" in l]
assert len(ke) == 1 and " J = " in ke[0] and "Mt TNT" in ke[0], ke
text = "\n".join(lines)
for phrase in ("transient cavity", "burst altitude", "breakup altitude", "speed at the sea"):
    assert phrase not in text, phrase
PY
then sl_ok "summary opens with the water numbers, 3 significant figures, one energy line"; else sl_fail "demo summary layout"; fi
sl_expect_exit 0 "run the demo with -v after the command" "$SL_BIN" run "$demo" -v
nv=$(wc -l <"$SL_TMP/out")
[ "$nv" -gt "$n" ] && sl_ok "-v adds the detail ($nv lines)" || sl_fail "-v gave $nv lines"
sl_expect_grep "$SL_TMP/out" "plume sources" "-v lists the plume sources"
sl_expect_grep "$SL_TMP/out" "removed by photolysis" "-v lists the box-model sinks"

# --set on run: the value is in the key's own unit; the JSON records the origin.
sl_expect_exit 0 "run --set" "$SL_BIN" run --json --set impactor.speed_km_s=25 --set site.atmosphere=subarctic-winter "$ex"
if /usr/bin/python3 - "$SL_TMP/out" "$SL_TMP/ex.json" <<'PY'
import json, sys
d = json.load(open(sys.argv[1])); b = json.load(open(sys.argv[2]))
p = d["parameters"]
assert p["impactor.speed_km_s"]["value"] == 25 and p["impactor.speed_km_s"]["origin"] == "set"
assert p["site.atmosphere"]["value"] == "subarctic-winter" and p["site.atmosphere"]["origin"] == "set"
assert d["atmosphere"] == "subarctic-winter", d["atmosphere"]
# kinetic energy scales with the speed squared (same body)
assert abs(d["energy_J"] / b["energy_J"] - (25 / b["parameters"]["impactor.speed_km_s"]["value"]) ** 2) < 1e-9
PY
then sl_ok "run --set takes km/s and a profile name"; else sl_fail "run --set"; fi
sl_expect_exit 65 "run --set out of range" "$SL_BIN" run --set impactor.speed_km_s=80 "$ex"
sl_expect_grep "$SL_TMP/err" "--set impactor.speed_km_s: 80 is out of range (valid range: 11 to 73 km/s)" "run --set error names option, key, range"
sl_expect_exit 64 "run -j is no option (threads elsewhere)" "$SL_BIN" run -j "$ex"

# --set on ensemble and sweep is the same as editing the file (same seed,
# same members, byte-identical per-member CSV).
ens="$SL_SRCDIR/examples/ensemble-stony.ini"
sed 's/^ocean_depth_m = 4500/ocean_depth_m = 900/' "$ens" >"$SL_TMP/ens-edited.ini"
grep -q '^ocean_depth_m = 900' "$SL_TMP/ens-edited.ini" || sl_fail "test setup: the edit did not apply"
cp "$ens" "$SL_TMP/ens-edited-set.ini"
sl_expect_exit 0 "ensemble --set" "$SL_BIN" ensemble "$SL_TMP/ens-edited-set.ini" --members 12 --seed 3 --no-progress \
  --set site.ocean_depth_m=900 -o "$SL_TMP/e-set.csv"
"$SL_BIN" ensemble "$SL_TMP/ens-edited.ini" --members 12 --seed 3 --no-progress -o "$SL_TMP/e-file.csv" >/dev/null 2>&1
"$SL_BIN" ensemble "$ens" --members 12 --seed 3 --no-progress -o "$SL_TMP/e-base.csv" >/dev/null 2>&1
cmp -s "$SL_TMP/e-set.csv" "$SL_TMP/e-file.csv" && sl_ok "ensemble --set equals the edited file" || sl_fail "ensemble --set differs from the edited file"
cmp -s "$SL_TMP/e-set.csv" "$SL_TMP/e-base.csv" && sl_fail "ensemble --set changed nothing" || sl_ok "ensemble --set changed the members"
sl_expect_exit 0 "ensemble --set a distribution" "$SL_BIN" ensemble "$ens" --members 8 --no-progress \
  --set "site.latitude_deg=uniform(-10, 10)" --json
sl_expect_grep "$SL_TMP/out" "site.latitude_deg" "the distribution given by --set is an ensemble input"
sl_expect_exit 0 "sweep --set" "$SL_BIN" sweep "$SL_TMP/bravo.ini" --vary explosion.energy_Mt=5,20 \
  --set site.atmosphere=midlatitude-winter --no-progress -o "$SL_TMP/s-set.csv"
sed 's/^latitude_deg = 11.7/latitude_deg = 11.7\natmosphere = midlatitude-winter/' "$SL_TMP/bravo.ini" >"$SL_TMP/bravo-mw.ini"
"$SL_BIN" sweep "$SL_TMP/bravo-mw.ini" --vary explosion.energy_Mt=5,20 --no-progress -o "$SL_TMP/s-file.csv" >/dev/null 2>&1
cmp -s "$SL_TMP/s-set.csv" "$SL_TMP/s-file.csv" && sl_ok "sweep --set equals the edited file" || sl_fail "sweep --set differs"
sl_expect_exit 64 "ensemble --set unknown key" "$SL_BIN" ensemble "$ens" --set site.depth=3
sl_expect_grep "$SL_TMP/err" "unknown key 'site.depth'" "ensemble names the bad --set key"
sl_done
