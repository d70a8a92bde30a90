"""Checks that a workbook written back in place kept everything it had.

Usage: check_writeback.py ORIGINAL RESULT
       check_writeback.py ORIGINAL_DIR RESULT_DIR   (pairs files by path)

RESULT is ORIGINAL after a program added sheets to it (Slopewise adds a
results sheet). Read with openpyxl, independently of that program, every
original sheet must still be there, in the same order relative to the
others and in the same state (visible, hidden, veryHidden), of the same
kind (worksheet or chart sheet), and each original worksheet must have:
the same formulas and constants, the same cached values, the same number
formats, merged cells, frozen panes, data validations, tables (name, ref,
header and totals rows, columns), comments, hidden rows and columns,
autofilter, charts and images; the workbook the same defined names (a
sheet-scoped one compared by its sheet's name), date system (1900/1904)
and VBA project (the bytes of xl/vbaProject.bin). Sheets the result adds
are listed, not judged. Prints each difference; exits 1 if there is any.
"""

import os
import sys
import zipfile

import openpyxl
from openpyxl.chartsheet import Chartsheet


def sheet_list(wb):
    return [(ws.title, "chartsheet" if isinstance(ws, Chartsheet) else "worksheet",
             ws.sheet_state) for ws in wb._sheets]


def norm(v):
    """Cell values compared as a reader sees them: 1 and 1.0 alike."""
    if isinstance(v, bool) or v is None:
        return v
    if isinstance(v, (int, float)):
        return ("num", float(v))
    return v


def cells(ws):
    out = {}
    for row in ws.iter_rows():
        for c in row:
            if c.value is not None:
                out[c.coordinate] = c.value
    return out


def formats(ws):
    out = {}
    for row in ws.iter_rows():
        for c in row:
            if c.value is not None and c.number_format != "General":
                out[c.coordinate] = c.number_format
    return out


def hidden_rows(ws):
    return sorted(r for r, d in ws.row_dimensions.items() if d.hidden)


def hidden_cols(ws):
    out = set()
    for d in ws.column_dimensions.values():
        if d.hidden:
            lo, hi = d.min or 0, d.max or 0
            out.update(range(lo, hi + 1))
    return sorted(out)


def validations(ws):
    return sorted((dv.type or "", dv.operator or "", dv.formula1 or "", dv.formula2 or "",
                   str(dv.sqref), bool(dv.allow_blank))
                  for dv in ws.data_validations.dataValidation)


def tables(ws):
    out = {}
    for t in ws.tables.values():  # (TableList.items() gives refs, not tables)
        name = t.displayName
        cols = [(c.name, c.totalsRowFunction, c.totalsRowLabel) for c in t.tableColumns]
        out[name] = (t.ref, t.headerRowCount, t.totalsRowCount, cols)
    return out


def comments(ws):
    return {c.coordinate: (c.comment.text, c.comment.author)
            for row in ws.iter_rows() for c in row if c.comment is not None}


def defined_names(wb):
    titles = [ws.title for ws in wb._sheets]
    out = set()
    for dn in wb.defined_names.definedName:
        scope = titles[dn.localSheetId] if dn.localSheetId is not None else ""
        out.add((dn.name, scope, dn.attr_text, bool(dn.hidden)))
    # openpyxl 3.0 moves print titles/areas to the sheets
    for ws in wb.worksheets:
        if ws.print_title_rows or ws.print_title_cols:
            out.add(("_print_titles", ws.title, str(ws.print_title_rows), str(ws.print_title_cols)))
        if ws.print_area:
            out.add(("_print_area", ws.title, str(ws.print_area), False))
    return out


def vba(path):
    with zipfile.ZipFile(path) as z:
        return z.read("xl/vbaProject.bin") if "xl/vbaProject.bin" in z.namelist() else None


def diff_dict(label, a, b, out, limit=5):
    if a == b:
        return
    keys = sorted(set(a) | set(b), key=str)
    bad = [k for k in keys if a.get(k) != b.get(k)]
    for k in bad[:limit]:
        out.append(f"{label} {k}: {a.get(k)!r} -> {b.get(k)!r}")
    if len(bad) > limit:
        out.append(f"{label}: {len(bad) - limit} more differences")


