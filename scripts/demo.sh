#!/usr/bin/env bash
# Installs the dependencies, builds sorbtrace and issues the demo datasheets for every job in
# example_inputs/ (output in demo_output/<scenario>/datasheet.pdf).
set -euo pipefail
cd "$(dirname "$0")/.."
jobs=$(nproc)

bash scripts/install-deps.sh
cmake -S . -B build -DCMAKE_BUILD_TYPE=Release >/dev/null
cmake --build build -j"$jobs" --target sorbtrace

status=0
for job in example_inputs/*/job.toml; do
  scenario=$(basename "$(dirname "$job")")
  ./build/pipeline/run/sorbtrace make "$job" --out "demo_output/$scenario" || status=$?
done
echo "demo datasheets:"
ls -1 demo_output/*/datasheet.pdf
exit "$status"
