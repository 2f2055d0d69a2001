#!/bin/sh
# Output faults: special files at an output path, a full disk, a closed or
# full standard output, and signals.  The rules (README, Outputs; include/
# steamloft/outfile.h): only a regular file (or nothing) is ever replaced,
# with or without --force, anything else is exit 73 with a message; a full
# disk is exit 74 naming the cause, for every format, and leaves nothing
# behind; SIGINT, SIGTERM and SIGHUP remove the stage folder and exit
# 128 + signal; a stage folder left by SIGKILL is removed by the next run
# writing there.  The full-disk checks need a small tmpfs (root); without
# one they SKIP.
. "$SL_SRCDIR/tests/cli/lib.inc"
T=$SL_TMP
E="$SL_SRCDIR/examples"
W="$T/w"; mkdir -p "$W"

# ---------------------------------------------------------- special files
echo keep >"$W/target.txt"
ln -s target.txt "$W/link.nc"
ln -s target.txt "$W/link.csv"
mkfifo "$W/fifo.nc"
# A character device under a name the commands accept (a copy of /dev/null's
# node; needs root): the issue's case of --force replacing /dev/null.
have_dev=0
[ "$(id -u)" -eq 0 ] && mknod "$W/null.csv" c 1 3 2>/dev/null && have_dev=1
for force in "" --force; do
  sl_expect_exit 73 "run -o symlink $force" "$SL_BIN" $force run "$E/demo.ini" -o "$W/link.nc"
  sl_expect_grep "$T/err" "is a symbolic link; only a regular file" "symlink refusal says why $force"
  sl_expect_exit 73 "run -o FIFO $force" "$SL_BIN" $force run "$E/demo.ini" -o "$W/fifo.nc"
  sl_expect_grep "$T/err" "is a FIFO" "FIFO refusal says why $force"
  if [ "$have_dev" -eq 1 ]; then
    sl_expect_exit 73 "ensemble -o a character device $force" "$SL_BIN" $force ensemble "$E/ensemble-stony.ini" -n 4 -o "$W/null.csv"
    sl_expect_grep "$T/err" "null.csv' is a character device" "device refusal says why $force"
  else
    sl_skip "no root: no device node made"
  fi
  sl_expect_exit 73 "ensemble -o symlink $force" "$SL_BIN" $force ensemble "$E/ensemble-stony.ini" -n 4 -o "$W/link.csv"
  sl_expect_exit 73 "decay -o FIFO $force" "$SL_BIN" $force decay "$E/injection-profile.csv" -o "$W/fifo.nc"
done
mkdir -p "$W/csv"; ln -s ../target.txt "$W/csv/profile.csv"
sl_expect_exit 73 "--csv folder holding a symlink, --force" "$SL_BIN" --force run "$E/demo.ini" --csv "$W/csv"
{ [ "$have_dev" -eq 0 ] || [ -c "$W/null.csv" ]; } &&
[ -L "$W/link.nc" ] && [ -L "$W/csv/profile.csv" ] && [ -p "$W/fifo.nc" ] && [ -c /dev/null ] &&
  [ "$(cat "$W/target.txt")" = keep ] && sl_ok "symlinks, FIFO, /dev/null and the linked file untouched" ||
  sl_fail "a special file or its target was changed"
[ -z "$(ls -A "$W" | grep steamloft-stage)" ] && [ -z "$(ls -A "$W/csv" | grep -v profile.csv)" ] &&
  sl_ok "no stage folder or partial file left" || sl_fail "left: $(ls -A "$W" "$W/csv")"
# A regular file is still replaced with --force.
echo old >"$W/plain.nc"
sl_expect_exit 0 "--force replaces a regular file" "$SL_BIN" --force run "$E/demo.ini" -o "$W/plain.nc"
[ "$(head -c 3 "$W/plain.nc")" != old ] && sl_ok "the regular file was replaced" || sl_fail "not replaced"

# -------------------------------------------------- full standard output
if [ -w /dev/full ]; then
  for c in "run $E/demo.ini" "run --json $E/demo.ini" "params" "params --ini" "--help" \
           "atmos us1976" "decay $E/injection-profile.csv"; do
    # shellcheck disable=SC2086
    "$SL_BIN" $c >/dev/full 2>"$T/err"; rc=$?
    [ "$rc" -eq 74 ] && sl_ok "$c > /dev/full (exit 74)" || sl_fail "$c > /dev/full: exit $rc, want 74"
    sl_expect_grep "$T/err" "No space left on device" "$c > /dev/full names the cause"
  done
  sl_expect_exit 74 "ensemble -o - > /dev/full" sh -c "'$SL_BIN' ensemble '$E/ensemble-stony.ini' -n 4 -o - >/dev/full"
else
  sl_skip "/dev/full is not writable here"
fi

