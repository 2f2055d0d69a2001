#!/bin/sh
# `steamloft atmos`: list, table, --at, --summary, JSON/CSV keys, the shipped
# profiles equal what the code writes, and bad profile files (text and CF
# netCDF) give file + line/variable messages and exit 65.
. "$(dirname "$0")/lib.inc"
src=${SL_SRCDIR:-.}

sl_expect_exit 0 "atmos list" "$SL_BIN" atmos list
for n in us1976 us1976-humid tropical midlatitude-summer midlatitude-winter subarctic-summer subarctic-winter; do
  sl_expect_grep "$SL_TMP/out" "^$n " "list names $n"
done
sl_expect_exit 0 "atmos --help" "$SL_BIN" atmos --help
sl_expect_grep "$SL_TMP/out" "Usage: steamloft atmos" "help text"

# --at with the keys of issue 3; 216.77 K at 11 km is the USSA76 table value
# (216.774 K at 11 km geometric altitude, NOAA-S/T 76-1562 tables, SEEN).
sl_expect_exit 0 "atmos --at 11000 us1976 --json" "$SL_BIN" atmos --at 11000 us1976 --json
for k in altitude_m temperature_K pressure_Pa density_kg_m3 h2o_ppmv n2_per_s2 ice_saturation_ppmv; do
  sl_expect_grep "$SL_TMP/out" "\"$k\": " "--at JSON key $k"
done
sl_expect_grep "$SL_TMP/out" '"temperature_K": 216.77' "--at 11000: USSA76 216.774 K"
sl_expect_grep "$SL_TMP/out" '"pressure_Pa": 22699.9' "--at 11000: USSA76 22700 Pa"
sl_expect_exit 0 "atmos --at CSV" "$SL_BIN" atmos us1976 --at 20000 --csv
sl_expect_grep "$SL_TMP/out" "^altitude_m,temperature_K,pressure_Pa," "--at CSV header"
sl_expect_grep "$SL_TMP/out" "^20000,216.65,5529.3" "--at 20000 CSV: USSA76 216.65 K 5529.3 Pa"

# --summary with the keys of issue 3.
sl_expect_exit 0 "atmos --summary --json" "$SL_BIN" atmos --summary --json tropical
for k in tropopause_altitude_m tropopause_temperature_K tropopause_pressure_Pa stratopause_altitude_m \
         stratospheric_water_column_kg_m2 stratospheric_water_burden_kg; do
  sl_expect_grep "$SL_TMP/out" "\"$k\": [0-9]" "--summary JSON key $k"
done
sl_expect_grep "$SL_TMP/out" '"tropopause_temperature_K": 194.8,' "tropical tropopause 194.8 K (AFGL)"
sl_expect_exit 0 "atmos --summary text" "$SL_BIN" atmos us1976 --summary
sl_expect_grep "$SL_TMP/out" "^tropopause_altitude_m  *11019.0" "us1976 tropopause at 11 km geopotential"

# Usage and input errors.
sl_expect_exit 65 "--at outside the profile" "$SL_BIN" atmos --at 1100000 us1976
sl_expect_grep "$SL_TMP/err" "outside atmosphere profile 'us1976' (0 to 1e+06 m)" "out-of-range message"
sl_expect_exit 64 "no profile" "$SL_BIN" atmos
sl_expect_exit 64 "--csv with --json" "$SL_BIN" atmos --csv --json us1976
sl_expect_exit 64 "--at with --summary" "$SL_BIN" atmos --at 100 --summary us1976
sl_expect_exit 64 "--at not a number" "$SL_BIN" atmos --at 10km us1976
sl_expect_exit 66 "missing file" "$SL_BIN" atmos "$SL_TMP/none.txt"

# The shipped files are exactly what the code writes (scripts/make-atmospheres.sh).
sl_expect_exit 0 "regenerate profiles" "$src/scripts/make-atmospheres.sh" "$SL_BIN" "$SL_TMP/atm"
for n in us1976 us1976-humid tropical midlatitude-summer midlatitude-winter subarctic-summer subarctic-winter; do
  if cmp -s "$SL_TMP/atm/$n.txt" "$src/atmospheres/$n.txt"; then sl_ok "shipped $n.txt is current"
  else sl_fail "shipped atmospheres/$n.txt differs from 'steamloft atmos $n' (run make atmospheres)"; fi
