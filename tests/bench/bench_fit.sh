#!/usr/bin/env bash
# Benchmark of `tepid fit`: three free parameters against the 1801-row demo log
# (configs/workshop-bed-24v-log.csv), pinned to one core. The target (issue 7) is under 2 s.
# Usage: tests/bench/bench_fit.sh [path/to/tepid] [runs]
set -euo pipefail
cd "$(dirname "$0")/../.."
TEPID=${1:-./build/tepid}
RUNS=${2:-5}
PIN=()
if command -v taskset >/dev/null 2>&1; then PIN=(taskset -c 0); fi
args=(fit configs/workshop-bed-24v.yaml --log configs/workshop-bed-24v-log.csv
      --free heater.resistance,losses.convection_scale,sensor.time_constant -q --json -)
times=()
cpus=()
TIMEFORMAT=%U
for _ in $(seq "$RUNS"); do
  t0=$(date +%s.%N)
  cpu=$( { time "${PIN[@]}" "$TEPID" "${args[@]}" >"${TMPDIR:-/tmp}/bench_fit.$$" 2>/dev/null; } 2>&1 )
  t1=$(date +%s.%N)
  times+=("$(echo "$t1 - $t0" | bc -l)")
  cpus+=("$cpu")
done
out=$(cat "${TMPDIR:-/tmp}/bench_fit.$$")
rm -f "${TMPDIR:-/tmp}/bench_fit.$$"
runs=$(printf '%s\n' "$out" | sed -n 's/.*"model_runs":[[:space:]]*\([0-9]*\).*/\1/p')
starts=$(printf '%s\n' "$out" | sed -n 's/.*"starts":[[:space:]]*\([0-9]*\).*/\1/p')
sorted=$(printf '%s\n' "${times[@]}" | sort -g)
best=$(printf '%s\n' "$sorted" | head -1)
median=$(printf '%s\n' "$sorted" | sed -n "$(( (RUNS + 1) / 2 ))p")
printf 'tepid fit, 3 parameters, 1801 rows, %s starting points, %s model runs\n' "$starts" "$runs"
cpu_median=$(printf '%s\n' "${cpus[@]}" | sort -g | sed -n "$(( (RUNS + 1) / 2 ))p")
printf 'wall time over %d runs on one core: best %.2f s, median %.2f s (target < 2 s)\n' \
  "$RUNS" "$best" "$median"
printf 'user CPU time, median: %.2f s; load average when run: %s\n' "$cpu_median" \
  "$(cut -d' ' -f1-3 /proc/loadavg 2>/dev/null || echo unknown)"
if [ "$(echo "$median < 2.0" | bc -l)" != 1 ]; then
  echo "slower than the 2 s target" >&2
  exit 1
fi
