#!/bin/sh
# Bad inputs across every format and command: each gets its documented exit
# code (README, Exit codes), exactly one message (a usage error may add the
# "Try ... --help" hint), and the message names what the rule says a
# rejection names: the file, the line (or netCDF variable), the key, column
# or option, and the valid range or form.  The rules for text and netCDF
# inputs are in include/steamloft/infile.h.
. "$SL_SRCDIR/tests/cli/lib.inc"
T=$SL_TMP
command -v ncgen >/dev/null 2>&1 && have_ncgen=1 || have_ncgen=0

# bad CODE WHAT 'FRAG1|FRAG2|...' CMD ARGS...: every fragment (fixed string)
# must be in the message.
bad() {
  want=$1; what=$2; frags=$3; shift 3
  "$@" >"$T/out" 2>"$T/err" </dev/null; got=$?
  why=""
  [ "$got" -eq "$want" ] || why="exit $got, want $want"
  n=$(grep -cv "^Try '" "$T/err")
  [ "$n" -eq 1 ] || why="$why; $n message lines"
  old_ifs=$IFS; IFS='|'
  for f in $frags; do
    grep -qF -- "$f" "$T/err" || why="$why; message lacks '$f'"
  done
  IFS=$old_ifs
  if [ -z "$why" ]; then sl_ok "$what (exit $got)"; else
    sl_fail "$what: $why"; sed 's/^/#   /' "$T/err" | head -3; fi
}

# ---------------------------------------------------------------- scenarios
# base.ini: line 2 diameter, 3 density, 4 speed, 5 angle, 7 latitude.
scen() { # scen NAME LINE2 LINE3 LINE4 LINE5 LINE7
  printf '[impactor]\n%s\n%s\n%s\n%s\n[site]\n%s\n' "$2" "$3" "$4" "$5" "$6" >"$T/$1"
}
D='diameter_m = 300'; R='density_kg_m3 = 2700'; S='speed_km_s = 18'; A='angle_deg = 45'; L='latitude_deg = 10'
for v in 0.01 30000 0xC8 inf nan -5 1e999 '300 m' 3e '300 # note' 0x1p8 '' '+' 1,5 ; do
  scen d.ini "diameter_m = $v" "$R" "$S" "$A" "$L"
  bad 65 "run: diameter_m = '$v'" "d.ini:2|diameter_m|0.1 to 20000 m" "$SL_BIN" run "$T/d.ini"
done
for v in 5 80 fast 'uniform(12, 30)' NaN; do
  scen s.ini "$D" "$R" "speed_km_s = $v" "$A" "$L"
  bad 65 "run: speed_km_s = '$v'" "s.ini:4|speed_km_s|11 to 73 km/s" "$SL_BIN" run "$T/s.ini"
done
for v in 0 95 -45 4.9; do
  scen a.ini "$D" "$R" "$S" "angle_deg = $v" "$L"
  bad 65 "run: angle_deg = '$v'" "a.ini:5|angle_deg|5 to 90" "$SL_BIN" run "$T/a.ini"
done
for v in 100 10000 0x10; do
  scen r.ini "$D" "density_kg_m3 = $v" "$S" "$A" "$L"
  bad 65 "params: density_kg_m3 = '$v'" "r.ini:3|density_kg_m3|300 to 9000" "$SL_BIN" params "$T/r.ini"
done
for v in 91 -91 infinity; do
  scen l.ini "$D" "$R" "$S" "$A" "latitude_deg = $v"
  bad 65 "run: latitude_deg = '$v'" "l.ini:7|latitude_deg|-90 to 90" "$SL_BIN" run "$T/l.ini"
done
for v in 0 1e6 -1 0x10; do
  printf '[explosion]\nenergy_Mt = %s\n[site]\nlatitude_deg = 0\n' "$v" >"$T/x.ini"
  bad 65 "run: energy_Mt = '$v'" "x.ini:2|energy_Mt|0.0001 to 100000" "$SL_BIN" run "$T/x.ini"
done
for v in 90000 -10; do
  printf '[explosion]\nenergy_Mt = 1\naltitude_m = %s\n[site]\nlatitude_deg = 0\n' "$v" >"$T/x.ini"
  bad 65 "run: altitude_m = '$v'" "x.ini:3|altitude_m|0 to 80000" "$SL_BIN" run "$T/x.ini"
