#!/bin/sh
# `steamloft params`: the key list, the template, and checking a scenario file.
. "$(dirname "$0")/lib.inc"

sl_expect_exit 0 "params lists keys" "$SL_BIN" params
sl_expect_grep "$SL_TMP/out" "speed_km_s .*11 to 73 km/s" "params shows unit and range"
sl_expect_grep "$SL_TMP/out" "^\[explosion\]" "params shows the [explosion] section"
sl_expect_grep "$SL_TMP/out" "heat_fraction .*default 0.4" "params shows defaults"
sl_expect_grep "$SL_TMP/out" "Screening estimate" "params carries the caution"
sl_expect_exit 0 "params --ini" "$SL_BIN" params --ini
sl_expect_grep "$SL_TMP/out" "^diameter_m = $" "template leaves required keys to fill in"
sl_expect_exit 0 "params on the example" "$SL_BIN" params "$SL_SRCDIR/examples/ocean-stony-300m.ini"
sl_expect_grep "$SL_TMP/out" "impactor.strength_Pa .*derived" "derived strength is shown"
printf '[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\n' >"$SL_TMP/exp.ini"
sl_expect_exit 0 "params reads stdin" sh -c "'$SL_BIN' params - <'$SL_TMP/exp.ini'"
sl_expect_grep "$SL_TMP/out" "explosion.energy_Mt *1 *Mt TNT *file (line 2)" "stdin scenario resolved"
sl_expect_exit 66 "missing scenario file" "$SL_BIN" params "$SL_TMP/none.ini"
sl_expect_exit 64 "two files" "$SL_BIN" params a b
sl_done
