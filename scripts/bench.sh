#!/bin/sh
# `make bench`: a benchmark, not a test.  Runs the full chain on a fixed
# ensemble (examples/ensemble-stony.ini, seed 1) and reports scenarios per
# second on 1 and 2 threads, the time per scenario per core, peak resident
# memory (getrusage), the time split by chain stage, and the memory of a ten
# times larger run (only the scalar outputs grow with the member count).
#   scripts/bench.sh [BUILD_DIR]        SL_BENCH_MEMBERS=N to change the size (default 2000)
# Timings depend on what else runs on the machine: check `uptime` first.
set -u
build=${1:-build}
bin="$build/steamloft"
scen=examples/ensemble-stony.ini
n=${SL_BENCH_MEMBERS:-2000}
tmp=$(mktemp -d "${TMPDIR:-/tmp}/slbench.XXXXXX")
trap 'rm -rf "$tmp"' EXIT
[ -x "$bin" ] || { echo "bench: $bin not built (run make)" >&2; exit 66; }

run() { # threads members tag
  "$bin" -v ensemble "$scen" --members "$2" --seed 1 --threads "$1" --no-progress \
    -o "$tmp/$3.csv" >"$tmp/$3.out" 2>"$tmp/$3.err" || { echo "bench: run $3 failed:" >&2; cat "$tmp/$3.err" >&2; exit 70; }
}
rate() { sed -n 's/.* (\([0-9.e+]*\) members\/s)$/\1/p' "$tmp/$1.out"; }
mem() { sed -n 's/.*peak resident memory \([0-9.]*\) MiB.*/\1/p' "$tmp/$1.err"; }

echo "steamloft bench: $("$bin" --version | head -1)"
echo "machine: $(nproc) cores; load average now: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "ensemble: $scen, $n members, Monte Carlo seed 1 (entry, partition, plume, box model per member)"
run 1 "$n" t1
run 2 "$n" t2
r1=$(rate t1); r2=$(rate t2)
if cmp -s "$tmp/t1.csv" "$tmp/t2.csv"; then same="identical"; else same="DIFFERENT (a bug)"; fi
awk -v r1="$r1" -v r2="$r2" 'BEGIN {
  printf "1 thread : %9.1f scenarios/s  (%.3f ms per scenario per core)\n", r1, 1000 / r1;
  printf "2 threads: %9.1f scenarios/s  (%.3f ms per scenario per core; speed-up %.2f)\n", r2, 2000 / r2, r2 / r1 }'
echo "member files of the 1- and 2-thread runs: $same"
echo "peak resident memory: $(mem t1) MiB (1 thread), $(mem t2) MiB (2 threads)"
sed -n 's/^steamloft: time per member .*; chain stages (rank 0, all threads): /time split (1 thread): /p' "$tmp/t1.err"
n10=$((n * 10))
run 2 "$n10" big
echo "peak resident memory with $n10 members: $(mem big) MiB ($(rate big) scenarios/s on 2 threads)"
echo "target (README.md, Performance): 0.15 ms CPU per scenario per core"