done
printf '[site]\nlatitude_deg = 0\natmosphere = tropicall\n[explosion]\nenergy_Mt = 1\n' >"$T/atm.ini"
bad 66 "run: unknown atmosphere name" "tropicall|us1976" "$SL_BIN" run "$T/atm.ini"
# Syntax (exit 78).
printf '[impactr]\ndiameter_m = 300\n' >"$T/sec.ini"
bad 78 "unknown section (named at its first key)" "sec.ini:2|[impactr]|[impactor]" "$SL_BIN" run "$T/sec.ini"
printf '[impactor]\ndiametre_m = 300\n' >"$T/key.ini"
bad 78 "unknown key" "key.ini:2|diametre_m|diameter_m" "$SL_BIN" run "$T/key.ini"
printf '[impactor]\ndiameter_m = 300\ndiameter_m = 400\n' >"$T/dup.ini"
bad 78 "duplicate key" "dup.ini:3|diameter_m|line 2" "$SL_BIN" run "$T/dup.ini"
printf 'diameter_m = 300\n[impactor]\n' >"$T/nosec.ini"
bad 78 "key before any section" "nosec.ini:1|diameter_m|[section]" "$SL_BIN" run "$T/nosec.ini"
printf '[impactor]\nthis is not ini\n' >"$T/syn.ini"
bad 78 "not key = value" "syn.ini:2|key = value" "$SL_BIN" run "$T/syn.ini"
printf '[impactor]\ndiameter_m = %0250d\n' 1 >"$T/longl.ini"
bad 78 "line over 196 characters of content" "longl.ini:2|196 characters" "$SL_BIN" run "$T/longl.ini"
printf '[impactor]\ndiameter_m = 3\0000\n' >"$T/nul.ini"
bad 78 "NUL byte in a scenario" "nul.ini|NUL" "$SL_BIN" run "$T/nul.ini"
head -c 1100000 /dev/zero | tr '\0' ';' >"$T/big.ini"
bad 78 "scenario over 1 MiB" "big.ini|1048576 bytes" "$SL_BIN" run "$T/big.ini"
bad 66 "missing scenario" "nowhere.ini" "$SL_BIN" run "$T/nowhere.ini"
mkdir -p "$T/dir.ini"
bad 66 "a directory as scenario" "dir.ini|directory" "$SL_BIN" run "$T/dir.ini"
# Distributions (ensemble).
ens() { printf '[impactor]\ndiameter_m = %s\ndensity_kg_m3 = 2700\nspeed_km_s = 18\nangle_deg = 45\n[site]\nlatitude_deg = 0\n' "$1" >"$T/e.ini"; }
ens 'unifrom(100, 300)'
bad 65 "ensemble: misspelled law" "e.ini:2|diameter_m|'unifrom' is not a distribution law|uniform(a, b)" "$SL_BIN" ensemble "$T/e.ini" -n 4
ens 'lognormel(300, 0.3)'
bad 65 "ensemble: misspelled lognormal" "e.ini:2|diameter_m|'lognormel' is not a distribution law" "$SL_BIN" ensemble "$T/e.ini" -n 4
ens 'normal(300)'
bad 65 "ensemble: normal with one argument" "e.ini:2|diameter_m|normal(mean, sd)" "$SL_BIN" ensemble "$T/e.ini" -n 4
ens 'uniform(0x10, 300)'
bad 65 "ensemble: hex in a law" "e.ini:2|diameter_m|0x10" "$SL_BIN" ensemble "$T/e.ini" -n 4
ens 'uniform(300, 100)'
bad 65 "ensemble: uniform reversed" "e.ini:2|diameter_m" "$SL_BIN" ensemble "$T/e.ini" -n 4
ens 'choice()'
bad 65 "ensemble: empty choice" "e.ini:2|diameter_m|choice" "$SL_BIN" ensemble "$T/e.ini" -n 4
ens 'uniform(100, 50000)'
bad 65 "ensemble: law beyond the key's range" "diameter_m|0.1 to 20000" "$SL_BIN" ensemble "$T/e.ini" -n 4

