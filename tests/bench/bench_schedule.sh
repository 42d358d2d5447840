#!/usr/bin/env bash
# Benchmark (not a ctest test): a scheduled warm-up against a fixed-setpoint warm-up of the same
# duration (issue 18: "speed of a scheduled run comparable to a warm-up of the same duration").
# Three runs of the 24 V demo over its 30 minutes: the demo itself (setpoint 90 degC), the same
# with control.schedule: [{to: 90 degC}] (must do the same work: a one-step schedule is the
# fixed setpoint), and a five-segment programme (ramp, hold, ramp, hold, off). For each: CVODE's
# steps, right-hand sides, Jacobians and restarts from the summary, and the median wall time of
# the whole process over RUNS runs (default 20).
#
#   tests/bench/bench_schedule.sh              (after cmake --build build)
#   RUNS=100 TEPID=build-bench/tepid tests/bench/bench_schedule.sh
set -euo pipefail

here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
exe=${TEPID:-$root/build/tepid}
runs=${RUNS:-20}
demo=$root/configs/workshop-bed-24v.yaml
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

if [ ! -x "$exe" ]; then
  echo "bench: no binary at $exe; build first (cmake -S . -B build && cmake --build build)" >&2
  exit 2
fi
sed 's/setpoint: 90 degC/schedule: [{to: 90 degC}]/' "$demo" > "$tmp/step.yaml"
sed 's|setpoint: 90 degC|schedule: [{to: 60 degC, ramp: 0.5 K/s}, {hold: 5 min}, {to: 90 degC, ramp: 0.2 K/s}, {hold: 10 min}, {off: 5 min}]|' \
  "$demo" > "$tmp/programme.yaml"

for cfg in "$demo" "$tmp/step.yaml" "$tmp/programme.yaml"; do
  work=$("$exe" warmup "$cfg" 2>/dev/null | grep '^  simulated' | sed 's/^ *//')
  times=()
  for ((i = 0; i < runs; i++)); do
    t0=$EPOCHREALTIME
    "$exe" warmup "$cfg" -q 2>/dev/null
    t1=$EPOCHREALTIME
    times+=("$(echo "($t1 - $t0) * 1000" | bc -l)")
  done
  median=$(printf '%s\n' "${times[@]}" | sort -g | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}')
  printf '%-16s median %6.1f ms  %s\n' "$(basename "$cfg")" "$median" "$work"
done
