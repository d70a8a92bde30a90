#!/usr/bin/env bash
# Runs the Go tests of the reading and saving side, the pipeline and the
# headless command as Windows programs under Wine: the save's exchange
# (ReplaceFileW), renames over files, paths and messages on Windows.
# Part of `make test` (make wine-tests). The Wine prefix is made afresh in
# a temporary folder; nothing in the user's home is touched.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/apt-install.sh wine wine64 gcc-mingw-w64-x86-64
work=$(mktemp -d)
trap 'wineserver -k 2> /dev/null || true; rm -rf "$work"' EXIT
. packaging/wine-prefix.sh
# Read by internal/underwine (TempDir clean-up under Wine 8; it needs
# -checklinkname=0) and by TestWriteThroughSymlink, which skips.
export SLOPEWISE_UNDER_WINE=1
# package|build tags|tests that must have passed on Windows (not skipped)
suites=(
  "internal/io/save||TestExchangeSwaps TestEditAtTheExchange TestWorkbookChangedMeanwhile TestBigSheetsKept TestInPlaceKeepsWorkbookSettings TestWriteBesideCSV TestWriteResultsRoundTrip"
  "internal/io/workbook||TestRefusals"
  "internal/io/xlsx||"
  "internal/io/delimited||"
  "internal/pipeline||TestInteropCorpus"
  "cmd/app|nowindow|"
)
status=0
for s in "${suites[@]}"; do
  IFS='|' read -r pkg tags need <<< "$s"
  name=$(basename "$pkg")
  exe="$work/$name.test.exe" log="$work/$name.log"
  GOOS=windows GOARCH=amd64 CGO_ENABLED=0 go test -c -tags "$tags" -ldflags=-checklinkname=0 -o "$exe" "./$pkg"
  t0=$(wine_ms)
  # CI is unset: the tools CI requires of the Linux tests (LibreOffice,
  # R) are not Windows programs here.
  code=0
  (cd "$pkg" && timeout 1200 env -u CI wine "$exe" -test.short -test.v > "$log" 2>&1) || code=$?
  passed=$(grep -c -- '--- PASS' "$log" || true)
  skipped=$(grep -c -- '--- SKIP' "$log" || true)
  echo "$pkg under Wine: exit status $code, $passed passed, $skipped skipped, $(($(wine_ms) - t0)) ms"
  if [ "$code" != 0 ]; then
    grep -E -B2 -A8 -- '--- FAIL|^panic|^fatal' "$log" | head -60
    status=1
  fi
  for t in $need; do
    if ! grep -q -- "^--- PASS: $t " "$log"; then
      echo "$pkg: $t did not pass under Wine"
      status=1
    fi
  done
done
exit $status