done

# CSV written by the tool reads back.
"$SL_BIN" atmos tropical --csv > "$SL_TMP/trop.csv"
sl_expect_exit 0 "CSV profile reads back" "$SL_BIN" atmos "$SL_TMP/trop.csv" --summary --json
sl_expect_grep "$SL_TMP/out" '"tropopause_altitude_m": 17000,' "CSV round trip keeps the tropopause"

# Bad text profiles: each names file and line and exits 65.
good_head='# columns: altitude_m temperature_K pressure_Pa'
bad() { # bad NAME "what" "expected message" LINES...
  f="$SL_TMP/$1"; what=$2; msg=$3; shift 3
  printf '%s\n' "$@" > "$f"
  sl_expect_exit 65 "$what" "$SL_BIN" atmos "$f" --summary
  sl_expect_grep "$SL_TMP/err" "$msg" "$what: message"
}
bad short.txt "missing column" "short.txt:4: 2 values, expected 3" "$good_head" "0 288.15 101325" \
  "1000 281.65 89876" "2000 275.15"
bad order.txt "non-monotonic altitude" "order.txt:5: altitude 1500 m .*strictly" "$good_head" "0 288.15 101325" \
  "1000 281.65 89876" "2000 275.15 79501" "1500 278 84000"
bad neg.txt "negative pressure" "neg.txt:3: pressure -89876 Pa is not within" "$good_head" "0 288.15 101325" \
  "1000 281.65 -89876" "2000 275.15 79501"
bad nan.txt "NaN" "nan.txt:4: column temperature_K: 'nan' is not a finite number" "$good_head" \
  "0 288.15 101325" "1000 281.65 89876" "2000 nan 79501"
bad units.txt "unknown unit" "units.txt:1: unknown column 'temperature_F'" \
  "# columns: altitude_m temperature_F pressure_Pa" "0 59 101325" "1000 47 89876" "2000 35 79501"
bad km.txt "altitude in km under _m" "km.txt:3: pressure falls .* check the units" "$good_head" \
  "0 288.15 101325" "1 281.65 89876" "2 275.15 79501"
bad hpa.txt "hPa under _Pa" "hpa.txt:2: pressure 1013.25 Pa at the lowest level" "$good_head" \
  "0 288.15 1013.25" "1000 281.65 898.76" "2000 275.15 795.01"
bad degc.txt "Celsius under _K" "degc.txt:2: temperature 15 K is not within 50 to 2000 K" "$good_head" \
  "0 15 101325" "1000 8.5 89876" "2000 2 79501"
bad nocol.txt "no pressure column" "nocol.txt:1: no pressure" "# columns: altitude_m temperature_K" \
  "0 288.15" "1000 281.65" "2000 275.15"

