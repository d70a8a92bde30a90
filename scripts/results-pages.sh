#!/usr/bin/env bash
# Draws the printed pages of the demo's results sheet, and the first page
# of the Moderators sheet of a screen of the demo, as LibreOffice prints
# them, into OUTDIR (the README's pictures): the print test writes the
# PDFs, Ghostscript draws their pages.
# Usage: scripts/results-pages.sh [OUTDIR]
set -euo pipefail
out=${1:-docs/results}
"$(dirname "$0")/apt-install.sh" libreoffice-calc-nogui fonts-crosextra-carlito ghostscript
mkdir -p "$out"
pdfs=$(mktemp -d)
trap 'rm -rf "$pdfs"' EXIT
RESULTS_PAGES="$pdfs" go test -count=1 ./internal/pipeline -run TestResultsSheetPrintsLegibly
gs -q -dSAFER -sDEVICE=png16m -r80 -o "$out/results-page-%d.png" "$pdfs/results.pdf"
gs -q -dSAFER -sDEVICE=png16m -r80 -dFirstPage=1 -dLastPage=1 -o "$out/moderators-page-1.png" "$pdfs/moderators.pdf"
ls "$out"
