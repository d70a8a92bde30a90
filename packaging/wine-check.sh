#!/usr/bin/env bash
# Runs the Windows programs' headless analysis of the demo workbook under
# Wine and compares their JSON with the Linux program's, byte for byte;
# also checks that a bad command line's exit status (2) comes through.
# Usage, after `make dist`: packaging/wine-check.sh
# Not part of make test: Wine is large and its first start is slow.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/apt-install.sh wine wine64 unzip gcc-mingw-w64-x86-64
version=$(sed -n 's/^ *Version *= *"\([^"]*\)".*/\1/p' FyneApp.toml)
name="slopewise-$version"
work=$(mktemp -d)
trap 'wineserver -k 2> /dev/null || true; rm -rf "$work"' EXIT
mkdir -p "$work/win" "$work/lin" "$work/demo"
(cd "$work/win" && unzip -q "$OLDPWD/dist/$name-windows-amd64.zip")
tar -xzf "dist/$name-linux-amd64.tar.gz" -C "$work/lin"
lin="$work/lin/$name/bin/slopewise"
win="$work/win/$name"
"$lin" demo "$work/demo" > /dev/null
# shellcheck source=packaging/wine-prefix.sh
. packaging/wine-prefix.sh
cd "$work/demo"
args=(analyze slopewise-demo.xlsx --outcome earnings_6m --treatment coached --moderator region
  --controls age,baseline_score --cluster site --randomized --planned --dry-run --json)
ms() { wine_ms; }

timed() { # timed LABEL OUT COMMAND…: run, keep stdout, print the time
  local label=$1 out=$2 t0
  shift 2
  t0=$(ms)
  "$@" > "$out" 2> "$out.err"
  printf '%-44s %6d ms\n' "$label" "$(($(ms) - t0))"
}
timed "Linux bin/slopewise" linux.json "$lin" "${args[@]}"
timed "Wine slopewise.com (console)" com.json wine "$win/slopewise.com" "${args[@]}"
timed "Wine Slopewise.exe (GUI, stdout redirected)" exe.json wine "$win/Slopewise.exe" "${args[@]}"

status=0
for f in com.json exe.json; do
  if cmp -s linux.json "$f"; then
    echo "$f: identical to the Linux program's JSON ($(wc -c < "$f") bytes)"
  else
    echo "$f: DIFFERS from the Linux program's JSON:"
    diff <(tr ',' '\n' < linux.json) <(tr ',' '\n' < "$f") | head -40 || true
    status=1
  fi
done
set +e
wine "$win/slopewise.com" analyze > /dev/null 2>&1
code=$?
set -e
if [ "$code" = 2 ]; then
  echo "exit status of a bad command line under Wine: 2, as on Linux"
else
  echo "exit status of a bad command line under Wine: $code, want 2"
  status=1
fi
echo "the effects by group, as all three printed them:"
grep -E '"(label|estimate)"' linux.json | head -8 | paste - - || true
exit $status
