#!/bin/sh
# Layers: the physics modules know nothing of the input layer or the
# commands.  Each physics source, with every header it pulls in, must not
# include scenario.h, stage_params.h, ensemble.h, cli.h or an output header;
# the scenario layer must not depend on the ensemble module.  The scenario
# becomes stage parameters in one place, src/stage_params.c.  PRACTICE: the
# project's own layering rule (DEVELOPERS.md).
. "$SL_SRCDIR/tests/cli/lib.inc"
cd "$SL_SRCDIR" || exit 1
if ! command -v cc >/dev/null 2>&1; then sl_skip "no C compiler for the dependency scan"; sl_done; exit $?; fi
physics="atmosphere atmosphere_file water entry partition plume injection strat"
flags="-D_GNU_SOURCE -Iinclude -Ibuild/gen $(pkg-config --cflags gsl netcdf 2>/dev/null)"
deps() { cc $flags -MM "$1" 2>"$SL_TMP/cc.err" | tr ' \\' '\n\n' | grep 'steamloft/' | sed 's|.*steamloft/||'; }
for m in $physics; do
  deps "src/$m.c" >"$SL_TMP/d"
  if [ ! -s "$SL_TMP/d" ]; then sl_fail "$m: dependency scan failed"; sed 's/^/#   /' "$SL_TMP/cc.err" | head -3; continue; fi
  bad=$(grep -E '^(scenario|stage_params|ensemble|dist|chain|cli|cmd|output[a-z_]*|plot|outfile)\.h$' "$SL_TMP/d" | tr '\n' ' ')
  if [ -z "$bad" ]; then sl_ok "physics module $m includes no input-layer or command header"
  else sl_fail "physics module $m includes $bad"; fi
done
deps src/scenario.c >"$SL_TMP/d"
if grep -q '^ensemble\.h$' "$SL_TMP/d"; then sl_fail "scenario.c depends on ensemble.h"
else sl_ok "the scenario layer does not depend on the ensemble module"; fi
# Scenario key IDs (SL_P_<SECTION>_...) appear in no physics source; the
# section names come from the table itself.
secs=$(awk '/#define SL_SCENARIO_SECTIONS/ {on=1; next} on && /X\(/ {sub(/.*X\(/, ""); sub(/,.*/, ""); print} on && !/\\$/ {on=0}' \
  include/steamloft/scenario.h | tr '\n' '|' | sed 's/|$//')
if [ -z "$secs" ]; then sl_fail "no sections found in scenario.h"; else
  hits=""
  for m in $physics; do grep -q -E "SL_P_($secs)_" "src/$m.c" && hits="$hits $m.c"; done
  if [ -z "$hits" ]; then sl_ok "no physics source reads a scenario key"
  else sl_fail "scenario keys read in$hits"; fi
fi
sl_done
