#!/usr/bin/env bash
# Makes the interoperability corpus: the same invented data set written by
# every workbook writer this Debian 12 machine can install, one family of
# features per file, with manifest.json saying what a correct reader must
# get (expected fits from statsmodels, not from Slopewise).
#
# Usage: scripts/interop/make_corpus.sh [--out DIR] [--big DIR | --no-big]
#                                       [--writeback BIN]
#   --out DIR        where the corpus goes (default testdata/interop)
#   --big DIR        where the two 50,000-row files and their manifest go
#                    (default: a new temporary directory; never committed)
#   --no-big         skip the 50,000-row files
#   --writeback BIN  afterwards, run BIN (the slopewise command-line
#                    program) on a copy of every file and check what it
#                    wrote back (scripts/interop/writeback.py)
#
# It installs nothing. What it needs, and how to get it:
#   apt-get install python3-openpyxl python3-xlsxwriter python3-statsmodels \
#     python3-pandas python3-numpy libreoffice-calc-nogui python3-uno gnumeric
#   (cd scripts/interop && npm ci)
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
repo="$(cd "$here/../.." && pwd)"
out="$repo/testdata/interop"
big=""
nobig=0
writeback=""
while [ $# -gt 0 ]; do
  case "$1" in
    --out) out="$2"; shift 2 ;;
    --big) big="$2"; shift 2 ;;
    --no-big) nobig=1; shift ;;
    --writeback) writeback="$2"; shift 2 ;;
    -h|--help) sed -n '2,21p' "$0"; exit 0 ;;
    *) echo "make_corpus.sh: unknown argument $1" >&2; exit 2 ;;
  esac
done

# Debian's python3, not a python from PATH: the writers and statsmodels are
# Debian's packages.
PY=/usr/bin/python3
missing=()
[ -x "$PY" ] || missing+=("/usr/bin/python3 (apt-get install python3)")
if [ -x "$PY" ]; then
  for m in openpyxl:python3-openpyxl xlsxwriter:python3-xlsxwriter statsmodels:python3-statsmodels \
           pandas:python3-pandas numpy:python3-numpy uno:python3-uno; do
    "$PY" -s -c "import ${m%%:*}" 2>/dev/null || missing+=("python module ${m%%:*} (apt-get install ${m##*:})")
  done
fi
command -v soffice >/dev/null || missing+=("soffice (apt-get install libreoffice-calc-nogui)")
command -v ssconvert >/dev/null || missing+=("ssconvert (apt-get install gnumeric)")
command -v node >/dev/null || missing+=("node (apt-get install nodejs npm)")
for p in exceljs xlsx; do
  [ -f "$here/node_modules/$p/package.json" ] || missing+=("node package $p (cd scripts/interop && npm ci)")
done
if [ -n "$writeback" ] && [ ! -x "$writeback" ]; then
  missing+=("the program given to --writeback: $writeback")
fi
if [ ${#missing[@]} -gt 0 ]; then
  echo "make_corpus.sh: missing:" >&2
  printf '  %s\n' "${missing[@]}" >&2
  exit 2
fi

work="$(mktemp -d -t slopewise-interop-XXXXXX)"
trap 'rm -rf "$work"' EXIT
frag="$work/fragments"
mkdir -p "$frag" "$out"
# Start clean: the writers' folders and the manifest are all made here.
rm -rf "$out"/{openpyxl,xlsxwriter,libreoffice,gnumeric,exceljs,sheetjs} "$out/manifest.json"

export INTEROP_OUT="$out" INTEROP_FRAGMENTS="$frag" INTEROP_VBA_BIN="$work/vbaProject.bin"
run() { echo "+ $*"; "$@"; }

run "$PY" -s "$here/gen_data.py" "$out/data.csv" --rows 60 --seed 20240305
run "$PY" -s "$here/w_openpyxl.py"
run "$PY" -s "$here/w_libreoffice.py" "$work/libreoffice"   # before xlsxwriter: the VBA project
run "$PY" -s "$here/w_xlsxwriter.py"
run "$PY" -s "$here/w_gnumeric.py" "$work/gnumeric"
run node "$here/w_exceljs.mjs"
run node "$here/w_sheetjs.mjs"
run "$PY" -s "$here/expected.py" "$frag" "$out/data.csv" "$out/manifest.json"
run "$PY" -s "$here/verify.py" "$frag" "$out" "$out/data.csv" --lo-csv \
  openpyxl/formulas_no_result_used.xlsx xlsxwriter/fullcalc_mixed_zeros.xlsx \
  exceljs/formulas_no_result_shared.xlsx sheetjs/strings_str.xlsx gnumeric/plain_from_csv.xlsx \
  libreoffice/formulas_saved.xlsx
echo "corpus: $(find "$out" -name '*.xls[xm]' | wc -l) workbooks, $(du -sh "$out" | cut -f1) in $out"

if [ "$nobig" = 0 ]; then
  [ -n "$big" ] || big="$(mktemp -d -t slopewise-interop-big-XXXXXX)"
  mkdir -p "$big"
  rm -rf "$big"/{openpyxl,libreoffice} "$big/manifest.json"
  bigfrag="$work/big-fragments"
  mkdir -p "$bigfrag"
  INTEROP_OUT="$big" INTEROP_FRAGMENTS="$bigfrag" run "$PY" -s "$here/gen_data.py" "$big/data.csv" --rows 50000 --seed 20240306
  INTEROP_OUT="$big" INTEROP_FRAGMENTS="$bigfrag" run "$PY" -s "$here/w_big.py" "$work/big"
  run "$PY" -s "$here/expected.py" "$bigfrag" "$big/data.csv" "$big/manifest.json"
  run "$PY" -s "$here/verify.py" "$bigfrag" "$big" "$big/data.csv" --max-bytes 0
  echo "big files: $big"
fi

if [ -n "$writeback" ]; then
  run "$PY" -s "$here/writeback.py" "$writeback" "$out"
fi
