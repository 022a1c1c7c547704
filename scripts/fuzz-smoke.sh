#!/usr/bin/env bash
# Builds the libFuzzer targets with clang (ASan + UBSan + coverage) and runs each one briefly
# (FUZZ_SECONDS each, default 12 s: about 60 s in all) on seeds from example_inputs/,
# tests/ingest/fixtures/ and templates/. Any crash, sanitizer report, leak, hang (> 10 s per
# input) or exception other than InputError fails the run. For the long runs of the
# hardening work use e.g. FUZZ_SECONDS=600.
set -euo pipefail
cd "$(dirname "$0")/.."
seconds="${FUZZ_SECONDS:-12}"
jobs=$(nproc)
cmake -S . -B build-fuzz -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCMAKE_CXX_COMPILER=clang++ \
      -DSORBTRACE_BUILD_FUZZ=ON -DSORBTRACE_BUILD_TESTS=OFF -DSORBTRACE_BUILD_BENCH=OFF \
      -DSORBTRACE_WERROR=OFF >/dev/null
targets="desiccator_csv vapor_log_csv retention_csv job_file template"
for t in $targets; do cmake --build build-fuzz -j"$jobs" --target "fuzz_$t" >/dev/null; done

seeds() {  # seeds <target> <dir>
  local dir=$2
  mkdir -p "$dir"
  case $1 in
    desiccator_csv) files=$(grep -rl --include='*.csv' -e '^specimen' example_inputs tests/ingest/fixtures 2>/dev/null | grep -v retention || true) ;;
    vapor_log_csv)  files=$(grep -rl --include='*.csv' -e 'elapsed' example_inputs tests/ingest/fixtures 2>/dev/null || true) ;;
    retention_csv)  files=$(grep -rl --include='*.csv' -e 'moisture' example_inputs tests/ingest/fixtures 2>/dev/null || true) ;;
    job_file)       files=$(find example_inputs tests/ingest/fixtures -name '*.toml' 2>/dev/null || true) ;;
    template)       files=$(find templates -name '*.toml') ;;
  esac
  for f in $files; do head -c 8192 "$f" > "$dir/$(echo "$f" | tr '/' '_')"; done
}

status=0
for t in $targets; do
  corpus=$(mktemp -d)
  seeds "$t" "$corpus"
  echo "== fuzz_$t: ${seconds}s, $(ls "$corpus" | wc -l) seeds"
  if ! ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
      "build-fuzz/fuzz/fuzz_$t" "$corpus" -max_total_time="$seconds" -timeout=10 \
      -rss_limit_mb=2048 -max_len=8192 -print_final_stats=1 \
      -artifact_prefix="build-fuzz/crash-$t-" 2> "build-fuzz/fuzz_$t.log"; then
    echo "fuzz_$t FAILED (see build-fuzz/fuzz_$t.log and build-fuzz/crash-$t-*)"
    tail -40 "build-fuzz/fuzz_$t.log"
    status=1
  else
    grep -E "stat::number_of_executed_units|cov:" "build-fuzz/fuzz_$t.log" | tail -2
  fi
  rm -rf "$corpus"
done
exit $status
