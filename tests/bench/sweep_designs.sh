#!/usr/bin/env bash
# Benchmark of the sampling designs of `tepid sweep` (docs/sweep.md, "Designs"): the 24 V demo's
# four-spread tolerance study run with --until for each design and each target, on 2 jobs, the
# 95th percentile both by order statistics and fitted (--percentiles fitted). Reports the samples
# each needed for the target half-width and the wall and CPU time; first, the reference: 10,000
# random samples, their half-widths on the three targets and their time. Not part of ctest (it
# takes minutes).
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
# target|percentile method
targets=("time_to_setpoint_s.mean=+-1s|order" "time_to_setpoint_s.p95=+-1s|order"
         "time_to_setpoint_s.p95=+-1s|fitted" "holding_power_W.mean=+-0.1W|order")

# The timing line of a run's text: wall and CPU seconds.
timing() {
    local line
    line=$(grep -E '^  [0-9]+ jobs?: ' "$1")
    printf '%s %s' "$(sed -E 's/.*: ([0-9.]+) s wall.*/\1/' <<<"$line")" \
        "$(sed -E 's/.* ([0-9.]+) s CPU.*/\1/' <<<"$line")"
}

echo "tepid sweep designs: configs/workshop-bed-24v.yaml, batches of $batch, at most $max samples, 2 jobs"
echo "machine: $(nproc) processors; $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2- | sed 's/^ //')"
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
# The reference: 10,000 random samples, order statistics.
"$exe" sweep configs/workshop-bed-24v.yaml "${spreads[@]}" --samples 10000 --seed 1 --jobs 2 \
    --stats "$out/ref.csv" 2>/dev/null > "$out/ref.txt"
read -r wall cpu <<<"$(timing "$out/ref.txt")"
wall_ref=$wall
echo "reference: 10000 random samples, $wall s wall, $cpu s CPU; 95 % half-widths:"
for row in time_to_setpoint_s,mean time_to_setpoint_s,p95 holding_power_W,mean; do
    printf '  %-26s %s\n' "${row/,/.}" "$(grep "^$row," "$out/ref.csv" | cut -d, -f7)"
done
printf '  %-7s %-30s %-6s %8s %-16s %9s %9s\n' design target pct samples stopped "wall (s)" \
    "CPU (s)"
for design in random lhs sobol; do
    for tp in "${targets[@]}"; do
        t=${tp%|*}
        pct=${tp#*|}
        "$exe" sweep configs/workshop-bed-24v.yaml "${spreads[@]}" --samples "$max" \
            --replicates $((max / batch)) --design "$design" --seed 1 --jobs 2 --until "$t" \
            --percentiles "$pct" --json "$out/r.json" 2>/dev/null > "$out/r.txt"
        read -r wall cpu <<<"$(timing "$out/r.txt")"
        n=$(grep -m1 -oE '"samples":[[:space:]]*[0-9]+' "$out/r.json" | grep -oE '[0-9]+$')
        stopped=$(grep -m1 -oE '"stopped":[[:space:]]*"[a-z ]+"' "$out/r.json" | cut -d'"' -f4)
        printf '  %-7s %-30s %-6s %8s %-16s %9s %9s\n' "$design" "$t" "$pct" "$n" "$stopped" \
            "$wall" "$cpu"
    done
done
# The goal of issue 21: the confidence of 10,000 random samples in under a quarter of their time.
# Each design with fitted percentiles, stopped at the reference's three half-widths at once.
ref_t=$(grep '^time_to_setpoint_s,mean,' "$out/ref.csv" | cut -d, -f7)
ref_p=$(grep '^time_to_setpoint_s,p95,' "$out/ref.csv" | cut -d, -f7)
ref_h=$(grep '^holding_power_W,mean,' "$out/ref.csv" | cut -d, -f7)
echo "the reference's confidence (all three half-widths at once), --percentiles fitted:"
printf '  %-7s %8s %-16s %9s %9s %s\n' design samples stopped "wall (s)" "CPU (s)" "of the reference's wall"
for design in random lhs sobol; do
    "$exe" sweep configs/workshop-bed-24v.yaml "${spreads[@]}" --samples "$max" \
        --replicates $((max / batch)) --design "$design" --seed 1 --jobs 2 --percentiles fitted \
        --until "time_to_setpoint_s.mean=+-${ref_t}s" --until "time_to_setpoint_s.p95=+-${ref_p}s" \
        --until "holding_power_W.mean=+-${ref_h}W" --json "$out/r.json" 2>/dev/null > "$out/r.txt"
    read -r w c <<<"$(timing "$out/r.txt")"
    n=$(grep -m1 -oE '"samples":[[:space:]]*[0-9]+' "$out/r.json" | grep -oE '[0-9]+$')
    stopped=$(grep -m1 -oE '"stopped":[[:space:]]*"[a-z ]+"' "$out/r.json" | cut -d'"' -f4)
    printf '  %-7s %8s %-16s %9s %9s %s\n' "$design" "$n" "$stopped" "$w" "$c" \
        "$(awk -v a="$w" -v b="$wall_ref" 'BEGIN { printf "%.1f %%", 100 * a / b }')"
done
echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
