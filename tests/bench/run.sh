#!/usr/bin/env bash
# The whole benchmark suite (issue 11): builds tepid in Release in its own build directory and
# runs every benchmark, then the side-by-side comparison with a general-purpose reference solver
# (SciPy's solve_ivp BDF and a fixed-step explicit Euler, tests/bench/reference.py) on the same
# raw network files. Results: tests/bench/results/*.csv (machine-readable, gitignored), the
# scaling figure results/scaling.png, and Markdown tables on standard output.
#
#   tests/bench/run.sh [--docs]     (--docs also copies the figure to docs/performance-scaling.png)
#
# Environment: RUNS (timed runs per benchmark, median reported; default 5), BUILD (default
# build-bench), RAW_GRIDS (cells per side of the raw grids; default "8 16 32 64": 64 x 64 is the
# largest raw file within tepid's 1 MiB config limit), CONTROL_GRIDS (raw grids with an on-off
# controller; default "16"), BED_GRIDS (bed.grid sizes, default "20 40 80 160"), PYTHON
# (default /usr/bin/python3, Debian's, with python3-numpy, python3-scipy, python3-yaml),
# BENCH_INSTALL=1 (apt-get install what is missing).
#
# Timing: wall time of the whole process, median of RUNS runs, pinned to CPU 0 with taskset
# (the existing single-core benchmarks bench_five_node.sh, bench_guard.sh, bench_fit.sh are
# reused for warmup, guard and fit). Peak memory: one further run under /usr/bin/time -f %M.
# The machine may be shared: the load average is recorded before and after.
set -euo pipefail

here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
BUILD=${BUILD:-$root/build-bench}
RUNS=${RUNS:-5}
RAW_GRIDS=${RAW_GRIDS-8 16 32 64} # an empty list runs none
CONTROL_GRIDS=${CONTROL_GRIDS-16}
BED_GRIDS=${BED_GRIDS-20 40 80 160}
PYTHON=${PYTHON:-/usr/bin/python3}
out=$here/results
work=$out/work
log=$out/run.log
docs=0
[ "${1:-}" = --docs ] && docs=1
rm -rf "$work"
rm -f "$out"/*.csv "$out"/scaling.png "$out"/solvers.txt "$out"/tables.md
mkdir -p "$out" "$work"
: >"$log"
export OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1 MKL_NUM_THREADS=1 # one core for numpy/SciPy

say() { printf '%s\n' "$*" >&2; }
pin=()
if command -v taskset >/dev/null 2>&1; then
  pin=(taskset -c 0)
else
  say "no taskset: runs are not pinned"
fi

# ---- tools ----------------------------------------------------------------------------------
install_pkgs() { # Debian packages, only as root with apt-get
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    say "installing Debian packages: $*"
    apt-get install -y -qq "$@" >>"$log" 2>&1 || say "apt-get install $* failed (see $log)"
  fi
}
if [ ! -x /usr/bin/time ]; then
  say "no /usr/bin/time (Debian package 'time'): installing it for the peak-memory figures"
  install_pkgs time
fi
have_time=0
[ -x /usr/bin/time ] && have_time=1
[ $have_time = 1 ] || say "no /usr/bin/time: peak memory is not measured"
have_python=1
if ! "$PYTHON" -c pass 2>/dev/null; then
  have_python=0
  say "no Python at $PYTHON: the raw grids and the side-by-side comparison are skipped"
fi
missing=()
for m in numpy:python3-numpy scipy:python3-scipy yaml:python3-yaml; do
  "$PYTHON" -c "import ${m%%:*}" 2>/dev/null || missing+=("${m#*:}")
done
if [ ${#missing[@]} -gt 0 ] && [ "${BENCH_INSTALL:-0}" = 1 ]; then
  install_pkgs "${missing[@]}"
  missing=()
  for m in numpy:python3-numpy scipy:python3-scipy yaml:python3-yaml; do
    "$PYTHON" -c "import ${m%%:*}" 2>/dev/null || missing+=("${m#*:}")
  done
fi
have_py=1
if [ $have_python = 0 ]; then
  have_py=0
elif [ ${#missing[@]} -gt 0 ]; then
  have_py=0
  say "missing for the reference solver ($PYTHON): ${missing[*]}"
  say "  install with: apt-get install -y ${missing[*]}   (or run with BENCH_INSTALL=1)"
  say "  the side-by-side comparison is skipped"
fi

# ---- build ----------------------------------------------------------------------------------
say "building tepid (Release) in $BUILD"
cmake -S "$root" -B "$BUILD" -DCMAKE_BUILD_TYPE=Release -DBUILD_TESTING=OFF >>"$log" 2>&1
cmake --build "$BUILD" -j2 --target tepid bench_solvers bench_plot >>"$log" 2>&1
tepid=$BUILD/tepid

# ---- the machine ------------------------------------------------------------------------------
cc=$(sed -n 's/^CMAKE_C_COMPILER:[A-Z]*=//p' "$BUILD/CMakeCache.txt")
sundials=$(sed -n 's/^#define SUNDIALS_VERSION "\(.*\)"/\1/p' \
  /usr/include/sundials/sundials_config.h 2>/dev/null || true)
{
  lscpu_field() { lscpu | sed -n "s/^$1: *//p" | head -1; }
  hv=$(lscpu_field 'Hypervisor vendor')
  echo "cpu,$(lscpu_field 'Model name') (family $(lscpu_field 'CPU family'),"\
    "model $(lscpu_field Model)${hv:+; $hv guest})"
  echo "cores,$(getconf _NPROCESSORS_ONLN)"
  echo "memory_GiB,$(awk '/MemTotal/ { printf "%.1f", $2 / 1048576 }' /proc/meminfo)"
  echo "os,$(sed -n 's/^PRETTY_NAME="\(.*\)"/\1/p' /etc/os-release), kernel $(uname -r)"
  echo "compiler,$("$cc" --version | head -1)"
  echo "build,Release ($(sed -n 's/^CMAKE_C_FLAGS_RELEASE:[A-Z]*=//p' "$BUILD/CMakeCache.txt"))"
  echo "sundials,${sundials:-unknown}"
  if [ $have_py = 1 ]; then
    echo "python,$("$PYTHON" -c 'import sys, numpy, scipy
