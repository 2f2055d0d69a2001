#!/bin/sh
# The entry stage as a user meets it in `steamloft run`: the summary names the
# break-up mode and the pieces that reached the sea, the JSON carries the same
# with the energy bookkeeping (gravity work named), and bad break-up keys are
# refused with file, line, key and range (exit 65).
. "$SL_SRCDIR/tests/cli/lib.inc"
PY=/usr/bin/python3

# An invented iron body of 40 m at 17 km/s (the size and speed of the Meteor
# Crater body, Melosh & Collins 2005).
cat >"$SL_TMP/iron.ini" <<'INI'
[impactor]
diameter_m = 40
density_kg_m3 = 7800
speed_km_s = 17
angle_deg = 45
[site]
latitude_deg = 35
INI
sl_expect_exit 0 "iron body runs" "$SL_BIN" run -v "$SL_TMP/iron.ini"
sl_expect_grep "$SL_TMP/out" "^  break-up  *fragments" "summary names the break-up mode"
sl_expect_grep "$SL_TMP/out" "^  pieces reaching the water  *6 of .* kg at .* km/s" "summary lists the pieces at the sea"
sl_expect_grep "$SL_TMP/out" "^  work done by gravity  *[0-9]" "detailed summary names the work done by gravity"

sl_expect_exit 0 "iron body runs (JSON)" "$SL_BIN" run --json "$SL_TMP/iron.ini"
cp "$SL_TMP/out" "$SL_TMP/iron.json"
if [ ! -x "$PY" ]; then
  echo "SKIP: $PY is missing, the JSON checks need it"; exit 77
fi
# Bookkeeping: E0 + W = air + sea + carried off, to 1e-6 of E0 (the entry's
# solver tolerance is 1e-8 per step; PRACTICE).
if $PY - "$SL_TMP/iron.json" <<'PYEOF' >"$SL_TMP/py.txt" 2>&1
import json, sys
d = json.load(open(sys.argv[1]))
assert d["breakup_mode"] == "fragments", d["breakup_mode"]
assert d["sea_fragments"] == 6, d["sea_fragments"]
g = d["fragment_groups"]
assert [x["kind"] for x in g] == ["solid", "debris_cloud", "solid"], g
assert g[2]["end"] == "sea" and g[2]["count"] == 6, g[2]
lhs = d["energy_J"] + d["gravity_work_J"]
rhs = d["energy_in_air_J"] + d["energy_at_sea_J"] + d["energy_carried_off_J"]
assert abs(lhs - rhs) <= 1e-6 * d["energy_J"], (lhs, rhs)
assert 0.3 < d["sea_mass_kg"] / d["initial_mass_kg"] < 0.9, d["sea_mass_kg"]
PYEOF
then sl_ok "JSON: break-up mode, fragment groups, energy closes with the gravity work"
else sl_fail "JSON entry keys"; sed 's/^/#   /' "$SL_TMP/py.txt" | tail -3; fi

# A small stony meteoroid deposits a little more than its entry energy: the
# summary and the JSON say the extra is the work of gravity.
cat >"$SL_TMP/small.ini" <<'INI'
[impactor]
diameter_m = 1
density_kg_m3 = 3300
speed_km_s = 15
angle_deg = 60
[site]
latitude_deg = 10
INI
sl_expect_exit 0 "small stony body runs" "$SL_BIN" run "$SL_TMP/small.ini"
sl_expect_grep "$SL_TMP/out" "^  break-up  *debris cloud (pancake)" "weak body breaks as a debris cloud"
sl_expect_grep "$SL_TMP/out" "^  more than the entry energy  *by .* Mt: the work gravity did" "text says where the extra energy came from"
sl_expect_exit 0 "small stony body runs (JSON)" "$SL_BIN" run --json "$SL_TMP/small.ini"
sl_expect_grep "$SL_TMP/out" '"energy_in_air_note": "the energy in the air exceeds' "JSON says where the extra energy came from"

# Bad break-up keys: file, line, key, valid range; exit 65.
for bad in "fragment_count = 1|fragment_count: 1 is out of range (valid range: 2 to 16" \
           "cloud_fraction = 2|cloud_fraction: 2 is out of range (valid range: 0 to 0.95" \
           "iron_strength_Pa = 5|iron_strength_Pa: 5 is out of range (valid range: 1e+06 to 1e+09 Pa"; do
  line=${bad%%|*}; msg=${bad#*|}
  { cat "$SL_TMP/iron.ini"; printf '[entry]\n%s\n' "$line"; } >"$SL_TMP/bad.ini"
  sl_expect_exit 65 "bad key: $line" "$SL_BIN" run "$SL_TMP/bad.ini"
  sl_expect_grep "$SL_TMP/err" "bad.ini:9: \[entry\] $msg" "message names file, line, key and range ($line)"
done
sl_done
