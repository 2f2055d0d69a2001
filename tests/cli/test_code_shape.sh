#!/bin/sh
# scripts/code-shape.sh (run by `make check`) passes on the tree, fails on a
# command file over 300 lines (cmd_ensemble.c included: no exemption), and
# names the longest function it finds.
. "$(dirname "$0")/lib.inc"
SRC=${SL_SRCDIR:-.}
sl_expect_exit 0 "the tree is in shape" sh "$SRC/scripts/code-shape.sh" "$SRC/src"
mkdir -p "$SL_TMP/src"
# A command file of 301 lines whose one function has 299 lines from { to }.
{ echo "int sl_cmd_big(void)"; echo "{"; i=0; while [ $i -lt 297 ]; do echo "    ;"; i=$((i + 1)); done; echo "}"; } \
  >"$SL_TMP/src/cmd_big.c"
echo "/* end */" >>"$SL_TMP/src/cmd_big.c"
sl_expect_exit 1 "a 301-line command file fails" sh "$SRC/scripts/code-shape.sh" "$SL_TMP/src"
sl_expect_grep "$SL_TMP/out" "301 cmd_big.c  <- over the limit" "the file is named with its length"
sl_expect_grep "$SL_TMP/out" "299 sl_cmd_big cmd_big.c:1" "the longest function is found and measured"
mv "$SL_TMP/src/cmd_big.c" "$SL_TMP/src/cmd_ensemble.c"
sl_expect_exit 1 "cmd_ensemble.c is not exempt" sh "$SRC/scripts/code-shape.sh" "$SL_TMP/src"
sl_done
