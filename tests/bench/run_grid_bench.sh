#!/bin/sh
# Benchmark of gridded plates (docs/grid.md, "Performance"): the 100 x 100 x 3 case under PID
# control sampled every second for 30 simulated minutes (whole process: elapsed and CPU time,
# peak memory; best of three runs), then how the time grows from 20 x 20 to 160 x 160 cells
# (one run each). Prints Markdown tables. Needs GNU time (/usr/bin/time).
#   tests/bench/run_grid_bench.sh [TEPID]     (default: build/tepid)
set -eu
here=$(cd "$(dirname "$0")" && pwd)
tepid=${1:-$here/../../build/tepid}
cfg=$here/grid-100x100x3.yaml
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

# One run: prints "elapsed user peak_kB" and keeps the summary's solver line in $tmp/line.
run() {
    /usr/bin/time -f "%e %U %M" -o "$tmp/time" "$tepid" warmup "$cfg" "$@" > "$tmp/out"
    sed -n 3p "$tmp/out" > "$tmp/line"
    cat "$tmp/time"
}

echo "machine: $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ *//'),"\
     "$(nproc) cores, load $(cut -d' ' -f1-3 /proc/loadavg)"
echo
echo "| run | elapsed (s) | CPU user (s) | peak memory (MB) |"
echo "| --- | --- | --- | --- |"
for i in 1 2 3; do
    set -- $(run)
    echo "| 100 x 100 x 3, run $i | $1 | $2 | $(($3 / 1024)) |"
done
echo
echo "solver: $(sed 's/^ *//' "$tmp/line")"
echo
echo "| cells | unknowns | elapsed (s) | CPU user (s) | peak memory (MB) | per unknown (us) |"
echo "| --- | --- | --- | --- | --- | --- |"
for n in 20 40 80 100 160; do
    set -- $(run --set "bed.grid=[$n, $n]")
    u=$((3 * n * n + 1))
    echo "| $n x $n | $u | $1 | $2 | $(($3 / 1024)) | $(awk "BEGIN {printf \"%.0f\", $2 / $u * 1e6}") |"
done
