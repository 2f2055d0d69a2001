#!/bin/sh
# `steamloft tabulate`: one row per scenario.  The numbers of every shipped
# example equal those of `run --json` on the same file (same keys, same
# full-precision text), a CSV table of rows with a base gives what `run
# --set` gives, failing scenarios keep their rows with the reason, and the
# output does not depend on the thread count.
. "$(dirname "$0")/lib.inc"
command -v /usr/bin/python3 >/dev/null 2>&1 || { echo "# SKIP: /usr/bin/python3 is needed to compare the JSON"; exit 77; }

mkdir -p "$SL_TMP/ex"
for f in "$SL_SRCDIR"/examples/*.ini; do
  case "$f" in */ensemble-*) continue ;; esac # distributions: for `steamloft ensemble`
  cp "$f" "$SL_TMP/ex/"
done
n_ex=$(ls "$SL_TMP/ex" | wc -l)

sl_expect_exit 0 "tabulate a folder of the shipped examples" "$SL_BIN" tabulate --json "$SL_TMP/ex"
cp "$SL_TMP/out" "$SL_TMP/tab.json"
for f in "$SL_TMP"/ex/*.ini; do "$SL_BIN" run --json "$f" >"$f.json" || sl_fail "run --json $(basename "$f")"; done
if /usr/bin/python3 - "$SL_TMP/tab.json" "$SL_TMP"/ex/*.ini <<'PY'
import json, sys
tab = json.load(open(sys.argv[1]))
rows = tab["scenarios"]
files = sys.argv[2:]
assert len(rows) == len(files), (len(rows), len(files))
keys = ("energy_J", "energy_at_sea_J", "strat_injected_kg", "stratospheric_water_kg",
        "stratospheric_ice_kg", "background_burden_kg", "percent_of_background", "efolding_years",
        "regime", "validity", "name", "kind")
for row, f in zip(rows, files):          # folder order = sorted file names = shell glob order
    run = json.load(open(f + ".json"))
    assert row["source"] == f, (row["source"], f)
    assert row["status"] == "ok", row
    for k in keys:
        assert row[k] == run[k], (f, k, row[k], run[k])
print("# %d examples: tabulate == run --json on %d keys each" % (len(rows), len(keys)))
PY
then sl_ok "every example's row equals run --json ($n_ex files)"; else sl_fail "tabulate differs from run --json"; fi

# Text: one row per scenario plus the headings and the caution.
sl_expect_exit 0 "tabulate text" "$SL_BIN" tabulate "$SL_TMP"/ex/*.ini
rows=$(grep -c -E '(impactor|explosion) +(thermal|blow-out|ballistic)' "$SL_TMP/out")
[ "$rows" -eq "$n_ex" ] && sl_ok "text has one row per scenario ($rows)" || sl_fail "text has $rows rows, want $n_ex"
cp "$SL_TMP/out" "$SL_TMP/table.txt"
demo_tg=$("$SL_BIN" run --json "$SL_SRCDIR/examples/demo.ini" 2>/dev/null | /usr/bin/python3 -c 'import json, sys; print("%.3g" % (json.load(sys.stdin)["stratospheric_water_kg"] / 1e9))')
sl_expect_grep "$SL_TMP/table.txt" "^demo .* blow-out .* $demo_tg " "the demo row shows its water above the tropopause ($demo_tg Tg, 3 significant figures of run --json)"
sl_expect_grep "$SL_TMP/table.txt" "Screening estimate" "the table carries the caution"

# The same for any number of threads.
"$SL_BIN" tabulate --csv -j 1 "$SL_TMP/ex" >"$SL_TMP/t1.csv" 2>/dev/null
"$SL_BIN" tabulate --csv --threads 2 "$SL_TMP/ex" >"$SL_TMP/t2.csv" 2>/dev/null
[ -s "$SL_TMP/t1.csv" ] && cmp -s "$SL_TMP/t1.csv" "$SL_TMP/t2.csv" && sl_ok "1 and 2 threads give the same CSV" \
  || sl_fail "thread count changes the output"

# A CSV table of scenarios on a base; one row out of range, one row malformed.
ex="$SL_SRCDIR/examples/ocean-stony-300m.ini"
cat >"$SL_TMP/risk.csv" <<'CSV'
# candidate bodies (invented)
name,impactor.diameter_m,impactor.speed_km_s,site.atmosphere,partition.method
c-120,120,21,,
c-250,250,,midlatitude-summer,budget
,250,5,,
"bad, row",1,2
CSV
sl_expect_exit 65 "a table with failing rows exits 65" "$SL_BIN" tabulate --csv --base "$ex" "$SL_TMP/risk.csv" "$SL_TMP/missing.ini"
cp "$SL_TMP/out" "$SL_TMP/risk.out"
sl_expect_grep "$SL_TMP/err" "2 of 5 scenarios failed\|3 of 5 scenarios failed" "stderr counts the failures"
"$SL_BIN" run --json --set impactor.diameter_m=250 --set site.atmosphere=midlatitude-summer \
  --set partition.method=budget "$ex" >"$SL_TMP/c250.json"
if /usr/bin/python3 - "$SL_TMP/risk.out" "$SL_TMP/c250.json" <<'PY'
import csv, json, sys
rows = list(csv.DictReader(l for l in open(sys.argv[1]) if not l.startswith("#")))
assert [r["name"] for r in rows] == ["c-120", "c-250", "risk-3", "risk-4", "missing"], [r["name"] for r in rows]
ok = {r["name"]: r for r in rows if r["status"] == "ok"}
assert set(ok) == {"c-120", "c-250"}, set(ok)
run = json.load(open(sys.argv[2]))
for k in ("energy_J", "energy_at_sea_J", "strat_injected_kg", "percent_of_background", "efolding_years"):
    assert float(ok["c-250"][k]) == run[k], (k, ok["c-250"][k], run[k])
assert ok["c-250"]["regime"] == run["regime"] and ok["c-250"]["validity"] == run["validity"]
assert float(ok["c-120"]["energy_J"]) < float(ok["c-250"]["energy_J"])
bad = {r["name"]: r for r in rows if r["status"] == "failed"}
assert "column impactor.speed_km_s: 5 is out of range (valid range: 11 to 73 km/s)" in bad["risk-3"]["reason"], bad["risk-3"]
assert bad["risk-3"]["exit"] == "65"
assert "3 fields, but the header has 5 columns" in bad["risk-4"]["reason"], bad["risk-4"]
assert "cannot open scenario file" in bad["missing"]["reason"] and bad["missing"]["exit"] == "66"
for r in bad.values():
    assert r["energy_J"] == "" and r["reason"], r
print("# table rows: c-250 == run --set, 3 failed rows kept with their reasons")
PY
then sl_ok "table rows equal run --set; failing rows keep their reasons"; else sl_fail "table rows"; fi

# --set applies to every scenario.
sl_expect_exit 0 "--set on tabulate" "$SL_BIN" tabulate --json --set site.ocean_depth_m=100 "$ex"
"$SL_BIN" run --json --set site.ocean_depth_m=100 "$ex" >"$SL_TMP/d100.json"
if /usr/bin/python3 - "$SL_TMP/out" "$SL_TMP/d100.json" <<'PY'
import json, sys
row = json.load(open(sys.argv[1]))["scenarios"][0]
run = json.load(open(sys.argv[2]))
assert row["strat_injected_kg"] == run["strat_injected_kg"] and row["energy_at_sea_J"] == run["energy_at_sea_J"]
PY
then sl_ok "tabulate --set equals run --set"; else sl_fail "tabulate --set"; fi

# Mistakes in the command itself.
printf 'name,impactor.colour\nx,3\n' >"$SL_TMP/badhead.csv"
sl_expect_exit 78 "a header with an unknown key" "$SL_BIN" tabulate "$SL_TMP/badhead.csv"
sl_expect_grep "$SL_TMP/err" "badhead.csv:1: column 2 'impactor.colour' is not a scenario key" "the bad column is named"
sl_expect_exit 64 "no input" "$SL_BIN" tabulate
sl_expect_exit 64 "--csv and --json together" "$SL_BIN" tabulate --csv --json "$ex"
sl_expect_exit 64 "--base without a table" "$SL_BIN" tabulate --base "$ex" "$ex"
mkdir -p "$SL_TMP/empty"
sl_expect_exit 66 "an empty folder" "$SL_BIN" tabulate "$SL_TMP/empty"
sl_done