# Bad CF netCDF profiles made with ncgen from variants of tests/atmos_column.cdl.
cdl="$src/tests/atmos_column.cdl"
ncbad() { # ncbad NAME "what" "expected message" SED-SCRIPT
  sed "$4" "$cdl" > "$SL_TMP/$1.cdl" && ncgen -o "$SL_TMP/$1.nc" "$SL_TMP/$1.cdl"
  sl_expect_exit 65 "$2" "$SL_BIN" atmos "$SL_TMP/$1.nc" --summary
  sl_expect_grep "$SL_TMP/err" "$3" "$2: message"
}
sl_expect_exit 0 "good netCDF column" sh -c "ncgen -o '$SL_TMP/good.nc' '$cdl' && '$SL_BIN' atmos '$SL_TMP/good.nc' --at 5578.89 --json"
sl_expect_grep "$SL_TMP/out" '"pressure_Pa": 5000[0-9]' "netCDF column: 500 hPa at its level"
ncbad units "netCDF wrong units" "variable 't' (air_temperature): units 'degF' not understood" 's/t:units = "K"/t:units = "degF"/'
ncbad nan "netCDF NaN" "variable 'z' (geopotential_height) index 3: not a finite number" 's/ z = 31055, 20576, 16180, 11784/ z = 31055, 20576, 16180, NaN/'
ncbad fill "netCDF missing value" "variable 't' (air_temperature) index 7: missing value" 's/-2200, 200, 3100, 3800/-2200, 200, 3100, -32767/'
ncbad nostd "netCDF no temperature" "no variable with standard_name air_temperature" '/t:standard_name/d'
ncbad order "netCDF non-monotonic" "variable 'z' index 3: altitude .* strictly" 's/11784, 9164/9164, 11784/'
# Site-aware defaults (site.c): a tropical site without an atmosphere or
# sea-surface key runs on the tropical profile with the zonal-mean sea surface
# of Neale & Hoskins (2000, "Qobs"), and the summary says so and why.
printf '[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 8\nmonth = 2\n' > "$SL_TMP/tropic.ini"
sl_expect_exit 0 "run a tropical site without atmosphere key" "$SL_BIN" run "$SL_TMP/tropic.ini"
sl_expect_grep "$SL_TMP/out" "^ *atmosphere, sea surface  *tropical, " "tropical profile chosen"
sl_expect_grep "$SL_TMP/out" "^ *site defaults .*tropical (all year).*Neale & Hoskins 2000 Qobs" "summary says which and why"
sl_expect_exit 0 "run a tropical site (JSON)" "$SL_BIN" run "$SL_TMP/tropic.ini" --json
sl_expect_grep "$SL_TMP/out" '"site_defaults": "no atmosphere given' "JSON site_defaults"
# A user column that ends low (1 hPa, ~48 km, as a reanalysis column does) is
# joined at its top onto the best-matching climate zone: `run` and `decay`
# work with it (decay needs 50 km), the summary and the outputs record the join.
"$SL_BIN" atmos tropical --csv | awk -F, 'NR == 1 || $1 <= 48000' > "$SL_TMP/low.csv"
printf '[explosion]\nenergy_Mt = 5\n[site]\nlatitude_deg = 3\natmosphere = low.csv\n' > "$SL_TMP/low.ini"
sl_expect_exit 0 "run with a column ending at 48 km" "$SL_BIN" run "$SL_TMP/low.ini"
sl_expect_grep "$SL_TMP/out" "^ *site defaults .*ends at 48.0 km and is joined there onto tropical" "summary says the join"
sl_expect_exit 0 "run low column with outputs" "$SL_BIN" --force run "$SL_TMP/low.ini" -o "$SL_TMP/low.nc" --csv "$SL_TMP/lowcsv"
sl_expect_exit 0 "ncdump of the run" ncdump -h "$SL_TMP/low.nc"
sl_expect_grep "$SL_TMP/out" "background_atmosphere_join_altitude_m = 48000" "netCDF records the join height"
sl_expect_grep "$SL_TMP/lowcsv/background.csv" "^# join_altitude_km 48: " "CSV background records the join height"
sl_expect_exit 0 "decay with a column ending at 48 km" "$SL_BIN" decay --atmosphere "$SL_TMP/low.csv" \
  --inject 1e10 --between 20000 25000 --latitude 0
sl_expect_exit 0 "atmos --summary of the low column" "$SL_BIN" atmos "$SL_TMP/low.csv" --summary
sl_expect_grep "$SL_TMP/out" "^top_altitude_m  *1000000" "joined column reaches 1000 km"

# --at with a pressure (hPa or Pa): the level of that pressure.
sl_expect_exit 0 "atmos --at 10hPa" "$SL_BIN" atmos --at 10hPa us1976
sl_expect_grep "$SL_TMP/out" "^pressure_Pa  *1000$" "10 hPa found"
# 31.21 km: log-interpolated between the standard's 1197.0 Pa at 30 km and 889.06 Pa at 32 km
# (USSA76 table values, DERIVED; the 10 m window is the log-linear interpolation's error)
sl_expect_grep "$SL_TMP/out" "^altitude_m  *312[01][0-9]\." "10 hPa at 31.2 km in the standard"
sl_expect_exit 0 "atmos --at 101325Pa" "$SL_BIN" atmos --at 101325Pa us1976 --json
sl_expect_grep "$SL_TMP/out" '"temperature_K": 288.15' "sea-level pressure at the surface"
sl_expect_exit 65 "--at pressure outside the profile" "$SL_BIN" atmos --at 2000hPa us1976
sl_expect_grep "$SL_TMP/err" "pressure 200000 Pa is outside atmosphere profile 'us1976'" "pressure out-of-range message"
sl_expect_exit 64 "--at negative pressure" "$SL_BIN" atmos --at -5hPa us1976
sl_done
