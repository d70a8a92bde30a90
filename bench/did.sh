#!/usr/bin/env bash
# The before-and-after benchmark of issue 14: a whole `slopewise analyze`
# run (read, fit, write the results workbook) on 1,000,000 rows of 100,000
# units measured in 10 years, 5 before the programme and 5 after, with unit
# effects and CR1 by unit, beside the same model in statsmodels + pandas
# (bench/reference_did.py, which demeans by hand: 100,000 unit indicators
# do not fit as a dense design). Prints wall time and peak memory of each
# and checks that both give the same effects and standard errors (1e-8
# relative). The data are generated (slopebench panel, a known truth: 1,
# 2 and 3 by region) into a temporary folder and removed afterwards.
#
#   bench/did.sh [-units 100000] [-years 10]
set -euo pipefail
cd "$(dirname "$0")/.."
units=100000 years=10
while [ $# -gt 0 ]; do
  case "$1" in
    -units) units=$2; shift 2 ;;
    -years) years=$2; shift 2 ;;
    *) echo "usage: bench/did.sh [-units N] [-years Y]" >&2; exit 2 ;;
  esac
done
for p in python3-statsmodels python3-pandas time; do
  dpkg -s "$p" >/dev/null 2>&1 || { echo "bench/did.sh needs the Debian package $p" >&2; exit 1; }
done
mkdir -p bin
go build -o bin/slopewise ./cmd/app
go build -o bin/slopebench ./bench/cmd/slopebench
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
bin/slopebench panel -units "$units" -years "$years" -out "$work/panel.csv"
measure() { # label, command…: prints "label wall peak"
  local label=$1; shift
  /usr/bin/time -f "%e %M" -o "$work/time" "$@" > "$work/$label.json" 2> "$work/$label.err" || { cat "$work/$label.err" >&2; exit 1; }
  read -r wall kib < "$work/time"
  printf "%-12s %8.2f s %8.0f MiB\n" "$label" "$wall" "$(echo "$kib / 1024" | bc -l)"
}
echo "$(wc -l < "$work/panel.csv") lines, $units units, $years years; $(nproc) CPUs"
measure slopewise bin/slopewise analyze "$work/panel.csv" --outcome earnings --treatment coached --period post \
  --unit unit --unit-effects --moderator region --controls age --randomized --json
measure statsmodels /usr/bin/python3 bench/reference_did.py "$work/panel.csv"
/usr/bin/python3 - "$work/slopewise.json" "$work/statsmodels.json" <<'PY'
import json, sys
sw, ref = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
worst = 0.0
for g in sw["groups"]:
    r = ref["effects"][g["label"]]
    for k in ("estimate", "se"):
        worst = max(worst, abs(g[k] - r[k]) / abs(r[k]))
print(f"effects and standard errors agree to {worst:.1e} relative (statsmodels read {ref['read_s']:.2f} s, fit {ref['fit_s']:.2f} s)")
sys.exit(0 if worst < 1e-8 else 1)
PY