print("%s, numpy %s, scipy %s" % (sys.version.split()[0], numpy.__version__, scipy.__version__))')"
  fi
  echo "load_before,$(cut -d' ' -f1-3 /proc/loadavg)"
  echo "date,$(date -u +%Y-%m-%dT%H:%MZ)"
} >"$out/machine.csv"

# ---- helpers ----------------------------------------------------------------------------------
bench_csv=$out/benchmarks.csv
echo "benchmark,verb,unknowns,runs,wall_median_s,wall_min_s,wall_max_s,steps,rhs_evals,\
jac_evals,restarts,linear_solver,peak_rss_kB,cpu_s_one_run,note" >"$bench_csv"
row() { local IFS=,; echo "$*" >>"$bench_csv"; }

# Free temperatures of a config, from `tepid check` ("... (N with capacity) ...").
unknowns() { "$tepid" check "$1" 2>/dev/null | sed -n 's/.*(\([0-9]*\) with capacity).*/\1/p'; }

# One further run under /usr/bin/time, pinned: sets once_kb (peak resident memory, kB) and
# once_cpu (user + system CPU time, s, to 10 ms); both empty without /usr/bin/time.
once() {
  local u s
  once_kb='' once_cpu=''
  [ $have_time = 1 ] || return 0
  /usr/bin/time -f "%M %U %S" -o "$work/time.out" "${pin[@]}" "$@" >/dev/null 2>>"$log" || true
  read -r once_kb u s < <(tail -n 1 "$work/time.out")
  once_cpu=$(awk -v u="$u" -v s="$s" 'BEGIN { printf "%.2f", u + s }')
}
failed() { row "$1" "$2" "$3" "" "" "" "" "" "" "" "" "" "" "" "$4"; }

