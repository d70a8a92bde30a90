"""Writes the xlsxwriter files of the interoperability corpus.

xlsxwriter never computes a formula: without a value it saves <v>0</v>, and
every workbook it writes carries <calcPr fullCalcOnLoad="1"/>. The .xlsm
file needs a vbaProject.bin: the one LibreOffice wrote into its own .xlsm
(INTEROP_VBA_BIN); without it that file is skipped.
"""

import os
import sys

import xlsxwriter

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common as C  # noqa: E402

WRITER = f"xlsxwriter {xlsxwriter.__version__}"
BASE = ["client_id", "site", "client_type", "coached", "baseline", "hours",
        "earnings"]


def open_wb(rel, **opts):
    path = os.path.join(C.out_dir(), rel)
    C.ensure_dir(path)
    wb = xlsxwriter.Workbook(path, opts)
    wb.set_properties({"author": "interop corpus", "created": C.DOC_TIME})
    return wb


def write_block(ws, rows, cols, top=0, left=0, writers=None):
    """Header at 0-based row `top`, data below. writers[col](ws, r, c, row)."""
    writers = writers or {}
    for j, c in enumerate(cols):
        ws.write_string(top, left + j, c)
    for i, r in enumerate(rows, start=1):
        for j, c in enumerate(cols):
            w = writers.get(c)
            if w:
                w(ws, top + i, left + j, r)
            else:
                ws.write(top + i, left + j, r[c])
    return top + len(rows)