def compare(orig, result):
    """Returns (differences, notes)."""
    diffs, notes = [], []
    kw = dict(keep_links=True)
    of, rf = openpyxl.load_workbook(orig, **kw), openpyxl.load_workbook(result, **kw)
    ov = openpyxl.load_workbook(orig, data_only=True, **kw)
    rv = openpyxl.load_workbook(result, data_only=True, **kw)

    osh, rsh = sheet_list(of), sheet_list(rf)
    rnames = [s[0] for s in rsh]
    kept = [s for s in rsh if s[0] in {x[0] for x in osh}]
    for s in osh:
        if s[0] not in rnames:
            diffs.append(f"sheet {s[0]!r} is gone")
    if [s[0] for s in kept] != [s[0] for s in osh if s[0] in rnames]:
        diffs.append(f"sheet order changed: {[s[0] for s in osh]} -> {rnames}")
    for s in osh:
        for k in kept:
            if k[0] == s[0] and k != s:
                diffs.append(f"sheet {s[0]!r}: {s[1:]} -> {k[1:]}")
    added = [s[0] for s in rsh if s[0] not in {x[0] for x in osh}]
    notes.append(f"added sheets: {added}")

    if of.epoch != rf.epoch:
        diffs.append(f"date system: {of.epoch.year} -> {rf.epoch.year}")
    od, rd = defined_names(of), defined_names(rf)
    for x in sorted(od - rd, key=str):
        diffs.append(f"defined name lost or changed: {x}")
    for x in sorted(rd - od, key=str):
        if x[1] not in added:
            notes.append(f"defined name added: {x}")
    if vba(orig) != vba(result):
        diffs.append("xl/vbaProject.bin differs (or is gone)")
    def calc(wb):  # a workbook without calcPr has calculation None
        c = wb.calculation
        return (c.fullCalcOnLoad, c.calcMode) if c is not None else None
    if calc(of) != calc(rf):
        notes.append(f"calcPr (fullCalcOnLoad, calcMode): {calc(of)} -> {calc(rf)}")

    for title, kind, _ in osh:
        if title not in rnames:
            continue
        a, b = of[title], rf[title]
        if kind == "chartsheet":
            if len(a._charts) != len(b._charts):
                diffs.append(f"{title}: charts {len(a._charts)} -> {len(b._charts)}")
            continue
        diff_dict(f"{title}: cell", {k: norm(v) for k, v in cells(a).items()},
                  {k: norm(v) for k, v in cells(b).items()}, diffs)
        diff_dict(f"{title}: cached value", {k: norm(v) for k, v in cells(ov[title]).items()},
                  {k: norm(v) for k, v in cells(rv[title]).items()}, diffs)
        diff_dict(f"{title}: number format", formats(a), formats(b), diffs)
        for label, fa, fb in (
                ("merged cells", sorted(map(str, a.merged_cells.ranges)), sorted(map(str, b.merged_cells.ranges))),
                ("frozen panes", a.freeze_panes, b.freeze_panes),
                ("hidden rows", hidden_rows(a), hidden_rows(b)),
                ("hidden columns", hidden_cols(a), hidden_cols(b)),
                ("data validations", validations(a), validations(b)),
                ("autofilter", a.auto_filter.ref, b.auto_filter.ref),
                ("charts", len(a._charts), len(b._charts)),
                ("images", len(a._images), len(b._images))):
            if fa != fb:
                diffs.append(f"{title}: {label}: {fa!r} -> {fb!r}")
        diff_dict(f"{title}: table", tables(a), tables(b), diffs)
        diff_dict(f"{title}: comment", comments(a), comments(b), diffs)
    return diffs, notes


def main():
    if len(sys.argv) != 3:
        sys.exit(__doc__)
    a, b = sys.argv[1], sys.argv[2]
    pairs = []
    if os.path.isdir(a):
        for root, _, files in os.walk(a):
            for f in sorted(files):
                if f.endswith((".xlsx", ".xlsm")):
                    rel = os.path.relpath(os.path.join(root, f), a)
                    pairs.append((os.path.join(a, rel), os.path.join(b, rel), rel))
    else:
        pairs.append((a, b, os.path.basename(a)))
    failed = 0
    for o, r, rel in pairs:
        if not os.path.exists(r):
            print(f"MISSING {rel}")
            failed += 1
            continue
        try:
            diffs, notes = compare(o, r)
        except Exception as ex:
            diffs, notes = [f"could not compare: {type(ex).__name__}: {ex}"], []
        print(f"{'same' if not diffs else 'DIFF'} {rel}")
        for d in diffs:
            print(f"    {d}")
        for n in notes:
            print(f"    note: {n}")
        failed += bool(diffs)
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
