#!/bin/sh
# scripts/deps.sh, the package groups, with stand-ins for dpkg-query, apt-get
# and apt-cache on PATH, so nothing is installed and the system is not asked:
#   - --list prints each group's packages, the groups apart;
#   - a missing package gives the line to run as root, `apt-get update &&
#     apt-get install --no-install-recommends ...`, never `sudo`;
#   - installing says how many packages and how large before it installs,
#     with --no-install-recommends, only the missing packages of the groups;
#   - `make install` never installs packages (only --check), and leaves the
#     mpi group out unless MPI=1.
# SL_BIN is not used; the script needs sh, awk and the source tree.
. "$(dirname "$0")/lib.inc"
deps="$SL_SRCDIR/scripts/deps.sh"
stub="$SL_TMP/bin"; mkdir -p "$stub"
calls="$SL_TMP/calls.txt"; : >"$calls"
# dpkg-query: every package missing except the ones named in $SL_TMP/have.
cat >"$stub/dpkg-query" <<EOF
#!/bin/sh
for a; do p=\$a; done
grep -qx "\$p" "$SL_TMP/have" 2>/dev/null && { printf 'install ok installed'; exit 0; }
exit 1
EOF
# apt-get: -s lists what it would install; everything else is recorded.
cat >"$stub/apt-get" <<EOF
#!/bin/sh
echo "apt-get \$*" >>"$calls"
case " \$* " in
  *" -s "*) for a; do case "\$a" in -*|install) ;; *) echo "Inst \$a (1.0 Debian:12/stable [amd64])"; echo "Inst lib\$a-dep (1.0 Debian:12/stable [amd64])" ;; esac; done ;;
esac
exit 0
EOF
# apt-cache show: 2000 kB installed and 1 MB download per package.
cat >"$stub/apt-cache" <<EOF
#!/bin/sh
for a; do case "\$a" in show|--*) ;; *) printf 'Package: %s\nInstalled-Size: 2000\nSize: 1000000\n\n' "\$a" ;; esac; done
EOF
chmod +x "$stub/dpkg-query" "$stub/apt-get" "$stub/apt-cache"
P="$stub:$PATH"

# ---- --list --------------------------------------------------------------
sl_expect_exit 0 "--list build" env PATH="$P" sh "$deps" --list build
build_pkgs=$(cat "$SL_TMP/out")
case " $build_pkgs " in *" gcc "*" libgsl-dev "*"libnetcdf-dev "*) sl_ok "build has the compiler and libraries" ;; *) sl_fail "build group: $build_pkgs" ;; esac
sl_expect_exit 0 "--list test" env PATH="$P" sh "$deps" --list test
case " $(cat "$SL_TMP/out") " in *" gcc "*|*" gnuplot-nox "*|*" libopenmpi-dev "*) sl_fail "test repeats another group" ;; *" check "*) sl_ok "test adds its own packages only" ;; *) sl_fail "test group: $(cat "$SL_TMP/out")" ;; esac
sl_expect_exit 0 "--list (default: build plot)" env PATH="$P" sh "$deps" --list
case " $(cat "$SL_TMP/out") " in *" gnuplot-nox"*) sl_ok "the default is what make demo needs (build and plot)" ;; *) sl_fail "default groups: $(cat "$SL_TMP/out")" ;; esac
case " $(cat "$SL_TMP/out") " in *openmpi*|*" cdo "*|*clang*|*" check "*) sl_fail "the demo groups pull optional or test packages" ;; *) sl_ok "no MPI, CDO, fuzzing or test packages for the demo" ;; esac
sl_expect_exit 64 "an unknown group" env PATH="$P" sh "$deps" everything