# A number from tepid's JSON ("key":<tab>value).
json_num() { sed -n "s/.*\"$2\":[[:space:]]*\([0-9.eE+-]*\).*/\1/p" "$1" | head -1; }
json_str() { sed -n "s/.*\"$2\":[[:space:]]*\"\([^\"]*\)\".*/\1/p" "$1" | head -1; }

# Median, min, max (s) of RUNS whole-process runs of a command, pinned; for verbs that have no
# benchmark script of their own (check, sweep). Prints "median min max".
time_runs() {
  local i t0 t1
  "$@" >/dev/null 2>>"$log" || return 1 # warm-up: page cache, CPU clock
  "$@" >/dev/null 2>>"$log" || return 1
  for ((i = 0; i < RUNS; i++)); do
    t0=$EPOCHREALTIME
    "$@" >/dev/null 2>>"$log" || return 1
    t1=$EPOCHREALTIME
    awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.6f\n", b - a }'
  done | sort -g | awk '{ t[NR] = $1 } END { if (NR == 0) exit 1
    m = (NR % 2) ? t[(NR + 1) / 2] : (t[NR / 2] + t[NR / 2 + 1]) / 2
    printf "%.6f %.6f %.6f\n", m, t[1], t[NR] }'
}

ms_to_s() { awk -v m="$1" 'BEGIN { printf "%.6f", m / 1000 }'; }

# A warmup benchmark through bench_five_node.sh (median of RUNS, pinned), then one run with
# --json for the solver's work and the peak memory. Sets w_median (s) for the caller.
w_median=
warmup_bench() { # NAME CONFIG [NOTE]
  local name=$1 cfg=$2 note=${3:-} txt med mn mx n
  txt=$(RUNS=$RUNS TARGET_MS='' TEPID=$tepid "$here/bench_five_node.sh" "$cfg" 2>>"$log") || {
    say "  $name: tepid warmup failed (see $log)"
    failed "$name" warmup "" failed
    w_median=
    return 1
  }
  echo "$txt" >>"$log"
  read -r med mn mx < <(sed -n \
    's/.*median \([0-9.]*\) ms (min \([0-9.]*\), max \([0-9.]*\)).*/\1 \2 \3/p' <<<"$txt")
  n=$(unknowns "$cfg")
  once "$tepid" warmup "$cfg" -q --json "$work/$name.json"
  w_median=$(ms_to_s "$med")
  row "$name" warmup "$n" "$RUNS" "$w_median" "$(ms_to_s "$mn")" "$(ms_to_s "$mx")" \
    "$(json_num "$work/$name.json" steps)" "$(json_num "$work/$name.json" rhs_evals)" \
    "$(json_num "$work/$name.json" jac_evals)" "$(json_num "$work/$name.json" restarts)" \
    "$(json_str "$work/$name.json" linear_solver)" "$once_kb" "$once_cpu" "$note"
  say "  $name: $n unknowns, median $med ms"
}

# ---- 1. tepid's own benchmarks ---------------------------------------------------------------
say "benchmarks (median of $RUNS, pinned to CPU 0)"
warmup_bench five-node "$root/configs/raw-five-node.yaml" "on-off; issue 16 target < 8 ms" || true
warmup_bench demo-warmup "$root/configs/workshop-bed-24v.yaml" "PID; thermistor and ADC" || true

demo=$root/configs/workshop-bed-24v.yaml
demo_n=$(unknowns "$demo")
gnote="target < 2 s NOT met"
txt=$("$here/bench_guard.sh" "$BUILD" "$RUNS" 2>>"$log") && gnote="target < 2 s met"
echo "$txt" >>"$log"
read -r gbest gmed < <(sed -n 's/.*best=\([0-9.]*\) median=\([0-9.]*\).*/\1 \2/p' <<<"$txt")
if [ -n "${gmed:-}" ]; then
  once "$tepid" guard "$demo" -q
  row guard guard "$demo_n" "$RUNS" "$gmed" "$gbest" "" "" "" "" "" "" "$once_kb" "$once_cpu" \
    "2^4 corners + nominal and 6 faults; $gnote; no solver totals in guard --json"
  say "  guard: median $gmed s"
