#!/usr/bin/env bash
# Benchmark of `tepid sweep`: a tolerance study of the 24 V demo warm-up
# (configs/workshop-bed-24v.yaml), run with --jobs 1 and --jobs 2. Reports wall time, CPU time,
# samples per second per core and the speed-up, and checks that both runs wrote byte-identical
# CSV and JSON. Not part of ctest (it takes minutes).
#
#   tests/bench/sweep_bench.sh [BUILD_DIR] [SAMPLES]      (defaults: build 10000)
#
# CPU time is what the workers' threads used (CLOCK_THREAD_CPUTIME_ID), so samples per CPU
# second does not depend on other load on the machine; wall time does.
set -euo pipefail
cd "$(dirname "$0")/../.."
build=${1:-build}
samples=${2:-10000}
exe="$build/tepid"
out=$(mktemp -d /tmp/tepid-bench-XXXXXX)
trap 'rm -rf "$out"' EXIT

spreads=(--spread heater.resistance=normal:5%
         --spread room.temperature=uniform:16degC:28degC
         --spread bed.layers.sheet.contact=uniform:-30%:30%
         --spread sensor.coupling=normal:10%)

echo "tepid sweep benchmark: $samples samples of configs/workshop-bed-24v.yaml"
echo "machine: $(nproc) processors; $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2- | sed 's/^ //')"
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
declare -A wall cpu
for jobs in 1 2; do
    "$exe" sweep configs/workshop-bed-24v.yaml "${spreads[@]}" --samples "$samples" --seed 1 \
        --jobs "$jobs" --csv "$out/j$jobs.csv" --json "$out/j$jobs.json" 2>/dev/null \
        > "$out/j$jobs.txt"
    line=$(grep -E '^  [0-9]+ jobs?: ' "$out/j$jobs.txt")
    wall[$jobs]=$(sed -E 's/.*: ([0-9.]+) s wall.*/\1/' <<<"$line")
    cpu[$jobs]=$(sed -E 's/.* ([0-9.]+) s CPU.*/\1/' <<<"$line")
    awk -v j="$jobs" -v n="$samples" -v w="${wall[$jobs]}" -v c="${cpu[$jobs]}" 'BEGIN {
        printf "  --jobs %d: %8.2f s wall, %8.2f s CPU, %7.1f samples/s, %7.1f samples per CPU-second, %6.2f ms CPU per sample\n",
               j, w, c, n / w, n / c, 1000 * c / n }'
done
awk -v w1="${wall[1]}" -v w2="${wall[2]}" -v c1="${cpu[1]}" -v c2="${cpu[2]}" -v n="$samples" 'BEGIN {
    printf "  speed-up 1 -> 2 jobs: %.2f x (wall); samples/s per core with 2 jobs: %.1f\n", w1 / w2, n / w2 / 2
    printf "  CPU per sample 1 job vs 2 jobs: %.2f vs %.2f ms\n", 1000 * c1 / n, 1000 * c2 / n }'
echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
if cmp -s "$out/j1.csv" "$out/j2.csv" && cmp -s "$out/j1.json" "$out/j2.json"; then
    echo "  CSV and JSON byte-identical for 1 and 2 jobs"
else
    echo "  ! CSV or JSON differ between 1 and 2 jobs"
    exit 1
fi
grep -E 'failed|no sample failed' "$out/j2.txt" | head -3