# ---- --check: the line to run as root -------------------------------------
sl_expect_exit 1 "--check with packages missing" env PATH="$P" sh "$deps" --check build
sl_expect_grep "$SL_TMP/err" "^  apt-get update && apt-get install --no-install-recommends gcc " "the hint updates the lists and skips recommends"
if grep -q sudo "$SL_TMP/err"; then sl_fail "the hint uses sudo"; else sl_ok "no sudo in the hint"; fi
if [ -s "$calls" ]; then sl_fail "--check ran apt-get: $(cat "$calls")"; else sl_ok "--check never runs apt-get"; fi
# Only what is missing is named.
printf 'gcc\nmake\n' >"$SL_TMP/have"
env PATH="$P" sh "$deps" --check build >/dev/null 2>"$SL_TMP/err"
if grep -q -e ' gcc' -e ' make ' "$SL_TMP/err"; then sl_fail "installed packages named as missing"; else sl_ok "installed packages are not named"; fi
: >"$SL_TMP/have"

# ---- installing (root) or the hint (not root) ----------------------------
if [ "$(id -u)" = 0 ]; then
  sl_expect_exit 0 "install build plot (stand-in apt)" env PATH="$P" TMPDIR="$SL_TMP" sh "$deps" build plot
  # 8 missing packages, each bringing one dependency: 16 packages,
  # 16 x 1 MB download, 16 x 2000 kB = 32.8 MB on disk.
  sl_expect_grep "$SL_TMP/err" "^deps: installing 16 packages, 16 MB download, 33 MB on disk" "the size is said before installing"
  inst=$(grep -v -e ' -s ' -e ' update' "$calls")
  case "$inst" in
    *"install -y -q --no-install-recommends"*" gcc "*" gnuplot-nox") sl_ok "installed with --no-install-recommends, the groups' packages" ;;
    *) sl_fail "install call: $inst" ;;
  esac
  n_inst=$(grep -c -v -e ' -s ' -e ' update' "$calls")
  [ "$n_inst" -eq 1 ] && sl_ok "one install call" || sl_fail "$n_inst install calls"
  grep -q ' update' "$calls" && sl_ok "the package lists are updated first" || sl_fail "no apt-get update"
  if command -v setpriv >/dev/null 2>&1; then
    # A copy the unprivileged user can read (the tree may sit in root's home).
    cp "$deps" "$SL_TMP/deps.sh"
    chmod 755 "$SL_TMP" "$stub" "$SL_TMP/deps.sh"; : >"$calls"; chmod 666 "$calls"
    (cd / && setpriv --reuid=65534 --regid=65534 --clear-groups env PATH="$P" HOME=/ sh "$SL_TMP/deps.sh" build) \
      >"$SL_TMP/out" 2>"$SL_TMP/err"; st=$?
    [ "$st" -eq 1 ] && sl_ok "not root: exit 1" || sl_fail "not root: exit $st"
    sl_expect_grep "$SL_TMP/err" "not root; run as root:" "not root: says to run as root"
    sl_expect_grep "$SL_TMP/err" "^  apt-get update && apt-get install --no-install-recommends gcc " "not root: the line to run"
    if grep -q sudo "$SL_TMP/err"; then sl_fail "not root: sudo in the hint"; else sl_ok "not root: no sudo"; fi
    if [ -s "$calls" ]; then sl_fail "not root: apt-get ran"; else sl_ok "not root: apt-get not run"; fi
  else
    sl_skip "setpriv (util-linux) missing: the non-root hint is not checked"
  fi
else
  sl_expect_exit 1 "not root: missing packages" env PATH="$P" sh "$deps" build
  sl_expect_grep "$SL_TMP/err" "^  apt-get update && apt-get install --no-install-recommends gcc " "not root: the line to run"
  if [ -s "$calls" ]; then sl_fail "not root: apt-get ran"; else sl_ok "not root: apt-get not run"; fi
fi

# ---- make install never installs packages --------------------------------
if command -v make >/dev/null 2>&1; then
  mkn() { (cd "$SL_SRCDIR" && env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL make -n --no-print-directory "$@" install) 2>&1 | grep 'deps.sh'; }
  line=$(mkn)
  case "$line" in
    *"deps.sh --if-missing --check build") sl_ok "make install only checks the build group" ;;
    *) sl_fail "make install runs: $line" ;;
  esac
  line=$(mkn MPI=1)
  case "$line" in
    *"deps.sh --if-missing --check build mpi") sl_ok "make MPI=1 install checks build and mpi" ;;
    *) sl_fail "make MPI=1 install runs: $line" ;;
  esac
fi
sl_done
