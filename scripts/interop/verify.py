"""Checks every file of the corpus against what its fragment says.

Usage: verify.py FRAGMENTS_DIR OUT_DIR DATA.csv [--lo-csv FILE...]

For each file:
  - the XML facts of its _verify list (a regex present in, or absent from,
    the zip members whose names match);
  - read back with openpyxl (formulas and cached values): the sheet, the
    header, the table, the rows; every model column without formulas equals
    data.csv; a column marked "saved" has cached values equal to data.csv; a
    column marked "computed" or "missing" holds formulas; the rows the
    expected fit leaves out are exactly those with an error value in a
    model column; the date checks hold.
With --lo-csv, the named files are also converted to CSV by LibreOffice
headless and the outcome column compared with data.csv.
Prints one line per file and exits 1 if anything failed.
"""

import argparse
import csv
import datetime as dt
import glob
import json
import os
import re
import subprocess
import sys
import tempfile
import zipfile

import openpyxl

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common as C  # noqa: E402

ERRS = {"#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!"}


def xml_facts(path, facts):
    bad = []
    with zipfile.ZipFile(path) as z:
        names = z.namelist()
        for member_re, pat, want in facts:
            members = [m for m in names if re.fullmatch(member_re, m)]
            found = False
            for m in members:
                if re.search(pat, z.read(m).decode("utf-8", "replace")):
                    found = True
                    break
            if (want == "present") != found:
                bad.append(f"XML: /{pat}/ in {member_re} should be {want}")
    return bad


def pick_sheet(wb, name):
    if name:
        return wb[name]
    for ws in wb.worksheets:
        if ws.sheet_state == "visible":
            return ws
    raise ValueError("no visible worksheet")


def region(ws, e, spec_cols):
    """(header row, first col, last col, first data row, last data row)."""
    if e["table"]:
        t = ws.tables[e["table"]]
        (c1, r1), (c2, r2) = [openpyxl.utils.cell.coordinate_from_string(x)
                              for x in t.ref.split(":")]
        c1 = openpyxl.utils.column_index_from_string(c1)
        c2 = openpyxl.utils.column_index_from_string(c2)
        r2 -= t.totalsRowCount or 0
        return r1, c1, c2, r1 + 1, r2
    if e["header_row"]:
        hr = e["header_row"]
    else:
        hr = None
        for r in range(1, min(ws.max_row, 30) + 1):
            vals = {ws.cell(r, c).value for c in range(1, ws.max_column + 1)}
            if all(s in vals for s in spec_cols):
                hr = r
                break
        if hr is None:
            raise ValueError("header not found")
    last = ws.max_row
    while last > hr and all(ws.cell(last, c).value is None
                            for c in range(1, ws.max_column + 1)):
        last -= 1
    return hr, 1, ws.max_column, hr + 1, last


def num(v):
    if isinstance(v, bool):
        return float(v)
    if isinstance(v, (int, float)):
        return float(v)
    if isinstance(v, str):
        return float(v.strip())
    raise ValueError(f"not a number: {v!r}")


def check_file(path, e, rows_by_id):
    bad = xml_facts(path, e["_verify"])
    wbf = openpyxl.load_workbook(path, data_only=False)
    wbv = openpyxl.load_workbook(path, data_only=True)
    date1904 = wbf.epoch == openpyxl.utils.datetime.MAC_EPOCH
    wsf = pick_sheet(wbf, e["sheet"])
    wsv = wbv[wsf.title]
    s = e["spec"]
    base_of = {s["outcome"]: "earnings", s["treatment"]: "coached",
               s["moderator"]: "client_type"}
    for sc, bc in zip(s["controls"], e["_fit"]["controls"]):
        base_of[sc] = bc
    spec_cols = list(base_of)
    hr, c1, c2, d1, d2 = region(wsf, e, spec_cols)
    header = {wsf.cell(hr, c).value: c for c in range(c1, c2 + 1)}
    for col in spec_cols + ["client_id"]:
        if col not in header:
            bad.append(f"column {col!r} not in header row {hr}")
    if bad:
        return bad, None
    fcols = e["formula_columns"]
    fit_ids = e["_fit"]["ids"]
    ids_seen, ids_err = [], []
    for r in range(d1, d2 + 1):
        cid = wsv.cell(r, header["client_id"]).value
        if cid is None:
            continue
        cid = int(cid)
        ids_seen.append(cid)
        base = rows_by_id[cid]
        has_err = False
        for col in spec_cols:
            c = header[col]
            f = wsf.cell(r, c).value
            v = wsv.cell(r, c).value
            is_formula = isinstance(f, str) and f.startswith("=")
            kind = fcols.get(col)
            if kind in ("computed", "missing"):
                # values not checked; a saved error still marks the row
                # (a computed NA() or x/0 gives the same error)
                if isinstance(v, str) and v in ERRS:
                    has_err = True
                continue
            if is_formula and kind != "saved":
                bad.append(f"{col} row {r}: formula {f!r} but formula_columns says {kind}")
                continue
            if isinstance(v, str) and v in ERRS:
                has_err = True
                continue
            want = base[base_of[col]]
            if col == s["moderator"]:
                if str(v) != want:
                    bad.append(f"{col} row {r}: {v!r} != {want!r}")
            elif col == s["treatment"] and s["treated"]:
                got = 1.0 if str(v).upper() == s["treated"] else 0.0
                if got != want:
                    bad.append(f"{col} row {r}: {v!r} vs {want}")
            else:
                try:
                    if num(v) != float(want):
                        bad.append(f"{col} row {r}: {v!r} != {want!r}")
                except ValueError as ex:
                    bad.append(f"{col} row {r}: {ex}")
        # formula columns outside the model must hold formulas
        if has_err:
            ids_err.append(cid)
    for col, kind in fcols.items():
        if col not in header:
            bad.append(f"formula column {col!r} not in header")
            continue
        nf = sum(1 for r in range(d1, d2 + 1)
                 if isinstance(wsf.cell(r, header[col]).value, str)
                 and str(wsf.cell(r, header[col]).value).startswith("="))
        if nf == 0:
            bad.append(f"formula column {col!r} holds no formula")
    want_ids = fit_ids if fit_ids is not None else sorted(rows_by_id)
    used = [i for i in ids_seen if i not in ids_err]
    if sorted(used) != sorted(want_ids):
        bad.append(f"rows read ({len(used)} usable of {len(ids_seen)}) differ "
                   f"from the expected fit's {len(want_ids)}")
    for chk in e["checks"]:
        c = header.get(chk["column"])
        v = wsv.cell(d1 + chk["row"] - 1, c).value if c else None
        if isinstance(v, dt.datetime):
            v = v.date()
        if not isinstance(v, dt.date) or v.isoformat() != chk["date"]:
            bad.append(f"date check {chk}: read {v!r}")
    info = f"sheet {wsf.title!r} header row {hr} rows {len(ids_seen)} date1904={date1904}"
    return bad, info