def main():
    rows = C.load_rows(C.data_path())
    fr = C.Fragments("xlsxwriter")
    n = len(rows)
    calc = [r"xl/workbook\.xml", r'fullCalcOnLoad="1"', "present"]

    # 1. formulas with saved results in used columns.
    rel = "xlsxwriter/formulas_saved.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    cols = ["client_id", "site", "client_type", "coached", "baseline",
            "hours_a", "hours_b", "hours_total", "earnings", "earnings_raw"]
    write_block(ws, rows, cols, writers={
        "hours_total": lambda ws, R, Cc, r: ws.write_formula(R, Cc, f"=F{R + 1}+G{R + 1}", None, r["hours"]),
        "earnings": lambda ws, R, Cc, r: ws.write_formula(R, Cc, f"=ROUND(J{R + 1},2)", None, r["earnings"]),
        "earnings_raw": lambda ws, R, Cc, r: ws.write_number(R, Cc, float(r["earnings_raw"])),
    })
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "formulas with saved results in used columns",
        spec=C.spec(controls=["baseline", "hours_total"]),
        fit_controls=["baseline", "hours"],
        formula_columns={"hours_total": "computed", "earnings": "computed"},
        notes="hours_total is =F2+G2 (hours_a + hours_b) and earnings is "
              "=ROUND(J2,2) over earnings_raw; the results were given to "
              "xlsxwriter and are saved in <v>, but the workbook says "
              "fullCalcOnLoad=\"1\" (xlsxwriter always does), so its saved "
              "results are not to be trusted and a reader computes them: "
              "\"computed\". The saved and the computed values are the same.",
        verify=[calc, [r"xl/worksheets/sheet1\.xml", r"<f>ROUND\(J2,2\)</f><v>%s</v>" % rows[0]["earnings_text"].rstrip("0").rstrip("."), "present"]]))

    # 2a. formulas without saved results, simple arithmetic: <v>0</v>.
    rel = "xlsxwriter/formulas_no_result_used.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    cols = BASE + ["baseline_entered", "earnings_raw"]
    kinds = ["=H{r}*2-H{r}", "=H{r}+0", "=SUM(H{r},0)", "=ROUND(H{r},2)",
             "=IF(D{r}=1,H{r},H{r})"]
    write_block(ws, rows, cols, writers={
        "baseline": lambda ws, R, Cc, r: ws.write_formula(R, Cc, kinds[(R - 1) % 5].format(r=R + 1)),
        "earnings": lambda ws, R, Cc, r: ws.write_formula(R, Cc, f"=ROUND(I{R + 1},2)"),
        "baseline_entered": lambda ws, R, Cc, r: ws.write_number(R, Cc, r["baseline"]),
        "earnings_raw": lambda ws, R, Cc, r: ws.write_number(R, Cc, float(r["earnings_raw"])),
    })
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "formulas without saved results, used column, simple arithmetic",
        formula_columns={"baseline": "computed", "earnings": "computed"},
        notes="As openpyxl/formulas_no_result_used.xlsx, but xlsxwriter saves "
              "a cached 0 (<v>0</v>) for every formula, with "
              "fullCalcOnLoad=\"1\": the zeros are not results.",
        verify=[calc, [r"xl/worksheets/sheet1\.xml", r"<f>H2\*2-H2</f><v>0</v>", "present"]]))

    # 2b. not computable, used column: refuse.
    rel = "xlsxwriter/formulas_no_result_refuse.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    write_block(ws, rows, BASE + ["earnings_entered"], writers={
        "earnings": lambda ws, R, Cc, r: ws.write_formula(
            R, Cc, '=INDIRECT("H"&ROW())' if R % 2 else f"=RAND()*0+H{R + 1}"),
        "earnings_entered": lambda ws, R, Cc, r: ws.write_number(R, Cc, r["earnings"]),
    })
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "formulas without saved results, used column, not computable",
        expect="refuse", reason="formula-no-result",
        formula_columns={"earnings": "missing"},
        notes='earnings alternates =INDIRECT("H"&ROW()) and =RAND()*0+H3, '
              "each with a cached 0; the effects are those the author meant.",
        verify=[calc, [r"xl/worksheets/sheet1\.xml", r"<f>RAND\(\)\*0\+H3</f><v>0</v>", "present"]]))

    # 3. unused column only.
    rel = "xlsxwriter/formulas_no_result_unused.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    write_block(ws, rows, BASE + ["random_draw"], writers={
        "random_draw": lambda ws, R, Cc, r: ws.write_formula(R, Cc, "=RAND()")})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "formulas without saved results in an unused column only",
        formula_columns={"random_draw": "missing"},
        notes="random_draw (H) is =RAND() with a cached 0.",
        verify=[calc, [r"xl/worksheets/sheet1\.xml", r"<f>RAND\(\)</f><v>0</v>", "present"]]))

    # 4. fullCalcOnLoad with cached zeros, some rows formulas, some values.
    rel = "xlsxwriter/fullcalc_mixed_zeros.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")

    def mixed(ws, R, Cc, r):
        if R % 2:
            ws.write_formula(R, Cc, f"=ROUND(H{R + 1},2)")
        else:
            ws.write_number(R, Cc, r["earnings"])

    write_block(ws, rows, BASE + ["earnings_raw"], writers={
        "earnings": mixed,
        "earnings_raw": lambda ws, R, Cc, r: ws.write_number(R, Cc, float(r["earnings_raw"]))})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "fullCalcOnLoad with cached zeros in a used column, mixed with plain values",
        formula_columns={"earnings": "computed"},
        notes="earnings is =ROUND(H2,2) (cached 0) in odd data rows and a "
              "plain number in even ones; a reader that takes the zeros "
              "gets a wrong outcome.",
        verify=[calc, [r"xl/worksheets/sheet1\.xml", r"<f>ROUND\(H2,2\)</f><v>0</v>", "present"]]))

    # 5. shared strings with rich text; inline strings (constant_memory).
    rel = "xlsxwriter/strings_shared_rich.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    bold = wb.add_format({"bold": True})
    red = wb.add_format({"font_color": "red"})

    def rich_site(ws, R, Cc, r):
        s = r["site"]
        if R % 3 == 0:
            ws.write_rich_string(R, Cc, bold, s[:4], s[4:])
        else:
            ws.write_string(R, Cc, s)

    def rich_type(ws, R, Cc, r):
        t = r["client_type"]
        if R % 4 == 1:
            k = 3 if len(t) > 3 else 1
            ws.write_rich_string(R, Cc, red, t[:k], t[k:])
        else:
            ws.write_string(R, Cc, t)

    write_block(ws, rows, BASE, writers={"site": rich_site, "client_type": rich_type})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "shared strings with rich-text runs in site and client_type",
        notes="Some site and client_type cells are rich strings (two runs, "
              "the first bold or red) in sharedStrings.xml; the text is the "
              "runs joined.",
        verify=[[r"xl/sharedStrings\.xml", r"<t>ret</t></r><r>(<rPr>.*?</rPr>)?<t>urning</t></r>", "present"]]))

    rel = "xlsxwriter/strings_inline_constant_memory.xlsx"
    wb = open_wb(rel, constant_memory=True)
    ws = wb.add_worksheet("Data")
    bold = wb.add_format({"bold": True})
    write_block(ws, rows, BASE, writers={"site": rich_site})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "inline strings (constant_memory mode), some rich inline strings",
        notes="In constant_memory mode xlsxwriter writes every string as "
              "t=\"inlineStr\", rich ones as <is><r>..</r></is>.",
        verify=[[r"xl/worksheets/sheet1\.xml", r't="inlineStr"><is><t>returning</t>', "present"],
                [r"xl/worksheets/sheet1\.xml", r't="inlineStr"><is><r>', "present"]]))

    # 6. numbers stored as text.
    rel = "xlsxwriter/numbers_as_text.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    write_block(ws, rows, BASE, writers={
        "baseline": lambda ws, R, Cc, r: ws.write_string(R, Cc, r["baseline_text"])})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "numbers stored as text in baseline",
        notes="baseline cells are shared strings such as \"312.45\".",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<c r="E2" t="s">', "present"]]))

    # 7. coached as booleans.
    rel = "xlsxwriter/booleans_treatment.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    write_block(ws, rows, BASE + ["consented"], writers={
        "coached": lambda ws, R, Cc, r: ws.write_boolean(R, Cc, bool(r["coached"]))})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "booleans as the treatment, and an unused boolean column",
        spec=C.spec(treated="TRUE"),
        notes="coached and consented are TRUE/FALSE (t=\"b\").",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<c r="D2" t="b">', "present"]]))

    # 8. error values as saved formula results.
    rel = "xlsxwriter/errors_baseline.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")

    def err_base(ws, R, Cc, r):
        if R in C.ERROR_ROWS:
            k = C.ERROR_ROWS.index(R)
            ws.write_formula(R, Cc, ["=NA()", "=1/0"][k], None, C.ERRORS[k])
        else:
            ws.write_number(R, Cc, r["baseline"])

    def err_unused(ws, R, Cc, r):
        if R % 5 == 0:
            ws.write_formula(R, Cc, f"=F{R + 1}/0", None, "#DIV/0!")
        elif R % 7 == 0:
            ws.write_formula(R, Cc, "=NA()", None, "#N/A")
        else:
            ws.write_number(R, Cc, r["hours"] * 2)

    write_block(ws, rows, BASE + ["hours_per_week"],
                writers={"baseline": err_base, "hours_per_week": err_unused})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "error values in baseline (2 rows) and in an unused column, as saved formula results",
        fit_ids=C.ids_without_rows(rows, C.ERROR_ROWS),
        formula_columns={"baseline": "computed", "hours_per_week": "computed"},
        notes=f"baseline is =NA() saved as #N/A in data row {C.ERROR_ROWS[0]} "
              f"and =1/0 saved as #DIV/0! in row {C.ERROR_ROWS[1]} (t=\"e\"); "
              f"those rows are left out (n = {n - 2}). hours_per_week (H) "
              "has error results too (=F6/0, =NA()) but is unused. As the "
              "workbook says fullCalcOnLoad=\"1\", the saved errors are not "
              "to be trusted: NA() and x/0 are to be computed (\"computed\"), "
              "and give the same errors.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<c r="E%d" t="e"><f>NA\(\)</f><v>#N/A</v>' % (C.ERROR_ROWS[0] + 1), "present"]]))

    # 9. dates, 1900 and 1904.
    for d1904, name in ((False, "dates_1900"), (True, "dates_1904")):
        rel = f"xlsxwriter/{name}.xlsx"
        wb = open_wb(rel, date_1904=d1904)
        ws = wb.add_worksheet("Data")
        dfmt = wb.add_format({"num_format": "d mmm yyyy"})
        write_block(ws, rows, BASE + ["visit_date"], writers={
            "visit_date": lambda ws, R, Cc, r: ws.write_datetime(R, Cc, r["visit_date"], dfmt)})
        wb.close()
        fr.add(C.entry(
            rel, WRITER, f"dates in an unused column, {name[-4:]} date system",
            checks=[{"column": "visit_date", "row": 1, "date": rows[0]["visit_date"].isoformat()}],
            notes="visit_date (H) with format \"d mmm yyyy\".",
            verify=[[r"xl/workbook\.xml", r'date1904="1"', "present" if d1904 else "absent"]]))

    # 10. title, blank rows, merged title; header row given explicitly.
    rel = "xlsxwriter/title_merged.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    ws.merge_range("A1:G1", "Job coaching follow-up, spring cohort",
                   wb.add_format({"bold": True, "align": "center"}))
    ws.merge_range("A2:C2", "Invented data for reader tests")
    write_block(ws, rows, BASE, top=3)
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "title merged across columns and blank rows above the header (header on row 4)",
        header_row=4,
        notes="A1:G1 and A2:C2 merged; header on row 4, given as header_row.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<mergeCell ref="A1:G1"/>', "present"]]))

    # 11. hidden rows and columns, frozen panes, autofilter.
    rel = "xlsxwriter/hidden_frozen_filter.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    hidden_rows = {2, 3, 40}  # 0-based sheet rows: data rows 2, 3, 40
    for R in hidden_rows:
        ws.set_row(R, None, None, {"hidden": True})
    ws.set_column("A:A", None, None, {"hidden": True})
    ws.set_column("H:H", None, None, {"hidden": True})
    write_block(ws, rows, BASE + ["consented"])
    ws.freeze_panes(1, 3)
    ws.autofilter(0, 0, n, 7)
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "hidden rows and columns, frozen panes, autofilter",
        notes="Sheet rows 3, 4 and 41 hidden (still data); column A "
              "(client_id) and H (consented) hidden; panes frozen at D2; "
              "autofilter A1:H61 (xlsxwriter also defines _xlnm._FilterDatabase).",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<row r="3"[^>]*hidden="1"', "present"],
                [r"xl/workbook\.xml", r"_xlnm\._FilterDatabase", "present"]]))

    # 12. tables.
    cols_spec = [{"header": c} for c in BASE]
    rel = "xlsxwriter/table.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    ws.add_table(0, 0, n, 6, {"name": "Clients", "columns": cols_spec,
                              "data": [[r[c] for c in BASE] for r in rows]})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "a table without a totals row", table="Clients",
        verify=[[r"xl/tables/table1\.xml", r'name="Clients"', "present"]]))

    rel = "xlsxwriter/table_totals.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    tc = []
    for c in BASE:
        d = {"header": c}
        if c == "client_id":
            d["total_string"] = "Total"
        elif c in ("baseline", "earnings"):
            d["total_function"] = "average"
        elif c in ("coached", "hours"):
            d["total_function"] = "sum"
        tc.append(d)
    ws.add_table(0, 0, n + 1, 6, {"name": "Clients", "columns": tc, "total_row": True,
                                  "data": [[r[c] for c in BASE] for r in rows]})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "a table with a totals row (label Total, SUBTOTAL sums and averages)",
        table="Clients",
        notes=f"Totals row is sheet row {n + 2}: SUBTOTAL(101,...) and "
              "SUBTOTAL(109,...) with cached 0 (not data).",
        verify=[[r"xl/tables/table1\.xml", r'totalsRowCount="1"', "present"],
                [r"xl/worksheets/sheet1\.xml", r"<f>SUBTOTAL\(101,\[baseline\]\)</f><v>0</v>", "present"]]))

    rel = "xlsxwriter/two_tables.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    sites = sorted({r["site"] for r in rows})
    ws.add_table(0, 0, len(sites), 1, {
        "name": "Sites", "columns": [{"header": "site"}, {"header": "opened"}],
        "data": [[s, 2015 + i] for i, s in enumerate(sites)]})
    top = len(sites) + 3
    ws.add_table(top, 0, top + n, 6, {"name": "Clients", "columns": cols_spec,
                                      "data": [[r[c] for c in BASE] for r in rows]})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "two tables one above the other; the second is the data",
        table="Clients",
        notes=f"Table Sites (site, opened) on A1:B{len(sites) + 1}; table Clients "
              f"on A{top + 1}:G{top + n + 1} below it, after two blank rows.",
        verify=[[r"xl/tables/table2\.xml", r'name="Clients"', "present"]]))

    # 13. data validation and comments.
    rel = "xlsxwriter/validation_comments.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Data")
    write_block(ws, rows, BASE)
    ws.data_validation(1, 2, n, 2, {"validate": "list", "source": ["new", "returning"]})
    ws.data_validation(1, 3, n, 3, {"validate": "integer", "criteria": "between",
                                    "minimum": 0, "maximum": 1})
    ws.write_comment("C1", "new or returning client", {"author": "Evaluator"})
    ws.write_comment("E5", "checked against the intake form", {"author": "Evaluator"})
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "data validation (dropdown on client_type, 0-1 on coached) and comments",
        verify=[[r"xl/worksheets/sheet1\.xml", r'type="list"', "present"],
                [r"xl/comments1\.xml", r"intake form", "present"]]))

    # 14. chart sheet first, a hidden list sheet, data, an about sheet.
    rel = "xlsxwriter/chartsheet_first.xlsx"
    wb = open_wb(rel)
    chs = wb.add_chartsheet("Chart")
    lists = wb.add_worksheet("Lists")
    ws = wb.add_worksheet("Clients")
    about = wb.add_worksheet("About")
    lists.write_column(0, 0, ["new", "returning"])
    lists.hide()
    write_block(ws, rows, BASE)
    about.write(0, 0, "Invented job-coaching data for reader tests.")
    ch = wb.add_chart({"type": "column"})
    ch.add_series({"name": "earnings", "values": ["Clients", 1, 6, n, 6]})
    chs.set_chart(ch)
    ws.activate()
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "a chart sheet first, a hidden worksheet, then the data, then a cover sheet",
        notes="Sheets in order: Chart (a chart sheet), Lists (hidden), "
              "Clients, About. sheet is \"\": the first visible worksheet "
              "is Clients.",
        verify=[[r"xl/workbook\.xml", r'name="Lists" sheetId="2" state="hidden"', "present"],
                [r"xl/chartsheets/sheet1\.xml", r"<chartsheet", "present"]]))

    # 15. unicode and apostrophes.
    rel = "xlsxwriter/unicode_names.xlsx"
    wb = open_wb(rel)
    ws = wb.add_worksheet("Clients' données")
    cols = BASE[:-1] + ["revenu 6 mois (€)"]
    write_block(ws, rows, cols, writers={
        "revenu 6 mois (€)": lambda ws, R, Cc, r: ws.write_number(R, Cc, r["earnings"])})
    cover = wb.add_worksheet("Résumé")
    cover.write_formula("A1", "=AVERAGE('Clients'' données'!G2:G61)", None,
                        sum(r["earnings"] for r in rows) / n)
    wb.close()
    fr.add(C.entry(
        rel, WRITER, "sheet and column names with unicode and an apostrophe",
        sheet="Clients' données", spec=C.spec(outcome="revenu 6 mois (€)"),
        notes="A second sheet Résumé holds =AVERAGE('Clients'' données'!G2:G61).",
        verify=[[r"xl/worksheets/sheet2\.xml", r"'Clients'' données'!G2:G61", "present"]]))

    # 16. .xlsm with the vbaProject.bin LibreOffice wrote.
    vba = os.environ.get("INTEROP_VBA_BIN", "")
    if vba and os.path.exists(vba):
        rel = "xlsxwriter/macro_enabled.xlsm"
        wb = open_wb(rel)
        ws = wb.add_worksheet("Data")
        write_block(ws, rows, BASE)
        wb.add_vba_project(vba)
        wb.close()
        fr.add(C.entry(
            rel, WRITER, "macro-enabled .xlsm with a vbaProject.bin",
            notes="The vbaProject.bin is the one LibreOffice wrote into "
                  "libreoffice/macro_enabled.xlsm (a module Coaching with one "
                  "Sub), added with add_vba_project.",
            verify=[[r"xl/vbaProject\.bin", r".", "present"],
                    [r"\[Content_Types\]\.xml", r"sheet\.macroEnabled\.main\+xml", "present"]]))
    else:
        print("w_xlsxwriter.py: no vbaProject.bin from LibreOffice; the .xlsm is skipped",
              file=sys.stderr)

    fr.save()


if __name__ == "__main__":
    main()