# ---------------------------------------------------------- command line
E="$SL_SRCDIR/examples"
bad 64 "unknown option" "--bogus" "$SL_BIN" run "$E/demo.ini" --bogus
bad 64 "option without its value" "-o" "$SL_BIN" run "$E/demo.ini" -o
bad 64 "--set without =" "--set|SECTION.KEY=VALUE" "$SL_BIN" run --set impactor.diameter_m "$E/demo.ini"
bad 64 "--set unknown key" "--set|impactor.diametre_m" "$SL_BIN" run --set impactor.diametre_m=3 "$E/demo.ini"
bad 65 "--set value out of range" "--set|impactor.diameter_m|0.1 to 20000" "$SL_BIN" run --set impactor.diameter_m=1e6 "$E/demo.ini"
bad 65 "--set hex value" "--set|impactor.diameter_m|0x10" "$SL_BIN" run --set impactor.diameter_m=0x10 "$E/demo.ini"
bad 64 "--members 0" "--members|1 to 10000000" "$SL_BIN" ensemble "$E/ensemble-stony.ini" -n 0
bad 64 "--members above the maximum" "--members|1 to 10000000" "$SL_BIN" ensemble "$E/ensemble-stony.ini" -n 10000001
bad 64 "--members not a number" "--members|1 to 10000000" "$SL_BIN" ensemble "$E/ensemble-stony.ini" -n many
bad 64 "decay --inject 1e300" "--inject|5e17 kg" "$SL_BIN" decay --inject 1e300 --between 20000 30000 --latitude 0
bad 64 "decay --inject negative" "--inject|5e17 kg" "$SL_BIN" decay --inject -5 --between 20000 30000 --latitude 0
bad 64 "decay --inject hex" "--inject|0x10|decimal" "$SL_BIN" decay --inject 0x10 --between 20000 30000 --latitude 0
bad 64 "decay --inject inf" "--inject|inf|decimal" "$SL_BIN" decay --inject inf --between 20000 30000 --latitude 0
bad 64 "decay --latitude 91" "--latitude|-90" "$SL_BIN" decay --inject 1e9 --between 20000 21000 --latitude 91
bad 64 "decay --month 13" "--month|12" "$SL_BIN" decay --month 13 --inject 1e9 --between 20000 21000 --latitude 0
bad 64 "decay --between reversed" "--between" "$SL_BIN" decay --inject 1e9 --between 21000 20000 --latitude 0
bad 64 "decay: profile and --inject together" "PROFILE|--inject" "$SL_BIN" decay "$E/injection-profile.csv" --inject 1e9 --between 20000 21000
bad 64 "atmos --at garbage" "--at|hPa" "$SL_BIN" atmos --at high us1976
bad 64 "unknown command" "frobnicate" "$SL_BIN" frobnicate

# ------------------------------------------------------ atmosphere text files
atm() { printf '# columns: altitude_m temperature_K pressure_Pa\n0 288 101325\n%s\n2000 275 79495\n' "$1" >"$T/$2"; }
for v in '1000 nan 89874' '1000 281 0xC8' '1000 inf 89874' '1000 281 8.9e4x' '1000 281' '1000 281 89874 5'; do
  atm "$v" at.txt
  bad 65 "atmos: level '$v'" "at.txt:3" "$SL_BIN" atmos "$T/at.txt"
done
atm '1000 20 89874' at.txt
bad 65 "atmos: temperature 20 K" "at.txt:3|temperature|50 to 2000 K" "$SL_BIN" atmos "$T/at.txt"
atm '1000 281 -5' at.txt
bad 65 "atmos: negative pressure" "at.txt:3|pressure" "$SL_BIN" atmos "$T/at.txt"
atm '1000 281 200000' at.txt
bad 65 "atmos: pressure rising with height" "at.txt|pressure" "$SL_BIN" atmos "$T/at.txt"
printf '# columns: altitude_m temperature_K pressure_hpa\n0 288 1013\n' >"$T/col.txt"
bad 65 "atmos: unknown column" "col.txt:1|pressure_hpa|pressure_hPa" "$SL_BIN" atmos "$T/col.txt"
printf '# columns: altitude_m temperature_K\n0 288\n' >"$T/col2.txt"
bad 65 "atmos: no pressure column" "col2.txt:1|pressure (pressure_Pa, pressure_hPa)" "$SL_BIN" atmos "$T/col2.txt"
printf '0 288 101325\n' >"$T/nocol.txt"
bad 65 "atmos: data before columns" "nocol.txt:1|columns" "$SL_BIN" atmos "$T/nocol.txt"
printf '# columns: altitude_m temperature_K pressure_Pa\n0 288 101325\n1000 281 89874\n' >"$T/two.txt"
bad 65 "atmos: two levels" "two.txt|at least 3" "$SL_BIN" atmos "$T/two.txt"
printf '# columns: altitude_m temperature_K pressure_Pa\n0 288 1013\00025\n' >"$T/nul.txt"
bad 65 "atmos: NUL byte" "nul.txt:2|NUL" "$SL_BIN" atmos "$T/nul.txt"
{ printf '# columns: altitude_m temperature_K pressure_Pa\n0 288 101325 '; head -c 5000 /dev/zero | tr '\0' ' '; printf 'x\n'; } >"$T/longa.txt"
bad 65 "atmos: line over 4096 characters" "longa.txt:2|4096 characters" "$SL_BIN" atmos "$T/longa.txt"
truncate -s 17M "$T/huge.txt"
bad 65 "atmos: file over the 16 MiB cap" "huge.txt|16777216 bytes" "$SL_BIN" atmos "$T/huge.txt"
mkdir -p "$T/adir"
bad 66 "atmos: a directory" "adir" "$SL_BIN" atmos "$T/adir"