else
  failed guard guard "$demo_n" failed
fi

fnote="target < 2 s NOT met"
txt=$("$here/bench_fit.sh" "$tepid" "$RUNS" 2>>"$log") && fnote="target < 2 s met"
echo "$txt" >>"$log"
read -r fbest fmed < <(sed -n 's/.*best \([0-9.]*\) s, median \([0-9.]*\) s.*/\1 \2/p' <<<"$txt")
fruns=$(sed -n 's/.* \([0-9]*\) model runs.*/\1/p' <<<"$txt")
if [ -n "${fmed:-}" ]; then
  once "$tepid" fit "$demo" --log "$root/configs/workshop-bed-24v-log.csv" \
    --free heater.resistance,losses.convection_scale,sensor.time_constant -q
  row fit fit "$demo_n" "$RUNS" "$fmed" "$fbest" "" "" "" "" "" "" "$once_kb" "$once_cpu" \
    "3 parameters; 1801-row log; ${fruns:-?} model runs; $fnote"
  say "  fit: median $fmed s"
else
  failed fit fit "$demo_n" failed
fi

# -- slot: tolerance study of 1,000 samples (tepid sweep, issue 8; another branch) --
SWEEP_ARGS=${SWEEP_ARGS:---spread heater.resistance=normal:5% \
--spread room.temperature=uniform:16degC:28degC --samples 1000 --seed 1}
if "$tepid" --help 2>/dev/null | grep -qE '^  sweep '; then
  # shellcheck disable=SC2086
  if read -r smed smin smax < <(time_runs "$tepid" sweep "$demo" $SWEEP_ARGS -q); then
    # shellcheck disable=SC2086
    once "$tepid" sweep "$demo" $SWEEP_ARGS -q
    row sweep-1000 sweep "$demo_n" "$RUNS" "$smed" "$smin" "$smax" "" "" "" "" "" "$once_kb" \
      "$once_cpu" "1000 samples; default jobs (both cores); wall time not pinned"
    say "  sweep: median $smed s"
  else
    failed sweep-1000 sweep "$demo_n" "failed: tepid sweep $SWEEP_ARGS (see run.log)"
    say "  sweep: failed with SWEEP_ARGS=$SWEEP_ARGS (see $log)"
  fi
else
  say "  sweep: skipped - tepid has no 'sweep' verb yet (issue 8, another branch)"
  failed sweep-1000 sweep "" "skipped: no sweep verb yet"
fi

# -- slot: bed.grid of 20 x 20 to 160 x 160 cells (issue 9; another branch) --
bed_cfg() {
  sed "s/^bed:.*/&\n  grid: [$1, $1]/" "$demo" >"$work/bed-grid-$1.yaml"
  echo "$work/bed-grid-$1.yaml"
}
if [ -z "$BED_GRIDS" ]; then
  say "  bed.grid: none asked for (BED_GRIDS is empty)"
elif "$tepid" check "$(bed_cfg "${BED_GRIDS%% *}")" >/dev/null 2>&1; then
  for n in $BED_GRIDS; do
    warmup_bench "bed-grid-$n" "$(bed_cfg "$n")" "bed.grid [$n, $n] on the 24 V demo" || true
  done
else
  say "  bed.grid: skipped - the key is not available yet (issue 9, another branch)"
  failed bed-grid warmup "" "skipped: no bed.grid key yet"
fi

# -- raw grids (tests/bench/make_raw_grid.py), the same files as the reference reads --
declare -A raw_cfg raw_time
raw_cfg[five-node]=$root/configs/raw-five-node.yaml
[ $have_python = 1 ] || RAW_GRIDS='' CONTROL_GRIDS=''
for n in $RAW_GRIDS; do
  f=$work/raw-grid-$n.yaml
  "$PYTHON" "$here/make_raw_grid.py" "$n" -o "$f"
  warmup_bench "raw-grid-$n" "$f" "raw form, no controller" && raw_time[raw-grid-$n]=$w_median
  raw_cfg[raw-grid-$n]=$f
