#!/bin/sh
# A one-off check that a numerical change leaves the physics alone (kept for
# the next one): runs the bench ensemble (examples/ensemble-stony.ini, seed 1)
# with an old and a new binary, and the old binary again with the plume's and
# the entry's relative tolerance halved, and compares the member files column
# by column (scripts/compare-members.py).  A change is within the solver's
# noise when it moves the outputs less than halving a tolerance does.
#   scripts/compare-physics.sh OLD_BIN NEW_BIN [MEMBERS]      (default 2000)
set -u
old=$1; new=$2; n=${3:-2000}
here=$(cd "$(dirname "$0")/.." && pwd)
scen="$here/examples/ensemble-stony.ini"
tmp=$(mktemp -d "${TMPDIR:-/tmp}/slcmp.XXXXXX")
trap 'rm -rf "$tmp"' EXIT
run() { # bin scenario out
  "$1" ensemble "$2" --members "$n" --seed 1 --threads 1 --no-progress -o "$3" >/dev/null 2>"$tmp/err" ||
    { echo "compare-physics: $1 failed:" >&2; cat "$tmp/err" >&2; exit 70; }
}
sed 's/^entrainment_coefficient.*/&\nrelative_tolerance = 5e-7/' "$scen" >"$tmp/plume_half.ini"
sed 's/^\[impactor\]/[entry]\nrelative_tolerance = 5e-9\n\n[impactor]/' "$scen" >"$tmp/entry_half.ini"
run "$old" "$scen" "$tmp/old.csv"
run "$new" "$scen" "$tmp/new.csv"
run "$old" "$tmp/plume_half.ini" "$tmp/old_plume_half.csv"
run "$old" "$tmp/entry_half.ini" "$tmp/old_entry_half.csv"
echo "== old -> new"; python3 "$here/scripts/compare-members.py" "$tmp/old.csv" "$tmp/new.csv"
echo "== old -> old with the plume tolerance halved"
python3 "$here/scripts/compare-members.py" "$tmp/old.csv" "$tmp/old_plume_half.csv"
echo "== old -> old with the entry tolerance halved"
python3 "$here/scripts/compare-members.py" "$tmp/old.csv" "$tmp/old_entry_half.csv"
exit 0