# ------------------------------------------------------ injection CSV files
inj() { printf 'bottom_km,top_km,vapor_Tg\n%s\n' "$1" >"$T/$2"; }
for v in '18,19,0xC8' '18,19,nan' '18,19,inf' '18,19,' '18,19,1Tg' '18,19,1e999'; do
  inj "$v" i.csv
  bad 65 "decay: row '$v'" "i.csv:2|column 3 (vapor)" "$SL_BIN" decay "$T/i.csv"
done
inj '18,19,-1' i.csv
bad 65 "decay: negative mass" "i.csv:2|vapor|0 to inf" "$SL_BIN" decay "$T/i.csv"
inj '18,2000,1' i.csv
bad 65 "decay: top above 1000 km" "i.csv:2|top|0 to 1e+06 m" "$SL_BIN" decay "$T/i.csv"
inj '19,18,1' i.csv
bad 65 "decay: top below bottom" "i.csv:2|top" "$SL_BIN" decay "$T/i.csv"
inj '18,19,1,2' i.csv
bad 65 "decay: too many fields" "i.csv:2|4 fields|3 columns" "$SL_BIN" decay "$T/i.csv"
printf 'bottom_km,top_km,vapor_Tg\n18,19,1\n20,21,1\n' >"$T/gap.csv"
bad 65 "decay: bands not contiguous" "gap.csv:3|contiguous" "$SL_BIN" decay "$T/gap.csv"
printf 'bottom_km,top_km,water_Tg\n18,19,1\n' >"$T/hdr.csv"
bad 65 "decay: unknown column" "hdr.csv:1|water_Tg|vapor_kg" "$SL_BIN" decay "$T/hdr.csv"
printf 'bottom_km,vapor_Tg\n18,1\n' >"$T/hdr2.csv"
bad 65 "decay: no top column" "hdr2.csv:1|top|top_km" "$SL_BIN" decay "$T/hdr2.csv"
printf '# latitude_deg = 95\nbottom_km,top_km,vapor_Tg\n18,19,1\n' >"$T/meta.csv"
bad 65 "decay: metadata out of range" "meta.csv:1|latitude_deg|-90 to 90" "$SL_BIN" decay "$T/meta.csv"
printf '# latitude_dg = 5\nbottom_km,top_km,vapor_Tg\n18,19,1\n' >"$T/meta2.csv"
bad 65 "decay: misspelled metadata key" "meta2.csv:1|latitude_dg|latitude_deg" "$SL_BIN" decay "$T/meta2.csv"
printf '# time_days = 0x5\nbottom_km,top_km,vapor_Tg\n18,19,1\n' >"$T/meta3.csv"
bad 65 "decay: hex metadata" "meta3.csv:1|time_days|0 to 100000" "$SL_BIN" decay "$T/meta3.csv"
printf '# only comments\n' >"$T/empty.csv"
bad 65 "decay: no header" "empty.csv|header" "$SL_BIN" decay "$T/empty.csv"
printf 'bottom_km,top_km,vapor_Tg\n' >"$T/nob.csv"
bad 65 "decay: no bands" "nob.csv|bands" "$SL_BIN" decay "$T/nob.csv"
printf 'bottom_km,top_km,vapor_Tg\n18,19,1\0\n' >"$T/nul.csv"
bad 65 "decay: NUL byte" "nul.csv:2|NUL" "$SL_BIN" decay "$T/nul.csv"
truncate -s 17M "$T/huge.csv"
bad 65 "decay: file over the 16 MiB cap" "huge.csv|16777216 bytes" "$SL_BIN" decay "$T/huge.csv"
mkdir -p "$T/idir"
bad 66 "decay: a directory as injection file" "idir|directory" "$SL_BIN" decay "$T/idir"
bad 66 "decay: missing injection file" "none.csv" "$SL_BIN" decay "$T/none.csv"