def lo_csv(files, out_dir, rows_by_id, entries):
    bad = []
    with tempfile.TemporaryDirectory() as td:
        prof = "file://" + os.path.join(td, "profile")
        for rel in files:
            e = entries[rel]
            src = os.path.join(out_dir, rel)
            subprocess.run(["soffice", "-env:UserInstallation=" + prof, "--headless",
                            "--convert-to", "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1",
                            "--outdir", td, src],
                           check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
            stem = os.path.splitext(os.path.basename(rel))[0]
            outs = sorted(glob.glob(os.path.join(td, stem + "*.csv")))
            target = None
            for o in outs:
                with open(o, encoding="utf-8") as f:
                    lines = list(csv.reader(f))
                for i, line in enumerate(lines):
                    if e["spec"]["outcome"] in line and "client_id" in line:
                        target = (lines, i)
                        break
                if target:
                    break
            if not target:
                bad.append(f"{rel}: LibreOffice CSV has no header")
                continue
            lines, i = target
            h = lines[i]
            ci, oi = h.index("client_id"), h.index(e["spec"]["outcome"])
            got = 0
            mism = 0
            for line in lines[i + 1:]:
                if len(line) <= oi or not line[ci].strip().isdigit():
                    continue
                base = rows_by_id[int(line[ci])]
                got += 1
                try:
                    if float(line[oi]) != base["earnings"]:
                        mism += 1
                except ValueError:
                    mism += 1
            for o in outs:
                os.remove(o)
            kind = e["formula_columns"].get(e["spec"]["outcome"], "plain")
            print(f"  LibreOffice CSV {rel}: {got} rows, outcome ({kind}) differs from "
                  f"data.csv in {mism}")
            # A formula whose result is not saved is LibreOffice's to compute
            # or not: reported, not judged.
            if kind in ("plain", "saved") and (mism or got != len(rows_by_id)):
                bad.append(f"{rel}: LibreOffice CSV outcome differs in {mism} rows")
    return bad


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("fragments")
    ap.add_argument("out")
    ap.add_argument("data")
    ap.add_argument("--lo-csv", nargs="*", default=[])
    ap.add_argument("--max-bytes", type=int, default=100_000,
                    help="largest file allowed (0: no limit)")
    a = ap.parse_args()
    rows_by_id = {r["client_id"]: r for r in C.load_rows(a.data)}
    entries = {}
    for p in sorted(glob.glob(os.path.join(a.fragments, "*.json"))):
        with open(p, encoding="utf-8") as f:
            for e in json.load(f):
                entries[e["file"]] = e
    failed = 0
    for rel in sorted(entries):
        e = entries[rel]
        path = os.path.join(a.out, rel)
        size = os.path.getsize(path)
        try:
            bad, info = check_file(path, e, rows_by_id)
        except Exception as ex:  # a failure to read is a failure
            bad, info = [f"{type(ex).__name__}: {ex}"], None
        if a.max_bytes and size > a.max_bytes:
            bad.append(f"{size} bytes: over {a.max_bytes}")
        status = "ok  " if not bad else "FAIL"
        print(f"{status} {rel} ({size} B) {info or ''}")
        for b in bad[:8]:
            print(f"       {b}")
        failed += bool(bad)
    print(f"verify.py: {len(entries) - failed} of {len(entries)} files ok")
    if a.lo_csv:
        lo_bad = lo_csv(a.lo_csv, a.out, rows_by_id, entries)
        for b in lo_bad:
            print(f"FAIL {b}")
        failed += len(lo_bad)
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
