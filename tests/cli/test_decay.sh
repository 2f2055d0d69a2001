#!/bin/sh
# `steamloft decay`: single layer and profile file, text and JSON summaries,
# the calibration command, and usage / bad-data errors with their exit codes.
. "$(dirname "$0")/lib.inc"

# Hunga-like layer (146 Tg at 22-27 km, 20 S, January; Millan et al. 2022).
sl_expect_exit 0 "decay --inject" "$SL_BIN" decay --inject 1.46e11 --between 22000 27000 --latitude -20
# The text summary carries the same quantities as run's, with readable labels.
for k in "e-folding time" "mean residence time" "peak excess / background" "peak global-mean anomaly" \
         "peak global column anomaly" "peak column in the young cloud" "forcing indicator" \
         "fraction left after 1 year" "fraction left after 3 years" "Screening estimate"; do
  sl_expect_grep "$SL_TMP/out" "$k" "text summary has '$k'"
done
sl_expect_exit 0 "decay --json" "$SL_BIN" decay --json --inject 1.46e11 --between 22000,27000 --latitude -20
# The JSON parses and its e-folding lies between 2.5 yr (Fleming et al. 2024)
# and 43 months (Zhuo et al. 2025), its percentage within 8.9-13 % (Xu 2022,
# Khaykin 2022), as in tests/test_strat.c.
if /usr/bin/python3 -c '
import json, sys
d = json.load(open(sys.argv[1]))
keys = ["efolding_years", "mean_residence_years", "percent_of_background", "peak_global_anomaly_ppmv",
        "peak_global_column_kg_m2", "peak_local_column_kg_m2", "forcing_indicator_W_m2",
        "fraction_remaining_1y", "fraction_remaining_3y", "caution"]
assert all(k in d for k in keys), [k for k in keys if k not in d]
assert 2.5 <= d["efolding_years"] <= 43 / 12, d["efolding_years"]
assert 8.9 <= d["percent_of_background"] <= 13, d["percent_of_background"]
tot = d["strat_remaining_kg"] + sum(d["strat_sinks_kg"].values())
assert abs(tot - d["strat_injected_kg"]) <= 1e-5 * d["strat_injected_kg"], (tot, d["strat_injected_kg"])
' "$SL_TMP/out"; then sl_ok "JSON keys, Hunga ranges and budget"; else sl_fail "JSON keys, Hunga ranges and budget"; fi

# The same Hunga-like event in the injection-table format `run --injection-table`
# writes (one row per band and species; 15 January 2022 04:15 UTC, 20.55 S
# 175.38 W; Millan et al. 2022): the same published ranges.
H="$SL_TMP/hunga_table.csv"
{ echo "# a Hunga-like event, invented rows in the table's layout"
  echo "event_time_utc,latitude_deg,longitude_deg,bottom_m,top_m,bottom_hPa,top_hPa,species,mass_kg,duration_s,radius_m"
  for b in 22000 23000 24000 25000 26000; do
    echo "2022-01-15T04:15:00Z,-20.55,184.62,$b,$((b + 1000)),40,35,water_vapour,2.0e10,21600,250000"
    echo "2022-01-15T04:15:00Z,-20.55,184.62,$b,$((b + 1000)),40,35,ice,9.2e9,21600,250000"
  done; } > "$H"
sl_expect_exit 0 "decay INJECTION-TABLE.csv" "$SL_BIN" decay --json "$H"
if /usr/bin/python3 -c '
import json, sys
d = json.load(open(sys.argv[1]))
assert abs(d["strat_injected_kg"] - 1.46e11) <= 1e-9 * 1.46e11, d["strat_injected_kg"]  # species summed per band
assert 2.5 <= d["efolding_years"] <= 43 / 12, d["efolding_years"]
assert 8.9 <= d["percent_of_background"] <= 13, d["percent_of_background"]
' "$SL_TMP/out"; then sl_ok "injection table: 146 Tg, Hunga e-folding and percent"; else sl_fail "injection table: Hunga ranges"; fi
# The table's event is one event: a row with another latitude, an unknown
# species, a date that is not ISO 8601, a header that is not the table's.
sed '5s/-20.55/-20.5/' "$H" > "$SL_TMP/t1.csv"
sl_expect_exit 65 "table: a row with another latitude" "$SL_BIN" decay "$SL_TMP/t1.csv"
sl_expect_grep "$SL_TMP/err" "t1.csv:5: column 2 (latitude_deg): '-20.5' differs from the first row" "file, line and column named"
sed '4s/,ice,/,snow,/' "$H" > "$SL_TMP/t2.csv"
sl_expect_exit 65 "table: unknown species" "$SL_BIN" decay "$SL_TMP/t2.csv"
sl_expect_grep "$SL_TMP/err" "t2.csv:4: column 8 (species): 'snow' is not a species (valid: water_vapour, ice)" "species and valid form named"
sed '3s/2022-01-15T04:15:00Z/15.1.2022/' "$H" > "$SL_TMP/t3.csv"
sl_expect_exit 65 "table: a date that is not ISO 8601" "$SL_BIN" decay "$SL_TMP/t3.csv"
sl_expect_grep "$SL_TMP/err" "t3.csv:3: column 1 (event_time_utc): '15.1.2022' is not an ISO 8601" "date form named"
sed '3s/,2.0e10,/,0x10,/' "$H" > "$SL_TMP/t4.csv"
sl_expect_exit 65 "table: a hexadecimal mass" "$SL_BIN" decay "$SL_TMP/t4.csv"
sl_expect_grep "$SL_TMP/err" "t4.csv:3: column 9 (mass_kg): '0x10' is not a decimal number" "decimal-only numbers"
sed '2s/,radius_m/,radius_km/' "$H" > "$SL_TMP/t5.csv"
sl_expect_exit 65 "table: a header that differs" "$SL_BIN" decay "$SL_TMP/t5.csv"
sl_expect_grep "$SL_TMP/err" "t5.csv:2: column 11 of an injection table header is 'radius_km'" "header column named"
# BOM and CRLF line ends (include/steamloft/infile.h rules) read the same.
printf '\357\273\277' > "$SL_TMP/t6.csv"; sed 's/$/\r/' "$H" >> "$SL_TMP/t6.csv"
sl_expect_exit 0 "table with BOM and CRLF" "$SL_BIN" decay --json "$SL_TMP/t6.csv"
sl_expect_grep "$SL_TMP/out" '"strat_injected_kg": 1.46e+11' "BOM/CRLF table: 146 Tg"

