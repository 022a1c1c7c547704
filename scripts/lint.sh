#!/usr/bin/env bash
# clang-format check and clang-tidy (config: .clang-format, .clang-tidy) on the project's own
# sources. Exit non-zero on any finding. Needs build/compile_commands.json (scripts/test.sh
# or `cmake -B build` makes it).
set -euo pipefail
cd "$(dirname "$0")/.."
[ -f build/compile_commands.json ] || cmake -S . -B build -DCMAKE_BUILD_TYPE=Release >/dev/null
files=$(git ls-files 'pipeline/*.cc' 'pipeline/*.h' 'fitters/*.cc' 'fitters/*.h')
echo "== clang-format"
clang-format --dry-run --Werror $files
echo "== clang-tidy"
sources=$(git ls-files 'pipeline/*.cc' 'fitters/*.cc')
printf '%s\n' $sources | xargs -P "$(nproc)" -n 4 clang-tidy -p build --quiet --extra-arg=-Wno-unknown-warning-option 2>/dev/null | tee /tmp/sorbtrace-tidy.txt
! grep -q "warning:" /tmp/sorbtrace-tidy.txt
