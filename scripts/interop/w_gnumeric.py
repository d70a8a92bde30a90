"""Writes the Gnumeric files of the interoperability corpus.

Each workbook is a Gnumeric XML file (.gnumeric, uncompressed) or a CSV
file written here, converted by ssconvert (with --recalc, so every formula
is computed and its result saved). The .gnumeric files go through the
exporter Gnumeric_Excel:xlsx2 (ISO/IEC 29500); the CSV through
Gnumeric_Excel:xlsx (ECMA-376 1st edition), so both exporters appear.

Usage: w_gnumeric.py WORKDIR
"""

import datetime as dt
import os
import subprocess
import sys
from xml.sax.saxutils import escape

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common as C  # noqa: E402

BASE = ["client_id", "site", "client_type", "coached", "baseline", "hours",
        "earnings"]


def version():
    out = subprocess.run(["ssconvert", "--version"], capture_output=True,
                         text=True, check=True).stdout
    # "ssconvert version '1.12.55'"
    v = out.split("'")[1]
    return f"gnumeric ssconvert {v}"


class GSheet:
    def __init__(self, name):
        self.name = name
        self.cells = []  # (row0, col0, xml attrs, text)
        self.merges = []
        self.hidden_rows = []
        self.hidden_cols = []
        self.freeze = None
        self.maxr = self.maxc = 0

    def put(self, r, c, v, fmt=None):
        """v: str (a leading = makes a formula), float/int, bool, or
        ("string", text) to force text."""
        self.maxr, self.maxc = max(self.maxr, r), max(self.maxc, c)
        vf = f' ValueFormat="{escape(fmt)}"' if fmt else ""
        if isinstance(v, tuple):
            a, t = f' ValueType="60"{vf}', v[1]
        elif isinstance(v, bool):
            a, t = f' ValueType="20"{vf}', "TRUE" if v else "FALSE"
        elif isinstance(v, (int, float)):
            a, t = f' ValueType="40"{vf}', repr(v)
        elif v.startswith("="):
            a, t = vf, v
        else:
            a, t = f' ValueType="60"{vf}', v
        self.cells.append((r, c, a, t))

    def xml(self):
        rows = "".join(f'<gnm:RowInfo No="{r}" Unit="13.5" Hidden="1"/>'
                       for r in self.hidden_rows)
        cols = "".join(f'<gnm:ColInfo No="{c}" Unit="60.75" Hidden="1"/>'
                       for c in self.hidden_cols)
        cells = "".join(f'<gnm:Cell Row="{r}" Col="{c}"{a}>{escape(t)}</gnm:Cell>'
                        for r, c, a, t in self.cells)
        merges = ""
        if self.merges:
            merges = ("<gnm:MergedRegions>" + "".join(f"<gnm:Merge>{m}</gnm:Merge>" for m in self.merges)
                      + "</gnm:MergedRegions>")
        layout = ""
        if self.freeze:
            layout = (f'<gnm:SheetLayout TopLeft="A1"><gnm:FreezePanes FrozenTopLeft="A1" '
                      f'UnfrozenTopLeft="{self.freeze}"/></gnm:SheetLayout>')
        return (f"<gnm:Sheet><gnm:Name>{escape(self.name)}</gnm:Name>"
                f"<gnm:MaxCol>{self.maxc}</gnm:MaxCol><gnm:MaxRow>{self.maxr}</gnm:MaxRow>"
                f'<gnm:Cols DefaultSizePts="60.75">{cols}</gnm:Cols>'
                f'<gnm:Rows DefaultSizePts="13.5">{rows}</gnm:Rows>'
                f"<gnm:Cells>{cells}</gnm:Cells>{merges}{layout}</gnm:Sheet>")


def workbook(sheets, date1904=False):
    conv = ' DateConvention="Apple:1904"' if date1904 else ""
    names = "".join(f"<gnm:SheetName>{escape(s.name)}</gnm:SheetName>" for s in sheets)
    return ('<?xml version="1.0" encoding="UTF-8"?>\n'
            '<gnm:Workbook xmlns:gnm="http://www.gnumeric.org/v10.dtd">'
            '<gnm:Calculation ManualRecalc="0" EnableIteration="0" MaxIterations="100" '
            f'IterationTolerance="0.001" FloatRadix="2" FloatDigits="53"{conv}/>'
            f"<gnm:SheetNameIndex>{names}</gnm:SheetNameIndex>"
            "<gnm:Sheets>" + "".join(s.xml() for s in sheets) + "</gnm:Sheets></gnm:Workbook>\n")


