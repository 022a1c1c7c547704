#!/usr/bin/env bash
# Builds the libFuzzer targets with clang (ASan + UBSan + coverage) and runs each one briefly
# (FUZZ_SECONDS each, default 12 s: about 72 s in all) on seeds from example_inputs/,
# tests/ingest/fixtures/, the bad-input corpus, the fuzz regressions, templates/ and (results.json
# of `verify`) fuzz/seeds/results_json/ and tests/bad_inputs/verify/. Any crash,
# sanitizer report, leak, hang (> 10 s per input) or exception other than InputError fails the
# run. Prints one line per target: executions, coverage (cov = edges, ft = features), corpus.
#   FUZZ_SECONDS=600   seconds per target (the long runs of docs/fuzzing.md)
#   FUZZ_TARGETS="job_file template"   only these targets
#   FUZZ_KEEP_CORPUS=1 keep the grown corpus in build-fuzz/corpus/<target>/ (else a temp dir)
#   FUZZ_SKIP_BUILD=1  run the targets already in build-fuzz/fuzz/ (no configure/build)
# Single process per target (the build machine is shared); run it under `nice` for long runs.
set -euo pipefail
cd "$(dirname "$0")/.."
seconds="${FUZZ_SECONDS:-12}"
jobs=$(nproc)
[ "$jobs" -gt 2 ] && jobs=2
targets="${FUZZ_TARGETS:-desiccator_csv vapor_log_csv retention_csv job_file template results_json}"
if [ "${FUZZ_SKIP_BUILD:-0}" != "1" ]; then
  launcher=""  # ccache, when installed, keeps unchanged files from being recompiled
  command -v ccache >/dev/null && launcher="-DCMAKE_CXX_COMPILER_LAUNCHER=ccache"
  # shellcheck disable=SC2086
  cmake -S . -B build-fuzz -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCMAKE_CXX_COMPILER=clang++ \
        -DSORBTRACE_BUILD_FUZZ=ON -DSORBTRACE_BUILD_TESTS=OFF -DSORBTRACE_BUILD_BENCH=OFF \
        -DSORBTRACE_WERROR=OFF $launcher >/dev/null
  build_targets=""
  for t in $targets; do build_targets="$build_targets fuzz_$t"; done
  # shellcheck disable=SC2086
  cmake --build build-fuzz -j"$jobs" --target $build_targets >/dev/null
fi

corpus_files() {  # corpus_files <target>: seed files, one per line
  case $1 in
    desiccator_csv)
      grep -rl --include='*.csv' -e '^"\?specimen' example_inputs tests/ingest/fixtures \
        tests/bad_inputs/corpus 2>/dev/null | grep -v retention || true ;;
    vapor_log_csv)
      grep -rl -e 'elapsed' --include='*.csv' --include='*.tsv' example_inputs \
        tests/ingest/fixtures tests/bad_inputs/corpus 2>/dev/null || true ;;
    retention_csv)
      grep -rl --include='*.csv' -e 'moisture' example_inputs tests/ingest/fixtures \
        tests/bad_inputs/corpus 2>/dev/null || true ;;
    job_file)
      find example_inputs tests/ingest/fixtures tests/bad_inputs/corpus -name 'job*.toml' \
        2>/dev/null || true ;;
    template)
      find templates tests/bad_inputs/corpus -name '*template*.toml' -o -path 'templates/*.toml' \
        2>/dev/null || true ;;
    results_json)
      find fuzz/seeds/results_json tests/bad_inputs/verify -type f -name '*.json' \
        2>/dev/null || true ;;
  esac
  [ -d "tests/bad_inputs/regressions/$1" ] && find "tests/bad_inputs/regressions/$1" -type f \
    ! -name '*.md' ! -name '.gitattributes'
  return 0
}

seeds() {  # seeds <target> <dir>
  local target=$1 dir=$2 f
  mkdir -p "$dir"
  for f in $(corpus_files "$target"); do
    if [ "$target" = job_file ]; then
      # The job fuzz target provides one data file, data.csv: point the seeds' datasets at it.
      sed -E 's/^(file[[:space:]]*=[[:space:]]*)"[^"]*"/\1"data.csv"/' "$f" | head -c 8192 \
        > "$dir/seed_$(echo "$f" | tr '/' '_')"
    else
      head -c 8192 "$f" > "$dir/seed_$(echo "$f" | tr '/' '_')"
    fi
  done
}

status=0
for t in $targets; do
  if [ "${FUZZ_KEEP_CORPUS:-0}" = "1" ]; then
    corpus="build-fuzz/corpus/$t"
  else
    corpus=$(mktemp -d)
  fi
  seeds "$t" "$corpus"
  log="build-fuzz/fuzz_$t.log"
  echo "== fuzz_$t: ${seconds}s, $(find "$corpus" -type f | wc -l) inputs to start from"
  if ! ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
      "build-fuzz/fuzz/fuzz_$t" "$corpus" -max_total_time="$seconds" -timeout=10 \
      -rss_limit_mb=2048 -max_len=8192 -print_final_stats=1 \
      -artifact_prefix="build-fuzz/crash-$t-" 2> "$log"; then
    echo "fuzz_$t FAILED (see $log and build-fuzz/crash-$t-*)"
    tail -40 "$log"
    status=1
  else
    execs=$(grep -o 'stat::number_of_executed_units: [0-9]*' "$log" | grep -o '[0-9]*$' || true)
    final=$(grep -E '^#[0-9]+' "$log" | tail -1 | grep -oE 'cov: [0-9]+ ft: [0-9]+ corp: [0-9]+/[^ ]+' || true)
    echo "fuzz_$t ok: ${execs:-?} executions in ${seconds}s; ${final:-no stats}"
  fi
  [ "${FUZZ_KEEP_CORPUS:-0}" = "1" ] || rm -rf "$corpus"
done
exit $status
