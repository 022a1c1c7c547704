#!/usr/bin/env bash
# clang-format check and clang-tidy (config: .clang-format, .clang-tidy) on the project's own
# sources. Exit non-zero on any finding. Needs build/compile_commands.json (scripts/test.sh
# or `cmake -B build` makes it).
#
# Usage: scripts/lint.sh           clang-format on every source, function size of the report
#                                  stage (scripts/function_size.py); clang-tidy on the .cc files
#                                  changed against the base (see below), 2 files at a time
#        scripts/lint.sh --all     clang-tidy on every .cc file as well (about 6 min on the
#                                  2-core reference machine; 67 files)
#
# The base of the changed-file mode is $SORBTRACE_LINT_BASE if set, else the merge base with
# origin/main, else with main, else HEAD~1 (none in a shallow clone of one commit: then only
# clang-format runs); uncommitted changes count as changed. clang-tidy
# parses a file with all its headers (Ceres and Eigen make that 5-20 s a file), so checking
# only what a change touches keeps the CI step to about a minute for a typical change;
# clang-format on everything takes 2 s. A .cc file whose header changed is checked too.
set -euo pipefail
cd "$(dirname "$0")/.."
[ -f build/compile_commands.json ] || cmake -S . -B build -DCMAKE_BUILD_TYPE=Release >/dev/null
tidy_jobs=2

files=$(git ls-files 'pipeline/*.cc' 'pipeline/*.h' 'fitters/*.cc' 'fitters/*.h')
echo "== clang-format"
# shellcheck disable=SC2086
clang-format --dry-run --Werror $files

# Function length (DEVELOPERS.md, Tests: every report-stage function at most 80 lines).
echo "== function size (pipeline/report)"
python3 scripts/function_size.py --max-lines 80 --top 3 pipeline/report

all_sources=$(git ls-files 'pipeline/*.cc' 'fitters/*.cc')
if [ "${1:-}" = "--all" ]; then
  sources=$all_sources
else
  base=${SORBTRACE_LINT_BASE:-}
  if [ -z "$base" ]; then
    for candidate in origin/main main; do
      if git rev-parse -q --verify "$candidate" >/dev/null &&
        [ "$(git rev-parse "$candidate")" != "$(git rev-parse HEAD)" ]; then
        base=$(git merge-base "$candidate" HEAD)
        break
      fi
    done
  fi
  if [ -z "$base" ] && git rev-parse -q --verify HEAD~1 >/dev/null; then base=HEAD~1; fi
  if [ -z "$base" ]; then
    echo "== clang-tidy skipped: no base commit to compare with (shallow clone?);" \
      "run scripts/lint.sh --all"
    exit 0
  fi
  changed=$( (git diff --name-only "$base" -- pipeline fitters; git ls-files --others \
    --exclude-standard pipeline fitters) | sort -u)
  sources=""
  for file in $changed; do
    case "$file" in
      *.cc) [ -f "$file" ] && sources="$sources $file" ;;
      *.h)  # the .cc files of the same folder include their header
        for cc in $(printf '%s\n' $all_sources | grep "^$(dirname "$file")/" || true); do
          sources="$sources $cc"
        done ;;
    esac
  done
  sources=$(printf '%s\n' $sources | sort -u | grep . || true)
  echo "== clang-tidy on $(printf '%s\n' $sources | grep -c . || true) file(s) changed since $base"
fi
[ -n "$sources" ] || { echo "== clang-tidy: nothing to check"; exit 0; }
echo "== clang-tidy ($tidy_jobs at a time)"
report=$(mktemp)
trap 'rm -f "$report"' EXIT
printf '%s\n' $sources | xargs -P "$tidy_jobs" -n 2 clang-tidy -p build --quiet \
  --extra-arg=-Wno-unknown-warning-option 2>/dev/null | tee "$report"
! grep -q "warning:" "$report"
