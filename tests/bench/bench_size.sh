#!/usr/bin/env bash
# Benchmark of `tepid size` on the 24 V demo: the smallest heater reaching 90 degC (reading)
# within 6 min in 2^4 corners plus nominal (the supply, resistance, room and airflow ranges of
# its guard: section), each corner's power bisected to 0.1 %. Target (issue 17): under 1 s.
# Prints the best and median of N runs (default 5) as "size_seconds best=... median=...".
# Usage: tests/bench/bench_size.sh [BUILD_DIR] [RUNS]
set -euo pipefail
here="$(cd "$(dirname "$0")/../.." && pwd)"
build="${1:-$here/build}"
runs="${2:-5}"
exe="$build/tepid"
config="$here/configs/workshop-bed-24v.yaml"
[ -x "$exe" ] || { echo "no $exe: build first" >&2; exit 2; }
times=()
for _ in $(seq "$runs"); do
  start=$(date +%s.%N)
  taskset -c 0 "$exe" size "$config" --reach 90degC --within 6min -q 2>/dev/null
  end=$(date +%s.%N)
  times+=("$(awk -v a="$start" -v b="$end" 'BEGIN { printf "%.6f", b - a }')")
done
printf '%s\n' "${times[@]}" | sort -g | awk -v n="$runs" '
  { t[NR] = $1 }
  END { printf "size_seconds best=%.3f median=%.3f runs=%d target=1.000\n", t[1], t[int((n + 1) / 2)], n
        exit (t[int((n + 1) / 2)] < 1.0 ? 0 : 1) }'
