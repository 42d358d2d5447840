#!/usr/bin/env bash
# Benchmark of `tepid guard` on the 24 V demo: 2^4 corners plus nominal (supply, resistance,
# room, airflow ranges, with a gust and a cold sheet during hold) and 6 faults from the cold
# start and from hold. Target (issue 6): under 2 s on one core. Prints the best and median of
# N runs (default 5) as "guard_seconds best=... median=...".
# Usage: tests/bench/bench_guard.sh [BUILD_DIR] [RUNS]
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
  taskset -c 0 "$exe" guard "$config" -q 2>/dev/null
  end=$(date +%s.%N)
  times+=("$(awk -v a="$start" -v b="$end" 'BEGIN { printf "%.6f", b - a }')")
done
printf '%s\n' "${times[@]}" | sort -g | awk -v n="$runs" '
  { t[NR] = $1 }
  END { printf "guard_seconds best=%.3f median=%.3f runs=%d target=2.000\n", t[1], t[int((n + 1) / 2)], n
        exit (t[int((n + 1) / 2)] < 2.0 ? 0 : 1) }'
