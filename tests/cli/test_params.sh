#!/bin/sh
# `steamloft params`: the key list, the template, and checking a scenario file.
. "$(dirname "$0")/lib.inc"

sl_expect_exit 0 "params lists keys" "$SL_BIN" params
sl_expect_grep "$SL_TMP/out" "speed_km_s .*11 to 73 km/s" "params shows unit and range"
sl_expect_grep "$SL_TMP/out" "^\[explosion\]" "params shows the [explosion] section"
sl_expect_grep "$SL_TMP/out" "heat_fraction .*default 0.5" "params shows defaults"
sl_expect_grep "$SL_TMP/out" "Screening estimate" "params carries the caution"
sl_expect_exit 0 "params --ini" "$SL_BIN" params --ini
cp "$SL_TMP/out" "$SL_TMP/template.ini"
# The template runs as printed: required keys carry example values, the
# second event type is commented out, no line is over the reader's limit.
sl_expect_grep "$SL_TMP/template.ini" "^diameter_m = 200$" "template fills the required keys with examples"
sl_expect_grep "$SL_TMP/template.ini" "^;\[explosion\]$" "template comments out the second event type"
sl_expect_grep "$SL_TMP/template.ini" "^;name = " "template shows the optional [scenario] name, commented out"
long=$(awk 'length($0) > 196' "$SL_TMP/template.ini" | wc -l)
[ "$long" -eq 0 ] && sl_ok "no template line over 196 characters" || sl_fail "$long template lines over 196 characters"
sl_expect_exit 0 "the template runs as printed" "$SL_BIN" run "$SL_TMP/template.ini"
sl_expect_grep "$SL_TMP/out" "^steamloft run: template " "the template's run is named after its file"
# The explosion variant, made as the template's own header says.
awk '/^\[/ { sec = $0 } /^;\[explosion\]$/ { sec = "[explosion]" }
     sec ~ /^\[(impactor|airburst|entry|partition)\]$/ { print ";" $0; next }
     /^;\[explosion\]$/ || /^;energy_Mt = / { print substr($0, 2); next } { print }' \
  "$SL_TMP/template.ini" >"$SL_TMP/template-explosion.ini"
sl_expect_exit 0 "the template's explosion variant runs" "$SL_BIN" run --json "$SL_TMP/template-explosion.ini"
sl_expect_grep "$SL_TMP/out" '"kind": "explosion"' "the variant is an explosion"
sl_expect_exit 0 "params on the example" "$SL_BIN" params "$SL_SRCDIR/examples/ocean-stony-300m.ini"
sl_expect_grep "$SL_TMP/out" "impactor.strength_Pa .*derived" "derived strength is shown"
printf '[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\n' >"$SL_TMP/exp.ini"
sl_expect_exit 0 "params reads stdin" sh -c "'$SL_BIN' params - <'$SL_TMP/exp.ini'"
sl_expect_grep "$SL_TMP/out" "explosion.energy_Mt *1 *Mt TNT *file (line 2)" "stdin scenario resolved"
sl_expect_exit 66 "missing scenario file" "$SL_BIN" params "$SL_TMP/none.ini"