# ------------------------------------------------------------- full disk
M="$T/full"; mkdir -p "$M"
if [ "$(id -u)" -eq 0 ] && mount -t tmpfs -o size=256k steamloft-test "$M" 2>/dev/null; then
  trap 'umount "$M" 2>/dev/null; rm -rf "$SL_TMP"' EXIT
  dd if=/dev/zero of="$M/fill" bs=4k 2>/dev/null
  for c in "run $E/demo.ini -o $M/out.nc" "run $E/demo.ini --format classic -o $M/out3.nc" \
           "run $E/demo.ini --csv $M/csv" "run $E/demo.ini --plot $M/plots" \
           "decay $E/injection-profile.csv -o $M/d.nc" \
           "run $E/demo.ini --emission $M/em.nc --grid 18x36" "run $E/demo.ini --zonal $M/z.nc" \
           "run $E/demo.ini --emission $M/emc.nc --grid 18x36 --emission-convention cesm" \
           "ensemble $E/ensemble-stony.ini -n 8 -o $M/m.csv" "ensemble $E/ensemble-stony.ini -n 8 -o $M/m.nc"; do
    # shellcheck disable=SC2086
    sl_expect_exit 74 "full disk: $c" "$SL_BIN" $c
    sl_expect_grep "$T/err" "No space left on device" "full disk: the message names the cause"
    [ "$(grep -c . "$T/err")" -eq 1 ] && sl_ok "full disk: one message" || sl_fail "full disk: $(grep -c . "$T/err") message lines"
    [ "$(ls -A "$M")" = fill ] && sl_ok "full disk: nothing left behind" || sl_fail "full disk: left $(ls -A "$M" | tr '\n' ' ')"
  done
  # With room for a small file but not for the netCDF-4 file (it crashed
  # inside HDF5 once, leaving a 63 KB hidden partial file).
  rm -f "$M/fill"; dd if=/dev/zero of="$M/fill" bs=4k count=40 2>/dev/null
  sl_expect_exit 74 "nearly full disk: netCDF-4" "$SL_BIN" run "$E/demo.ini" -o "$M/out.nc"
  [ "$(ls -A "$M")" = fill ] && sl_ok "nearly full disk: nothing left behind" || sl_fail "left $(ls -A "$M" | tr '\n' ' ')"
  rm -f "$M/fill"
  sl_expect_exit 0 "the same run with room" "$SL_BIN" run "$E/demo.ini" -o "$M/out.nc"
  umount "$M"
else
  sl_skip "no root or tmpfs: full-disk checks not run"
fi

# --------------------------------------------------------------- signals
# The shell ignores SIGINT in background jobs; python starts the run with
# the default actions restored, sends the signal after 2 s and reports the
# exit status.
if command -v python3 >/dev/null 2>&1; then
  S="$T/sig"; mkdir -p "$S"
  for sig in INT TERM HUP; do
    python3 - "$SL_BIN" "$E/ensemble-stony.ini" "$S/m.csv" "$sig" >"$T/py" 2>&1 <<'PY'
import signal, subprocess, sys, time
binp, scen, out, name = sys.argv[1:5]
def reset():
    for s in (signal.SIGINT, signal.SIGTERM, signal.SIGHUP):
        signal.signal(s, signal.SIG_DFL)
p = subprocess.Popen([binp, "ensemble", scen, "-n", "10000000", "-o", out],
                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, preexec_fn=reset)
time.sleep(2)
import os
staged = any(n.startswith(".steamloft-stage-") for n in os.listdir(os.path.dirname(out)))
p.send_signal(getattr(signal, "SIG" + name))
try:
    rc = p.wait(timeout=30)
except subprocess.TimeoutExpired:
    p.kill(); rc = "timeout"
print(rc, "staged" if staged else "not-staged")
PY
    want=$((128 + $(kill -l "$sig" 2>/dev/null || echo 0)))
    case $sig in INT) want=130 ;; TERM) want=143 ;; HUP) want=129 ;; esac
    read -r got staged <"$T/py"
    [ "$got" = "$want" ] && [ "$staged" = staged ] && sl_ok "SIG$sig during an ensemble: exit $got" ||
      sl_fail "SIG$sig: exit $got ($staged), want $want"
    [ -z "$(ls -A "$S")" ] && sl_ok "SIG$sig: the stage folder is gone" || sl_fail "SIG$sig left: $(ls -A "$S")"
  done
  python3 - "$SL_BIN" "$E/ensemble-stony.ini" "$S/m.csv" >"$T/py" 2>&1 <<'PY'
import signal, subprocess, sys, time
binp, scen, out = sys.argv[1:4]
p = subprocess.Popen([binp, "ensemble", scen, "-n", "10000000", "-o", out],
                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
time.sleep(2)
p.kill(); print(p.wait())
PY
  left=$(ls -A "$S" | grep -c '^\.steamloft-stage-')
  [ "$left" -eq 1 ] && sl_ok "SIGKILL leaves one clearly named stage folder" || sl_fail "SIGKILL left $left stage folders"
  sl_expect_exit 0 "the next run writing there" "$SL_BIN" ensemble "$E/ensemble-stony.ini" -n 4 -o "$S/m.csv"
  [ "$(ls -A "$S")" = m.csv ] && sl_ok "the next run removed the stale stage folder" || sl_fail "left: $(ls -A "$S")"
else
  sl_skip "python3 missing: signal checks not run"
fi
sl_done