done
for n in $CONTROL_GRIDS; do
  f=$work/raw-grid-$n-onoff.yaml
  "$PYTHON" "$here/make_raw_grid.py" "$n" --control --step 1 -o "$f" # output grid = tick grid
  warmup_bench "raw-grid-$n-onoff" "$f" "raw form, on-off every 1 s" &&
    raw_time[raw-grid-$n-onoff]=$w_median
  raw_cfg[raw-grid-$n-onoff]=$f
done
raw_time[five-node]=$(awk -F, '$1 == "five-node" { print $5 }' "$bench_csv")

# Load time alone (parse, units, assembly): tepid check on the raw files.
echo "network,unknowns,check_median_s" >"$out/load.csv"
for name in "${!raw_cfg[@]}"; do
  if read -r cmed _ _ < <(time_runs "${pin[@]}" "$tepid" check "${raw_cfg[$name]}"); then
    echo "$name,$(unknowns "${raw_cfg[$name]}"),$cmed" >>"$out/load.csv"
  fi
done

# ---- 2. side by side with SciPy and explicit Euler -------------------------------------------
ref_jsons=()
if [ $have_py = 1 ]; then
  say "reference solvers (SciPy BDF, explicit Euler), same files, pinned to CPU 0"
  for name in five-node $(for n in $RAW_GRIDS; do echo "raw-grid-$n"; done) \
    $(for n in $CONTROL_GRIDS; do echo "raw-grid-$n-onoff"; done); do
    cfg=${raw_cfg[$name]}
    [ -n "${raw_time[$name]:-}" ] || { say "  $name: no tepid time, skipped"; continue; }
    "$tepid" warmup "$cfg" -q --csv "$work/$name.csv" 2>>"$log"
    "$tepid" warmup "$cfg" -q --set run.tolerance=1e-10 --csv "$work/$name-tight.csv" 2>>"$log"
    if "${pin[@]}" "$PYTHON" "$here/reference.py" "$cfg" --tepid-csv "$work/$name.csv" \
      --ref-csv "$work/$name-tight.csv" --tepid-seconds "${raw_time[$name]}" \
      --tepid-rhs "$(json_num "$work/$name.json" rhs_evals)" --euler --runs "$RUNS" \
      --name "$name" --json "$work/$name-reference.json" 2>>"$log"; then
      ref_jsons+=("$work/$name-reference.json")
      say "  $name: done"
    else
      say "  $name: reference.py failed (see $log)"
    fi
  done
fi

# ---- 3. dense against KLU (TP_DENSE_MAX) ------------------------------------------------------
# bench_solvers takes the best of 3 integrations per size; its sub-millisecond figures move
# with the machine's load, so it runs RUNS times and the median of each column is kept.
for ((i = 1; i <= RUNS; i++)); do
  "${pin[@]}" "$BUILD/bench_solvers" 2>>"$log" | tail -n +2
done | awk -v runs="$RUNS" '
  function median(s,    n, v, i, j, t) {
    n = split(s, v, " ")
    for (i = 2; i <= n; i++) for (j = i; j > 1 && v[j - 1] + 0 > v[j] + 0; j--) {
      t = v[j]; v[j] = v[j - 1]; v[j - 1] = t }
    return (n % 2) ? v[(n + 1) / 2] : (v[n / 2] + v[n / 2 + 1]) / 2 }
  { if (!($1 in steps)) order[++k] = $1
    steps[$1] = $2; dense[$1] = dense[$1] " " $3; klu[$1] = klu[$1] " " $4 }
  END { printf "%6s %8s %12s %12s %8s\n", "nodes", "steps", "dense (ms)", "KLU (ms)", "KLU/dense"
    for (i = 1; i <= k; i++) { n = order[i]; d = median(dense[n]); s = median(klu[n])
      printf "%6d %8d %12.2f %12.2f %8.2f\n", n, steps[n], d, s, s / d }
    printf "(median of %d runs of bench_solvers, each the best of 3 integrations)\n", runs }' \
  >"$out/solvers.txt" || say "bench_solvers failed"

