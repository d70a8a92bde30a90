#!/usr/bin/env bash
# The benchmark of issue 7: whole `slopewise analyze` runs beside the
# reference pipeline (bench/reference.py: statsmodels + pandas + openpyxl
# from Debian), at 10,000, 100,000 and 1,000,000 rows, as .csv and .xlsx,
# with HC3 and CR1; then the peak memory of CSV runs at 1,000,000 and
# 10,000,000 rows. The data are generated into a temporary folder and
# removed afterwards. Takes about 15 minutes; the 1,000,000-row workbook
# read by openpyxl is most of it.
#
#   bench/run.sh                         # everything
#   bench/run.sh -rows 10000,100000 -stream-rows 1000000   # quicker
set -euo pipefail
cd "$(dirname "$0")/.."
missing=""
for p in python3-statsmodels python3-pandas python3-openpyxl time; do
  dpkg -s "$p" >/dev/null 2>&1 || missing="$missing $p"
done
if [ -n "$missing" ]; then
  SUDO=""; [ "$(id -u)" = 0 ] || SUDO=sudo
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends $missing
fi
mkdir -p bin
go build -o bin/slopewise ./cmd/app
go build -o bin/slopebench ./bench/cmd/slopebench
exec bin/slopebench run -slopewise bin/slopewise -python /usr/bin/python3 -reference bench/reference.py "$@"
