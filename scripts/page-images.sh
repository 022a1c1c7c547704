#!/usr/bin/env bash
# Regenerates the README's page images (docs/datasheet-page1.png, docs/datasheet-page2.png)
# from a demo datasheet: the demo job is made afresh with the built binary into a temporary
# folder and its pages 1 and 2 rendered with pdftoppm (poppler-utils) at a fixed resolution.
# Deterministic: the same PDF gives the same PNG bytes (pdftoppm writes no time stamp).
#
# Usage: scripts/page-images.sh [BINARY]    (default build/pipeline/run/sorbtrace)
#   DEMO=<example_inputs folder> (default wood_fibre_board_vapour), RESOLUTION_DPI (default 60:
#   an A4 page of 595 x 842 pt becomes 497 x 702 pixels, the size the README lays out).
set -euo pipefail
cd "$(dirname "$0")/.."
binary=${1:-build/pipeline/run/sorbtrace}
demo=${DEMO:-wood_fibre_board_vapour}
dpi=${RESOLUTION_DPI:-60}
[[ -x "$binary" ]] || { echo "page-images.sh: no binary at $binary (build it first)" >&2; exit 2; }
command -v pdftoppm >/dev/null || { echo "page-images.sh: pdftoppm (poppler-utils) missing" >&2; exit 2; }

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
"$binary" make "example_inputs/$demo/job.toml" --out "$work/out" -q
for page in 1 2; do
  pdftoppm -png -r "$dpi" -f "$page" -l "$page" -singlefile "$work/out/datasheet.pdf" \
    "$work/page$page"
  # Replaced only when the bytes differ (the file's time stays otherwise).
  if ! cmp -s "$work/page$page.png" "docs/datasheet-page$page.png"; then
    cp "$work/page$page.png" "docs/datasheet-page$page.png"
    echo "wrote docs/datasheet-page$page.png"
  fi
done
