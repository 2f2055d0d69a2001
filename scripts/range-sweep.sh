#!/bin/sh
# The documented ranges swept through the whole chain with `steamloft
# tabulate` (about a second on two cores; tests/cli/test_range_sweep.sh runs
# it in make check).  Impactors: diameters 1 m-20 km, 11-72 km/s, 5-90 degrees,
# comet, stony and iron densities, three climate-zone atmospheres;
# explosions: 1 kt-1e5 Mt at 0-80 km in every built-in atmosphere.  Prints
# the count of rows and of failed rows per event type and lists the failures
# and any result outside physical bounds (stratospheric water negative or not
# finite, more energy at the sea than the event has with gravity's work, no finite e-folding time
# for water that entered the stratosphere).
# Usage: scripts/range-sweep.sh [STEAMLOFT]   (default build/steamloft)
set -eu
BIN=${1:-build/steamloft}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
{
  echo "name,impactor.diameter_m,impactor.density_kg_m3,impactor.speed_km_s,impactor.angle_deg,site.atmosphere,site.latitude_deg,site.ocean_depth_m"
  for d in 1 10 50 100 300 1000 3000 10000 20000; do
    for rho in 600 3000 7800; do
      for v in 11 20 45 72; do
        for a in 5 45 90; do
          for atm in tropical midlatitude-winter subarctic-summer; do
            echo "i-$d-$rho-$v-$a-$atm,$d,$rho,$v,$a,$atm,10,4000"
          done
        done
      done
    done
  done
} >"$T/impactors.csv"
{
  echo "name,explosion.energy_Mt,explosion.altitude_m,site.atmosphere,site.latitude_deg"
  for y in 0.001 0.1 1 100 1e4 1e5; do
    for z in 0 1000 10000 30000 80000; do
      for atm in us1976 us1976-humid tropical midlatitude-summer midlatitude-winter subarctic-summer subarctic-winter; do
        echo "x-$y-$z-$atm,$y,$z,$atm,10"
      done
    done
  done
} >"$T/explosions.csv"
status=0
for kind in impactors explosions; do
  "$BIN" tabulate --csv "$T/$kind.csv" >"$T/$kind.out" 2>"$T/$kind.err" || true
  /usr/bin/python3 - "$T/$kind.out" "$kind" <<'PY' || status=1
import csv, math, sys
rows = list(csv.DictReader(l for l in open(sys.argv[1]) if not l.startswith("#")))
bad = [r for r in rows if r.get("exit", "0") not in ("0", "")]
odd = []
for r in rows:
    if r in bad:
        continue
    try:
        w = float(r["stratospheric_water_kg"] or "nan")
        E = float(r["energy_J"] or "nan")
        Es = float(r["energy_at_sea_J"] or 0)
        tau = float(r["efolding_years"] or "nan")
        why = []
        if not (math.isfinite(w) and w >= 0):
            why.append("stratospheric water %r" % r["stratospheric_water_kg"])
        # Gravity's work from an entry interface up to 200 km adds at most
        # 2 g h / v^2 = 3.2 % at the slowest speed, 11 km/s.
        if not (Es <= 1.04 * E):
            why.append("energy at the sea %g J of %g J" % (Es, E))
        if w > 0 and not (math.isfinite(tau) and tau > 0):
            why.append("e-folding %r" % r["efolding_years"])
        if why:
            odd.append((r["name"], "; ".join(why)))
    except (ValueError, KeyError) as ex:
        odd.append((r["name"], repr(ex)))
print("%s: %d rows, %d failed, %d unphysical" % (sys.argv[2], len(rows), len(bad), len(odd)))
for r in bad[:40]:
    print("  failed %s: %s" % (r["name"], r.get("reason") or r.get("error") or "?"))
for n, why in odd[:40]:
    print("  unphysical %s: %s" % (n, why))
sys.exit(1 if bad or odd else 0)
PY
done
exit $status
