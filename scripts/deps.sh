#!/bin/sh
# Install the Debian 12 packages steamloft needs, one group at a time, each
# with --no-install-recommends.  Before installing, it says how many packages
# and how many megabytes (download and on disk) a group adds.
#
#   scripts/deps.sh [MODE] [GROUP...]
#
# Groups (default: build plot, what `make demo` needs):
#   build   compiler and libraries to build
#   plot    gnuplot, to render the plots (without it, --plot writes data and script only)
#   test    what `make check` adds (each test that needs a tool SKIPs without it)
#   mpi     OpenMPI for `make MPI=1` cluster ensembles
#   cdo     Climate Data Operators, to look into the netCDF outputs
#   fuzz    clang and its libFuzzer runtime for `make fuzz`
# Modes:
#   (none)        install what is missing as root; otherwise print the command to run as root
#   --if-missing  the same, silent when nothing is missing (the Makefile's steps use this)
#   --check       never install: say what is missing and fail (used by `make install`)
#   --list        print the packages of the groups, one line
# Exit status: 0 when every package of the groups is installed afterwards,
# 1 when some are missing, 64 for a bad argument.
set -u

# ---- package lists: one group per variable; add a package to its line -----
BUILD_PKGS="gcc libc6-dev make pkg-config libgsl-dev libnetcdf-dev libinih-dev"
PLOT_PKGS="gnuplot-nox"
# The tests add these.  To add test packages, append them to this line (or add
# a line TEST_PKGS="$TEST_PKGS ...").
TEST_PKGS="check netcdf-bin python3 python3-numpy python3-netcdf4 python3-iapws man-db nco python3-xarray python3-dask"
MPI_PKGS="libopenmpi-dev openmpi-bin"
CDO_PKGS="cdo"
FUZZ_PKGS="clang libclang-rt-14-dev"

usage() {
  echo "usage: scripts/deps.sh [--if-missing|--check|--list] [build|plot|test|mpi|cdo|fuzz ...]" >&2
  exit 64
}

mode=install quiet=0 groups=""
for a in "$@"; do
  case "$a" in
    --list) mode=list ;;
    --check) mode=check ;;
    --if-missing) quiet=1 ;;
    build|plot|test|mpi|cdo|fuzz) groups="$groups $a" ;;
    *) usage ;;
  esac
done
[ -n "$groups" ] || groups="build plot"

pkgs=""
for g in $groups; do
  case "$g" in
    build) pkgs="$pkgs $BUILD_PKGS" ;;
    plot) pkgs="$pkgs $PLOT_PKGS" ;;
    test) pkgs="$pkgs $TEST_PKGS" ;;
    mpi) pkgs="$pkgs $MPI_PKGS" ;;
    cdo) pkgs="$pkgs $CDO_PKGS" ;;
    fuzz) pkgs="$pkgs $FUZZ_PKGS" ;;
  esac
done
if [ "$mode" = list ]; then
  echo $pkgs
  exit 0
fi

missing=""
for p in $pkgs; do
  case " $missing " in *" $p "*) continue ;; esac
  st=$(dpkg-query -W -f='${Status}' "$p" 2>/dev/null)
  case "$st" in *"install ok installed"*) ;; *) missing="$missing $p" ;; esac
done
group_names=$(echo $groups)
if [ -z "$missing" ]; then
  [ "$quiet" = 1 ] || echo "deps: all packages of '$group_names' present"
  exit 0
fi

# What installing MISSING would add: packages and sizes from the package
# lists (apt-get -s, apt-cache show), as "N packages, D MB download, S MB on disk".
estimate() {
  apt-get -s install --no-install-recommends $missing 2>/dev/null |
    awk '/^Inst /{print $2}' >"$tmp/new" || return 1
  n=$(wc -l <"$tmp/new")
  [ "$n" -gt 0 ] || return 1
  # shellcheck disable=SC2046
  apt-cache show --no-all-versions $(cat "$tmp/new") 2>/dev/null |
    awk -v n="$n" '/^Installed-Size:/{s += $2} /^Size:/{d += $2}
      END {printf "%d packages, %.0f MB download, %.0f MB on disk\n", n, d / 1e6, s * 1024 / 1e6}'
}

hint="apt-get update && apt-get install --no-install-recommends$missing"
echo "deps: missing for '$group_names':$missing" >&2
if [ "$mode" = check ]; then
  echo "deps: install them (as root) with:" >&2
  echo "  $hint" >&2
  exit 1
fi
if [ "$(id -u)" != 0 ]; then
  echo "deps: not root; run as root:" >&2
  echo "  $hint" >&2
  exit 1
fi

tmp=$(mktemp -d "${TMPDIR:-/tmp}/steamloft-deps.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT
export DEBIAN_FRONTEND=noninteractive
log=$(mktemp "${TMPDIR:-/tmp}/steamloft-deps.XXXXXX.log") || exit 1
echo "deps: updating the package lists" >&2
if ! apt-get update -qq >"$log" 2>&1; then
  echo "deps: apt-get update failed (see $log); run by hand: $hint" >&2
  exit 1
fi
size=$(estimate) || size="size unknown"
echo "deps: installing $size (takes a minute or more; messages in $log)" >&2
start=$(date +%s)
if ! apt-get install -y -q --no-install-recommends -o APT::Keep-Downloaded-Packages=false $missing >>"$log" 2>&1; then
  tail -n 15 "$log" | sed 's/^/deps:   /' >&2
  echo "deps: apt-get install failed (full messages in $log); run by hand: $hint" >&2
  exit 1
fi
echo "deps: installed in $(( $(date +%s) - start )) s" >&2
rm -f "$log"
exit 0