def data_sheet(name, rows, cols, top=0, values=None):
    values = values or {}
    sh = GSheet(name)
    for j, c in enumerate(cols):
        sh.put(top, j, ("string", c))
    for i, r in enumerate(rows, start=1):
        R = top + i  # 0-based sheet row; the spreadsheet row is R + 1
        for j, c in enumerate(cols):
            f = values.get(c)
            if f:
                v = f(r, R + 1)
                if isinstance(v, tuple) and v[0] == "fmt":
                    sh.put(R, j, v[1], fmt=v[2])
                else:
                    sh.put(R, j, v)
            else:
                sh.put(R, j, r[c])
    return sh


def convert(src, dst, exporter="Gnumeric_Excel:xlsx2"):
    C.ensure_dir(dst)
    subprocess.run(["ssconvert", "--recalc", "-T", exporter, src, dst],
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)


def main():
    work = sys.argv[1]
    os.makedirs(work, exist_ok=True)
    rows = C.load_rows(C.data_path())
    n = len(rows)
    writer = version()
    fr = C.Fragments("gnumeric")
    out = os.path.join(C.out_dir(), "gnumeric")
    books = {}

    # 18. straight from data.csv.
    convert(C.data_path(), os.path.join(out, "plain_from_csv.xlsx"), "Gnumeric_Excel:xlsx")
    fr.add(C.entry(
        "gnumeric/plain_from_csv.xlsx", writer,
        "data.csv converted by ssconvert (exporter Gnumeric_Excel:xlsx, ECMA-376 1st edition)",
        checks=[{"column": "visit_date", "row": 1, "date": rows[0]["visit_date"].isoformat()}],
        notes="ssconvert guessed the types: numbers, visit_date as dates "
              "(format yyyy-mm-dd), consented as booleans (t=\"b\"). Numbers "
              "are saved with 20 or more significant digits (Gnumeric "
              "computes in long double), e.g. 252.36 as "
              "252.360000000000000001 or similar; read as a double they "
              "are the values of data.csv.",
        verify=[[r"xl/worksheets/sheet1\.xml", r't="b"', "present"],
                [r"xl/workbook\.xml", r'date1904="0"', "present"]]))

    # 1. formulas with saved results.
    cols = ["client_id", "site", "client_type", "coached", "baseline",
            "hours_a", "hours_b", "hours_total", "earnings", "earnings_raw"]
    books["formulas_saved"] = workbook([data_sheet("Data", rows, cols, values={
        "hours_total": lambda r, R: f"=F{R}+G{R}",
        "earnings": lambda r, R: f"=ROUND(J{R},2)",
        "earnings_raw": lambda r, R: float(r["earnings_raw"]),
    })])
    fr.add(C.entry(
        "gnumeric/formulas_saved.xlsx", writer,
        "formulas with saved results in used columns (computed by Gnumeric)",
        spec=C.spec(controls=["baseline", "hours_total"]),
        fit_controls=["baseline", "hours"],
        formula_columns={"hours_total": "saved", "earnings": "saved"},
        notes="hours_total =F2+G2, earnings =ROUND(J2,2); ssconvert --recalc "
              "computed them and saved <f> and <v> (values in 20+ digits).",
        verify=[[r"xl/worksheets/sheet1\.xml", r"<f>ROUND\(J2,2\)</f>\s*<v>", "present"]]))

    # 7. coached as booleans.
    books["booleans_treatment"] = workbook([data_sheet("Data", rows, BASE + ["consented"], values={
        "coached": lambda r, R: bool(r["coached"])})])
    fr.add(C.entry(
        "gnumeric/booleans_treatment.xlsx", writer,
        "booleans as the treatment, and an unused boolean column",
        spec=C.spec(treated="TRUE"),
        notes="coached and consented are Gnumeric booleans, saved as t=\"b\".",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<c r="D2" t="b">', "present"]]))

    # 8. errors.
    def err_base(r, R):
        k = R - 1
        if k in C.ERROR_ROWS:
            return ["=NA()", "=1/0"][C.ERROR_ROWS.index(k)]
        return r["baseline"]

    books["errors_baseline"] = workbook([data_sheet("Data", rows, BASE + ["hours_per_week"], values={
        "baseline": err_base,
        "hours_per_week": lambda r, R: f"=F{R}/0" if R % 4 == 0 else r["hours"] * 2})])
    fr.add(C.entry(
        "gnumeric/errors_baseline.xlsx", writer,
        "error values in baseline (2 rows) and in an unused column, as saved formula results",
        fit_ids=C.ids_without_rows(rows, C.ERROR_ROWS),
        formula_columns={"baseline": "saved", "hours_per_week": "saved"},
        notes=f"baseline is =NA() in data row {C.ERROR_ROWS[0]} and =1/0 in row "
              f"{C.ERROR_ROWS[1]} (saved t=\"e\"); n = {n - 2}.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<c r="E%d" t="e">\s*<f>NA\(\)</f>\s*<v>#N/A</v>' % (C.ERROR_ROWS[0] + 1), "present"]]))

    # 9. dates, 1904.
    def date_v(r, R):
        d = r["visit_date"]
        return ("fmt", float((d - dt.date(1904, 1, 1)).days), "yyyy-mm-dd")

    books["dates_1904"] = workbook([data_sheet("Data", rows, BASE + ["visit_date"],
                                               values={"visit_date": date_v})], date1904=True)
    fr.add(C.entry(
        "gnumeric/dates_1904.xlsx", writer, "dates in an unused column, 1904 date system",
        checks=[{"column": "visit_date", "row": 1, "date": rows[0]["visit_date"].isoformat()}],
        notes="Calculation DateConvention=\"Apple:1904\" in the .gnumeric; "
              "saved as workbookPr date1904=\"1\".",
        verify=[[r"xl/workbook\.xml", r'date1904="1"', "present"]]))

    # 10 + 11. a merged title, hidden rows and a hidden column, frozen panes.
    sh = data_sheet("Data", rows, BASE, top=3)
    sh.put(0, 0, ("string", "Job coaching follow-up, spring cohort"))
    sh.put(1, 0, ("string", "Invented data for reader tests"))
    sh.merges.append("A1:G1")
    sh.hidden_rows = [8, 9]       # 0-based: sheet rows 9 and 10
    sh.hidden_cols = [1]          # site
    sh.freeze = "B5"
    books["title_hidden_frozen"] = workbook([sh])
    fr.add(C.entry(
        "gnumeric/title_hidden_frozen.xlsx", writer,
        "merged title and blank row above the header (header on row 4), hidden rows and column, frozen panes",
        notes="A1:G1 merged, a subtitle in A2, row 3 blank, header on row 4; "
              "sheet rows 9 and 10 hidden (still data); column B (site) "
              "hidden; panes frozen at B5.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<mergeCell ref="A1:G1"/>', "present"],
                [r"xl/worksheets/sheet1\.xml", r'<row r="9"[^>]*hidden="1"', "present"],
                [r"xl/worksheets/sheet1\.xml", r'state="frozen"', "present"]]))

    # 6 + 15. unicode names, numbers as text, a cover sheet first.
    cover = GSheet("Résumé")
    cover.put(0, 0, ("string", "Job coaching follow-up"))
    cover.put(1, 0, "=AVERAGE('Clients'' données'!G2:G61)")
    cols = BASE[:-1] + ["revenu 6 mois (€)"]
    books["unicode_names"] = workbook([cover, data_sheet("Clients' données", rows, cols, values={
        "revenu 6 mois (€)": lambda r, R: r["earnings"],
        "baseline": lambda r, R: ("string", r["baseline_text"])})])
    fr.add(C.entry(
        "gnumeric/unicode_names.xlsx", writer,
        "sheet and column names with unicode and an apostrophe; baseline as text; a cover sheet first",
        sheet="Clients' données", spec=C.spec(outcome="revenu 6 mois (€)"),
        notes="Sheets: Résumé (=AVERAGE over the data, saved), then "
              "Clients' données; baseline is stored as text (inline strings).",
        verify=[[r"xl/workbook\.xml", "name=\"Clients&apos; données\"|name=\"Clients' données\"", "present"]]))

    for stem, text in books.items():
        src = os.path.join(work, stem + ".gnumeric")
        with open(src, "w", encoding="utf-8") as f:
            f.write(text)
        convert(src, os.path.join(out, stem + ".xlsx"))
    fr.save()


if __name__ == "__main__":
    main()