# ---- tables and figure ------------------------------------------------------------------------
echo "load_after,$(cut -d' ' -f1-3 /proc/loadavg)" >>"$out/machine.csv"

{
  echo "series,unknowns,seconds"
  awk -F, 'NR > 1 && $1 ~ /^raw-grid-[0-9]+$/ && $5 != "" {
    print "tepid warmup (whole process)," $3 "," $5 }' "$bench_csv"
  awk -F, 'NR > 1 && $1 ~ /^raw-grid-[0-9]+$/ {
    print "tepid check (load only)," $2 "," $3 }' "$out/load.csv" | sort -t, -k2 -g
  # whole process minus load: integration, steady states and report (an estimate)
  awk -F, 'FNR == NR { if (FNR > 1) load[$1] = $3; next }
    FNR > 1 && $1 ~ /^raw-grid-[0-9]+$/ && ($1 in load) && $5 > load[$1] {
      print "tepid warmup minus load," $3 "," $5 - load[$1] }' "$out/load.csv" "$bench_csv"
  awk -F, 'NR > 1 && $1 ~ /^bed-grid-[0-9]+$/ && $5 != "" {
    print "tepid warmup bed.grid (demo)," $3 "," $5 }' "$bench_csv"
} >"$out/scaling.csv"
if [ ${#ref_jsons[@]} -gt 0 ]; then
  "$PYTHON" "$here/reference.py" summarise --csv "$out/reference.csv" --scaling "$out/scaling.csv" \
    --load "$out/load.csv" "${ref_jsons[@]}" >"$work/reference.md"
fi
if [ "$(wc -l <"$out/scaling.csv")" -le 1 ]; then
  say "no grid timings: no figure"
elif "$BUILD/bench_plot" "$out/scaling.png" "$out/scaling.csv" \
  "time against unknowns: raw grids and the gridded demo, 30 simulated minutes, one core" 2>>"$log"; then
  [ $docs = 1 ] && cp "$out/scaling.png" "$root/docs/performance-scaling.png"
else
  say "bench_plot failed (see $log)"
fi

{
  echo "## Machine"
  echo
  echo "| | |"
  echo "| --- | --- |"
  sed 's/^\([^,]*\),\(.*\)$/| \1 | \2 |/' "$out/machine.csv"
  echo
  echo "## tepid benchmarks (whole process, median of $RUNS runs, pinned to CPU 0)"
  echo
  echo "| benchmark | verb | unknowns | wall median (s) | min - max (s) | CVODE steps |" \
    "RHS evals | Jacobians | restarts | linear solver | peak RSS (MB) | CPU (s, 1 run) | note |"
  echo "| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | --- | ---: | ---: | --- |"
  awk -F, 'NR > 1 {
    range = ($6 != "" && $7 != "") ? sprintf("%.3f - %.3f", $6, $7) \
          : ($6 != "" ? sprintf("best %.3f", $6) : "")
    med = $5 != "" ? sprintf("%.3f", $5) : "-"
    mb = $13 != "" ? sprintf("%.1f", $13 / 1024) : "-"
    note = $15; for (i = 16; i <= NF; i++) note = note "," $i
    printf "| %s | %s | %s | %s | %s | %s | %s | %s | %s | %s | %s | %s | %s |\n",
      $1, $2, $3, med, range, $8, $9, $10, $11, $12, mb, $14, note }' "$bench_csv"
  echo
  if [ -s "$work/reference.md" ]; then cat "$work/reference.md"; echo; fi
  echo "## Dense LU against KLU (bench_solvers, pinned to CPU 0)"
  echo
  echo '```'
  cat "$out/solvers.txt"
  echo '```'
} | tee "$out/tables.md"
say "results in $out: benchmarks.csv, reference.csv, load.csv, scaling.csv, scaling.png,"
say "  machine.csv, solvers.txt, tables.md; log run.log"
