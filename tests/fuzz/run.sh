#!/usr/bin/env bash
# Run every libFuzzer target of a fuzz build for a bounded time each, with its seed corpus and
# dictionary. A crash, sanitizer report, leak or timeout makes this script fail; the input that
# did it is left in BUILD/fuzz-artifacts/. usage: tests/fuzz/run.sh BUILD_DIR [SECONDS]
set -euo pipefail
src="$(cd "$(dirname "$0")/../.." && pwd)"
build="$(cd "${1:?usage: tests/fuzz/run.sh BUILD_DIR [SECONDS]}" && pwd)"
secs="${2:-60}"
targets="config units log"

export ASAN_OPTIONS="${ASAN_OPTIONS:-detect_leaks=1}"
export LSAN_OPTIONS="suppressions=$src/tests/lsan.supp"
export UBSAN_OPTIONS="${UBSAN_OPTIONS:-halt_on_error=1:print_stacktrace=1}"
mkdir -p "$build/fuzz-artifacts"
for t in $targets; do
  seeds="$build/fuzz-seeds/$t"
  corpus="$build/fuzz-corpus/$t"
  rm -rf "$seeds"
  mkdir -p "$seeds" "$corpus"
  case "$t" in
    config)
      # Every demo config and every catalogue input (their directive lines are YAML comments).
      cp "$src"/configs/*.yaml "$src"/tests/bad/*.yaml "$src"/tests/bad/inputs/* "$seeds"/
      # And the demos with --set assignments after a NUL byte (fuzz_config.c).
      for f in "$src"/configs/*.yaml; do
        { cat "$f"; printf '\0heater.power=150 W\0bed.layers.0.thickness=2 mm\0run=&r {step: *r}'; } \
          > "$seeds/set-$(basename "$f")"
      done ;;
    units)
      # One quantity per file, from the committed list.
      n=0
      while IFS= read -r line; do
        n=$((n + 1))
        printf '%s' "$line" > "$seeds/q$n"
      done < "$src/tests/fuzz/units.seeds" ;;
    log)
      # The demo log and the catalogue's logs.
      cp "$src"/configs/*.csv "$seeds"/
      for f in "$src"/tests/bad/inputs/*.csv; do
        [ -e "$f" ] && cp "$f" "$seeds"/
      done ;;
  esac
  echo "== fuzz_$t for ${secs} s"
  set +e
  "$build/tests/fuzz_$t" -max_total_time="$secs" -timeout=10 -rss_limit_mb=2048 \
    -dict="$src/tests/fuzz/$t.dict" -artifact_prefix="$build/fuzz-artifacts/$t-" \
    -print_final_stats=1 "$corpus" "$seeds" > "$build/fuzz-$t.log" 2>&1
  status=$?
  set -e
  # libFuzzer's progress lines start with '#'; show the rest (findings, final stats).
  grep -v '^#' "$build/fuzz-$t.log" | grep -v '^"' | tail -n 40
  execs="$(sed -n 's/^stat::number_of_executed_units: *//p' "$build/fuzz-$t.log")"
  echo "fuzz_$t: ${execs:-?} executions, exit status $status"
  if [ "$status" != 0 ]; then
    echo "fuzz_$t found a problem; the input is in $build/fuzz-artifacts/" >&2
    exit 1
  fi
done
