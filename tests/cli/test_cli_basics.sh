#!/bin/sh
# Command-line skeleton: help, version, unknown command/option, help command.
. "$(dirname "$0")/lib.inc"

sl_expect_exit 0 "--help" "$SL_BIN" --help
sl_expect_grep "$SL_TMP/out" "Usage: steamloft" "--help prints usage to stdout"
sl_expect_grep "$SL_TMP/out" "Screening estimate" "--help carries the caution"
sl_expect_exit 0 "--version" "$SL_BIN" --version
sl_expect_grep "$SL_TMP/out" "^steamloft [0-9][0-9.]* (git [0-9a-f]*" "--version prints version and git hash"
sl_expect_exit 64 "unknown command" "$SL_BIN" frobnicate
sl_expect_grep "$SL_TMP/err" "unknown command 'frobnicate'" "unknown command is named"
sl_expect_grep "$SL_TMP/err" "steamloft --help" "unknown command points to --help"
sl_expect_exit 64 "unknown global option" "$SL_BIN" --bogus
sl_expect_grep "$SL_TMP/err" "unknown option '--bogus'" "unknown option is named"
sl_expect_exit 64 "no command" "$SL_BIN"
sl_expect_exit 0 "help command" "$SL_BIN" help
sl_expect_exit 64 "help of unknown command" "$SL_BIN" help frobnicate
sl_done
