#!/usr/bin/env bash
# Benchmark of the sampling designs of `tepid sweep` (docs/sweep.md, "Designs"): the 24 V demo's
# four-spread tolerance study run with --until for each design and each target, on 2 jobs.
# Reports the samples each design needed for the target half-width and the wall time. Not part
# of ctest (it takes minutes).
#
#   tests/bench/sweep_designs.sh [BUILD_DIR] [MAX_SAMPLES] [BATCH]   (defaults: build 40000 100)
set -euo pipefail
cd "$(dirname "$0")/../.."
build=${1:-build}
max=${2:-40000}
batch=${3:-100}
exe="$build/tepid"
out=$(mktemp -d /tmp/tepid-bench-XXXXXX)
trap 'rm -rf "$out"' EXIT

spreads=(--spread heater.resistance=normal:5%
         --spread room.temperature=uniform:16degC:28degC
         --spread bed.layers.sheet.contact=uniform:-30%:30%
         --spread sensor.coupling=normal:10%)
targets=("time_to_setpoint_s.mean=+-1s" "time_to_setpoint_s.p95=+-1s" "holding_power_W.mean=+-0.1W")

echo "tepid sweep designs: configs/workshop-bed-24v.yaml, batches of $batch, at most $max samples, 2 jobs"
echo "machine: $(nproc) processors; $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2- | sed 's/^ //')"
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
printf '  %-7s %-30s %8s %-16s %9s %9s\n' design target samples stopped "wall (s)" "CPU (s)"
for design in random lhs sobol; do
    for t in "${targets[@]}"; do
        "$exe" sweep configs/workshop-bed-24v.yaml "${spreads[@]}" --samples "$max" \
            --replicates $((max / batch)) --design "$design" --seed 1 --jobs 2 --until "$t" \
            --json "$out/r.json" 2>/dev/null > "$out/r.txt"
        line=$(grep -E '^  [0-9]+ jobs?: ' "$out/r.txt")
        wall=$(sed -E 's/.*: ([0-9.]+) s wall.*/\1/' <<<"$line")
        cpu=$(sed -E 's/.* ([0-9.]+) s CPU.*/\1/' <<<"$line")
        n=$(grep -m1 -oE '"samples":[[:space:]]*[0-9]+' "$out/r.json" | grep -oE '[0-9]+$')
        stopped=$(grep -m1 -oE '"stopped":[[:space:]]*"[a-z ]+"' "$out/r.json" | cut -d'"' -f4)
        printf '  %-7s %-30s %8s %-16s %9s %9s\n' "$design" "$t" "$n" "$stopped" "$wall" "$cpu"
    done
done
echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