# --set changes exactly the named key: the resolved list differs in that
# line only, which shows the new value with origin "set".
ex="$SL_SRCDIR/examples/ocean-stony-300m.ini"
"$SL_BIN" params "$ex" >"$SL_TMP/base.txt" 2>/dev/null
for kv in "impactor.diameter_m=250|impactor.diameter_m *250 *m *set (--set)" \
          "site.atmosphere=midlatitude-summer|site.atmosphere *midlatitude-summer *set" \
          "partition.method=budget|partition.method *budget *set" \
          "site.ocean_depth_m=1200|site.ocean_depth_m *1200 *m *set"; do
  set_arg=${kv%%|*}; pat=${kv#*|}; key=${set_arg%%=*}
  sl_expect_exit 0 "params --set $set_arg" "$SL_BIN" params --set "$set_arg" "$ex"
  sl_expect_grep "$SL_TMP/out" "^$pat" "--set $key shows the value and origin set"
  nd=$(diff "$SL_TMP/base.txt" "$SL_TMP/out" | grep -c '^>')
  nk=$(diff "$SL_TMP/base.txt" "$SL_TMP/out" | grep '^>' | grep -c "^> $key ")
  [ "$nd" -eq 1 ] && [ "$nk" -eq 1 ] && sl_ok "--set $key changed that line and nothing else" \
    || sl_fail "--set $key changed $nd lines"
done
# A key the file does not have, in a section the file does not have.
sl_expect_exit 0 "--set adds a key of an absent section" "$SL_BIN" params --set scenario.name=trial-7 "$ex"
sl_expect_grep "$SL_TMP/out" "^scenario.name *trial-7 *set" "the added key is resolved"
# The last --set of a key wins.
sl_expect_exit 0 "--set twice" "$SL_BIN" params --set impactor.angle_deg=30 --set impactor.angle_deg=60 "$ex"
sl_expect_grep "$SL_TMP/out" "^impactor.angle_deg *60 " "the last --set wins"
# Mistakes: the option, the key and the valid range are named.
sl_expect_exit 65 "--set out of range" "$SL_BIN" params --set impactor.speed_km_s=5 "$ex"
sl_expect_grep "$SL_TMP/err" "--set impactor.speed_km_s: 5 is out of range (valid range: 11 to 73 km/s)" "range error names --set, key and range"
sl_expect_exit 65 "--set not a number" "$SL_BIN" params --set impactor.diameter_m=big "$ex"
sl_expect_grep "$SL_TMP/err" "--set impactor.diameter_m: 'big' is not a number (valid range: 0.1 to 20000 m)" "number error names --set, key and range"
sl_expect_exit 65 "--set bad choice" "$SL_BIN" params --set partition.method=magic "$ex"
sl_expect_grep "$SL_TMP/err" "one of shock|budget" "choice error lists the choices"
sl_expect_exit 64 "--set unknown key" "$SL_BIN" params --set impactor.size_m=3 "$ex"
sl_expect_grep "$SL_TMP/err" "--set 'impactor.size_m=3': unknown key 'impactor.size_m' (keys of \[impactor\]: diameter_m" "unknown key lists the section's keys"
sl_expect_exit 64 "--set without =" "$SL_BIN" params --set impactor.diameter_m "$ex"
sl_expect_grep "$SL_TMP/err" "want SECTION.KEY=VALUE" "missing = is explained"
nerr=$(wc -l <"$SL_TMP/err")
[ "$nerr" -eq 2 ] && sl_ok "one message (and the --help pointer) per mistake" || sl_fail "$nerr lines on stderr"
sl_expect_exit 78 "--set of the other event type" "$SL_BIN" params --set explosion.energy_Mt=5 "$ex"
sl_expect_grep "$SL_TMP/err" "\[explosion\] cannot go with \[impactor\]" "two event types are refused"
# A --set value checked only when a stage uses it (the atmosphere is opened by
# the chain) is named as --set too, never as line 0 of the file.
sl_expect_exit 66 "run --set site.atmosphere=nosuch" "$SL_BIN" run "$ex" --set site.atmosphere=nosuch
sl_expect_grep "$SL_TMP/err" "ocean-stony-300m.ini: --set site.atmosphere = nosuch: atmosphere 'nosuch' is neither a built-in profile (us1976," \
  "the atmosphere error names --set and the built-in profiles"
if grep -q ':0:' "$SL_TMP/err"; then sl_fail "the message shows line 0"; else sl_ok "no line 0 in the message"; fi
printf 'altitude_km temperature_K\n' >"$SL_TMP/bad.atm"
sl_expect_exit 65 "run --set site.atmosphere=a bad profile file" "$SL_BIN" run "$ex" --set site.atmosphere="$SL_TMP/bad.atm"
sl_expect_grep "$SL_TMP/err" "--set site.atmosphere = $SL_TMP/bad.atm: $SL_TMP/bad.atm" "the profile error names --set, then the profile file"
sl_expect_exit 65 "run --set plume.band_top_m too close to the bottom" "$SL_BIN" run "$ex" --set plume.band_bottom_m=5000 --set plume.band_top_m=5500
sl_expect_grep "$SL_TMP/err" "--set plume.band_top_m = 5500 must exceed band_bottom_m = 5000 by at least band_width_m = 1000" "the band error names --set"
sl_expect_exit 64 "sweep with a --set distribution" "$SL_BIN" sweep "$ex" --set "impactor.angle_deg=uniform(30,60)" --vary impactor.diameter_m=250,300
sl_expect_grep "$SL_TMP/err" "ocean-stony-300m.ini: --set impactor.angle_deg is a distribution" "the sweep error names --set"
sl_expect_exit 64 "two files" "$SL_BIN" params a b
sl_done