# A profile file in the injection CSV format (Tg and km units).
cat > "$SL_TMP/prof.csv" <<'CSV'
# latitude_deg = -20
bottom_km,top_km,vapor_Tg
22,23,29.2
23,24,29.2
24,25,29.2
25,26,29.2
26,27,29.2
CSV
sl_expect_exit 0 "decay PROFILE.csv" "$SL_BIN" decay --json "$SL_TMP/prof.csv"
sl_expect_grep "$SL_TMP/out" '"strat_injected_kg": 1.46e+11' "profile: 146 Tg injected"
sl_expect_exit 0 "decay --series" "$SL_BIN" decay --series --span-years 2 "$SL_TMP/prof.csv"
sl_expect_grep "$SL_TMP/out" "^time_days,global_excess_kg" "series header"
n=$(grep -c '^[0-9]' "$SL_TMP/out")
if [ "$n" -eq 25 ]; then sl_ok "2 years monthly = 25 rows"; else sl_fail "2 years monthly: $n rows, want 25"; fi

sl_expect_exit 0 "decay --calibrate" "$SL_BIN" decay --calibrate
sl_expect_grep "$SL_TMP/out" "deep_branch_fraction" "calibration prints the fitted constants"
sl_expect_exit 0 "decay --help" "$SL_BIN" decay --help
sl_expect_grep "$SL_TMP/out" "Usage: steamloft decay" "help text"

# Usage errors (64) and bad data (65), no input (66).
sl_expect_exit 64 "no profile, no layer" "$SL_BIN" decay
sl_expect_exit 64 "latitude out of range" "$SL_BIN" decay --inject 1e9 --between 20000 21000 --latitude 91
sl_expect_grep "$SL_TMP/err" "valid range -90 to 90" "latitude range named"
sl_expect_exit 64 "--between reversed" "$SL_BIN" decay --inject 1e9 --between 21000 20000 --latitude 0
sl_expect_exit 64 "month 13" "$SL_BIN" decay --month 13 --inject 1e9 --between 20000 21000 --latitude 0
sl_expect_exit 66 "missing profile" "$SL_BIN" decay "$SL_TMP/nope.csv"
printf 'bottom_km,top_km,vapor_Tg\n20,21,-3\n' > "$SL_TMP/bad.csv"
sl_expect_exit 65 "negative mass in profile" "$SL_BIN" decay "$SL_TMP/bad.csv"
sl_expect_grep "$SL_TMP/err" "bad.csv:2" "bad profile names file and line"
sl_expect_exit 66 "unknown atmosphere" "$SL_BIN" decay --atmosphere nowhere --inject 1e9 --between 20000 21000 --latitude 0
# Altitudes written in km where metres are wanted were taken as metres (0 Tg, exit 0).
sl_expect_exit 64 "--between in km is refused" "$SL_BIN" decay --inject 1e9 --between 22 27 --latitude 0
sl_expect_grep "$SL_TMP/err" "look like kilometres; for 22 to 27 km write --between 22000 27000" "the refusal gives the fix"
sl_expect_exit 64 "--between in km with a comma" "$SL_BIN" decay --inject 1e9 --between 22,27 --latitude 0
sl_expect_exit 0 "the fixed command runs" "$SL_BIN" decay --inject 1e9 --between 22000 27000 --latitude 0
sl_done
