#!/bin/sh
# One JSON writer (include/steamloft/json.h, src/output_json.c): the JSON of
# every command parses with Python's json module (an independent reader),
# holds only finite numbers (NaN must come out as null, RFC 8259 has no NaN),
# and escapes awkward text (quotes, backslashes, control characters, bytes
# that are not UTF-8) into valid JSON; and no other JSON writer exists in
# src/ (a grep for what hand-written JSON looks like: a quoted key in a C
# string, the \u00XX escape, a literal null).
. "$(dirname "$0")/lib.inc"
EX=${SL_SRCDIR:-.}/examples
SRC=${SL_SRCDIR:-.}/src
PY=/usr/bin/python3
[ -x "$PY" ] || { echo "# SKIP /usr/bin/python3 missing"; exit 77; }

# parses FILE "what": strict JSON (no NaN/Infinity), one top-level object.
parses() {
  if $PY - "$1" >"$SL_TMP/py" 2>&1 <<'PYEOF'
import json, sys
def bad(c):
    raise ValueError("non-finite number " + c)
d = json.load(open(sys.argv[1], encoding="utf-8"), parse_constant=bad)
assert isinstance(d, dict) and d, "want a non-empty object"
PYEOF
  then sl_ok "$2: JSON parses"; else sl_fail "$2: JSON does not parse"; sed 's/^/#   /' "$SL_TMP/py" | tail -3; fi
}
json_of() { # json_of "what" cmd args...: run it (exit 0), check the JSON it printed
  what=$1; shift
  sl_expect_exit 0 "$what" "$@"
  parses "$SL_TMP/out" "$what"
}

json_of "run (impactor)" "$SL_BIN" run --json "$EX/ocean-stony-300m.ini"
json_of "run (explosion)" "$SL_BIN" run --json "$EX/explosion-surface-burst.ini"
json_of "run (nothing injected: NaN members)" "$SL_BIN" run --json "$EX/airburst-small.ini"
grep -q '": null' "$SL_TMP/out" && sl_ok "NaN written as null" || sl_fail "no null in a run with NaN members"
json_of "decay (profile)" "$SL_BIN" decay --json "$EX/injection-profile.csv"
json_of "decay (single layer)" "$SL_BIN" decay --json --inject 1e10 --between 20000 25000 --latitude 10
json_of "atmos list" "$SL_BIN" atmos list --json
json_of "atmos profile" "$SL_BIN" atmos --json tropical
json_of "atmos --at" "$SL_BIN" atmos --json --at 10hPa us1976
json_of "atmos --summary" "$SL_BIN" atmos --json --summary us1976
json_of "tabulate" "$SL_BIN" tabulate --json "$EX/ocean-stony-300m.ini" "$EX/explosion-surface-burst.ini"
json_of "ensemble" "$SL_BIN" ensemble --json -n 4 -j 1 --no-progress "$EX/ensemble-stony.ini"

# Awkward text reaches the JSON through a scenario name and a failing row's
# reason: quotes, a backslash, a tab, and a Latin-1 byte that is not UTF-8.
printf '[scenario]\nname = q"uo\\te\tx\351y\n[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\n' >"$SL_TMP/odd.ini"
json_of "tabulate with awkward text" "$SL_BIN" tabulate --json "$SL_TMP/odd.ini"
if $PY - "$SL_TMP/out" <<'PYEOF'
import json, sys
d = json.load(open(sys.argv[1], encoding="utf-8"))
name = d["scenarios"][0]["name"]
assert name == 'q"uo\\te\tx\ufffdy', repr(name)
PYEOF
then sl_ok "quotes, backslash, tab kept; the stray byte is U+FFFD"; else sl_fail "awkward text not escaped as wanted"; fi

# One writer (the ensemble summary goes through sl_report on json.h too).
ALLOW="output_json.c"
found=""
for f in "$SRC"/*.c; do
  b=$(basename "$f")
  case " $ALLOW " in *" $b "*) continue ;; esac
  if grep -nE '\\u%04x|"null"|\\"[A-Za-z_0-9]+\\": ?' "$f" >"$SL_TMP/hits"; then
    found="$found $b"; sed "s|^|#   $b:|" "$SL_TMP/hits" | head -3
  fi
done
[ -z "$found" ] && sl_ok "one JSON writer: no hand-written JSON in src/ outside output_json.c" \
  || sl_fail "hand-written JSON in:$found"
# The grep itself can find a writer (it would miss everything if broken).
if grep -qE '\\u%04x' "$SRC/output_json.c"; then sl_ok "the grep finds the writer itself"
else sl_fail "the one-writer grep finds nothing, not even output_json.c"; fi
sl_done
