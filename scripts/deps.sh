#!/bin/sh
# Install the Debian 12 packages that steamloft needs to build, test and plot.
#   scripts/deps.sh              install whatever is missing (as root), or print the command
#   scripts/deps.sh --if-missing same, but silent when nothing is missing
#   scripts/deps.sh --list       print the package list
# Exit status: 0 when everything is installed afterwards, 1 otherwise.
set -u
PKGS="gcc make pkg-config libgsl-dev libnetcdf-dev netcdf-bin libinih-dev check \
gnuplot-nox python3 python3-iapws python3-netcdf4 python3-numpy cdo \
libopenmpi-dev openmpi-bin"

quiet=0
case "${1:-}" in
  --list) echo $PKGS; exit 0 ;;
  --if-missing) quiet=1 ;;
  "") ;;
  *) echo "usage: scripts/deps.sh [--if-missing|--list]" >&2; exit 64 ;;
esac

missing=""
for p in $PKGS; do
  st=$(dpkg-query -W -f='${Status}' "$p" 2>/dev/null)
  case "$st" in *"install ok installed"*) ;; *) missing="$missing $p" ;; esac
done
if [ -z "$missing" ]; then
  [ "$quiet" = 1 ] || echo "deps: all packages present"
  exit 0
fi
echo "deps: missing:$missing" >&2
if [ "$(id -u)" = 0 ]; then
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq && apt-get install -y -qq --no-install-recommends $missing >&2 || {
    echo "deps: apt-get failed; run it by hand: apt-get install$missing" >&2; exit 1; }
  exit 0
fi
echo "deps: not root; install them with:" >&2
echo "  sudo apt-get install --no-install-recommends$missing" >&2
exit 1