# ---------------------------------------------------------- netCDF inputs
if [ "$have_ncgen" -eq 0 ]; then
  sl_skip "ncgen (netcdf-bin) missing: netCDF bad inputs not made"
else
  # nc NAME 'DIMS' 'VARS' 'DATA': a CDL file made into NAME.nc.
  nc() { printf 'netcdf x {\ndimensions:\n%s\nvariables:\n%s\ndata:\n%s\n}\n' "$2" "$3" "$4" >"$T/$1.cdl"
         ncgen -o "$T/$1.nc" "$T/$1.cdl"; }
  DIMS='altitude = 2 ; nv = 2 ; longer = 40 ;'
  ZV='double altitude(altitude) ; altitude:units = "m" ; altitude:bounds = "altitude_bnds" ;'
  BV='double altitude_bnds(altitude, nv) ;'
  MV='double vapor_mass(altitude) ; vapor_mass:units = "kg" ;'
  ZD='altitude = 500, 1500 ;'; BD='altitude_bnds = 0, 1000, 1000, 2000 ;'; MD='vapor_mass = 1, 2 ;'
  nc alt2d "$DIMS" 'double altitude(altitude, nv) ; altitude:units = "m" ; altitude:bounds = "altitude_bnds" ;'" $BV $MV" "altitude = 1, 2, 3, 4 ; $BD $MD"
  bad 65 "injection nc: 2-D altitude (was a heap overflow)" "alt2d.nc|netCDF variable altitude|altitude(altitude)" "$SL_BIN" decay "$T/alt2d.nc"
  seq40=$(seq -s, 1 40)
  nc altlong "$DIMS" 'double altitude(longer) ; altitude:units = "m" ; altitude:bounds = "altitude_bnds" ;'" $BV $MV" "altitude = $seq40 ; $BD $MD"
  bad 65 "injection nc: altitude on a longer dimension (was a heap overflow)" "altlong.nc|netCDF variable altitude|altitude(altitude)" "$SL_BIN" decay "$T/altlong.nc"
  nc nomass "$DIMS" "$ZV $BV" "$ZD $BD"
  bad 65 "injection nc: no vapor_mass" "nomass.nc|vapor_mass" "$SL_BIN" decay "$T/nomass.nc"
  nc units "$DIMS" 'double altitude(altitude) ; altitude:units = "feet" ; altitude:bounds = "altitude_bnds" ;'" $BV $MV" "$ZD $BD $MD"
  bad 65 "injection nc: altitude in feet" "units.nc|altitude|feet|m, km" "$SL_BIN" decay "$T/units.nc"
  nc nob "$DIMS" 'double altitude(altitude) ; altitude:units = "m" ;'" $MV" "$ZD $MD"
  bad 65 "injection nc: no bounds" "nob.nc|altitude|bounds" "$SL_BIN" decay "$T/nob.nc"
  nc bshape "$DIMS" "$ZV"' double altitude_bnds(altitude) ;'" $MV" "$ZD altitude_bnds = 0, 1 ; $MD"
  bad 65 "injection nc: bounds of the wrong shape" "bshape.nc|altitude_bnds|(altitude, 2)" "$SL_BIN" decay "$T/bshape.nc"
  nc neg "$DIMS" "$ZV $BV $MV" "$ZD $BD vapor_mass = 1, -2 ;"
  bad 65 "injection nc: negative mass" "neg.nc|vapor_mass[1]|>= 0" "$SL_BIN" decay "$T/neg.nc"
  nc mshape "$DIMS" "$ZV $BV"' double vapor_mass(longer) ; vapor_mass:units = "kg" ;' "$ZD $BD vapor_mass = $seq40 ;"
  bad 65 "injection nc: mass on another dimension" "mshape.nc|vapor_mass|altitude" "$SL_BIN" decay "$T/mshape.nc"
  nc lat "$DIMS" "$ZV $BV $MV"' double latitude ; latitude:units = "degrees_north" ;' "$ZD $BD $MD latitude = 100 ;"
  bad 65 "injection nc: latitude out of range" "lat.nc|latitude|-90 to 90" "$SL_BIN" decay "$T/lat.nc"
  nc good "$DIMS" "$ZV $BV $MV" "$ZD $BD $MD"
  # Damage the header of a valid file: the dimension count (bytes 13-16).
  cp "$T/good.nc" "$T/dmg.nc"
  printf '\177\377\377\360' | dd of="$T/dmg.nc" bs=1 seek=12 conv=notrunc 2>/dev/null
  bad 65 "injection nc: damaged header" "dmg.nc|damaged netCDF file|does not fit" "$SL_BIN" decay "$T/dmg.nc"
  head -c 200 "$T/good.nc" >"$T/cut.nc"
  bad 65 "injection nc: truncated file" "cut.nc|netCDF" "$SL_BIN" decay "$T/cut.nc"
  printf 'CDF\001garbage' >"$T/garb.nc"
  bad 65 "injection nc: garbage after the magic" "garb.nc|netCDF" "$SL_BIN" decay "$T/garb.nc"
  # Atmosphere netCDF.
  AD='level = 3 ;'
  AT='double z(level) ; z:standard_name = "altitude" ; z:units = "m" ; double t(level) ; t:standard_name = "air_temperature" ; t:units = "K" ;'
  AP='double p(level) ; p:standard_name = "air_pressure" ; p:units = "Pa" ;'
  ADATA='z = 0, 1000, 2000 ; t = 288, 281, 275 ; p = 101325, 89874, 79495 ;'
  nc anop "$AD" "$AT" 'z = 0, 1000, 2000 ; t = 288, 281, 275 ;'
  bad 65 "atmosphere nc: no air_pressure" "anop.nc|air_pressure" "$SL_BIN" atmos "$T/anop.nc"
  nc aunit "$AD" "$AT"' double p(level) ; p:standard_name = "air_pressure" ; p:units = "psi" ;' "$ADATA"
  bad 65 "atmosphere nc: pressure in psi" "aunit.nc|'p'|psi|Pa, hPa or kPa" "$SL_BIN" atmos "$T/aunit.nc"
  nc afill "$AD" "$AT"' double p(level) ; p:standard_name = "air_pressure" ; p:units = "Pa" ; p:_FillValue = -1. ;' 'z = 0, 1000, 2000 ; t = 288, 281, 275 ; p = 101325, _, 79495 ;'
  bad 65 "atmosphere nc: missing value" "afill.nc|'p'|index 1|missing value" "$SL_BIN" atmos "$T/afill.nc"
  nc a2d 'level = 3 ; x = 2 ;' 'double z(level) ; z:standard_name = "altitude" ; z:units = "m" ; double t(level, x) ; t:standard_name = "air_temperature" ; t:units = "K" ;'" $AP" 'z = 0, 1000, 2000 ; t = 288, 288, 281, 281, 275, 275 ; p = 101325, 89874, 79495 ;'
  bad 65 "atmosphere nc: 2-D temperature" "a2d.nc|'t'|one column" "$SL_BIN" atmos "$T/a2d.nc"
  nc acold "$AD" "$AT $AP" 'z = 0, 1000, 2000 ; t = 288, 2.81, 275 ; p = 101325, 89874, 79495 ;'
  bad 65 "atmosphere nc: temperature in wrong units" "acold.nc|temperature|50 to 2000 K" "$SL_BIN" atmos "$T/acold.nc"
  nc agood "$AD" "$AT $AP" "$ADATA"
  cp "$T/agood.nc" "$T/admg.nc"
  printf '\177\377\377\360' | dd of="$T/admg.nc" bs=1 seek=12 conv=notrunc 2>/dev/null
  bad 65 "atmosphere nc: damaged header" "admg.nc|damaged netCDF file" "$SL_BIN" atmos "$T/admg.nc"
fi

# ------------------------------------------------------------ tabulate
printf 'impactor.diameter_m,impactor.density_kg_m3,impactor.speed_km_s,impactor.angle_deg,site.latitude_deg\n300,2700,18,45,0\n0x10,2700,18,45,0\n' >"$T/rows.csv"
"$SL_BIN" tabulate "$T/rows.csv" >"$T/out" 2>"$T/err"; rc=$?
if [ "$rc" -ne 0 ] && grep -qF "0x10" "$T/out" "$T/err" && grep -qF "rows.csv" "$T/out" "$T/err"; then
  sl_ok "tabulate: a hex value in a CSV row is refused, naming the file (exit $rc)"
else sl_fail "tabulate: hex value: exit $rc"; sed 's/^/#   /' "$T/err" | head -3; fi
sl_done
