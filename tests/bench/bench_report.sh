#!/usr/bin/env bash
# Benchmark of `tepid report` (issue 19): the 24 V demo's HTML review (target under 2 s), the
# reflow demo's with its programme and the time above 217 degC (target under 2 s) and the
# gridded demo's (configs/small-pad-grid.yaml, target under 5 s), best and median of N runs
# (default 3), printed as "report_<demo>_seconds best=... median=...": as a user runs it, on
# every processor (guard's runs go to threads, docs/guard.md), the figure the target is
# checked on; and pinned to one core, printed as "report_<demo>_one_core_seconds", for
# comparison. The report runs warmup, steady, cool, budget and guard and draws every figure, so
# it costs about their sum plus PLplot's SVG output. Exits 1 when a median misses its target.
# Usage: tests/bench/bench_report.sh [BUILD_DIR] [RUNS]
set -euo pipefail
here="$(cd "$(dirname "$0")/../.." && pwd)"
build="${1:-$here/build}"
runs="${2:-3}"
exe="$build/tepid"
[ -x "$exe" ] || { echo "no $exe: build first" >&2; exit 2; }
out="$(mktemp -d)"
trap 'rm -rf "$out"' EXIT
status=0
for case in workshop-bed-24v:2.0: reflow-hotplate-230v:2.0:--above=217degC small-pad-grid:5.0:; do
  demo="${case%%:*}"
  rest="${case#*:}"
  target="${rest%%:*}"
  extra="${rest#*:}"
  for pin in "" "taskset -c 0"; do
    times=()
    for _ in $(seq "$runs"); do
      start=$(date +%s.%N)
      # shellcheck disable=SC2086 # $pin and $extra are words or nothing
      $pin "$exe" report "$here/configs/$demo.yaml" $extra -o "$out/review.html" -q 2>/dev/null
      end=$(date +%s.%N)
      times+=("$(awk -v a="$start" -v b="$end" 'BEGIN { printf "%.6f", b - a }')")
    done
    if [ -z "$pin" ]; then name="$demo"; else name="${demo}_one_core"; fi
    printf '%s\n' "${times[@]}" | sort -g | awk -v n="$runs" -v d="$name" -v t="$target" \
      -v check="$([ -z "$pin" ] && echo 1 || echo 0)" '
      { s[NR] = $1 }
      END { printf "report_%s_seconds best=%.3f median=%.3f runs=%d target=%.3f\n", d, s[1],
                   s[int((n + 1) / 2)], n, t
            exit (check && s[int((n + 1) / 2)] >= t ? 1 : 0) }' || status=1
  done
done
exit "$status"
