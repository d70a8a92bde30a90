"""Writes the openpyxl files of the interoperability corpus.

openpyxl saves a formula with an empty cached value (<f>..</f><v></v>) and
strings as inline strings (t="inlineStr"); it never computes anything.
"""

import datetime as dt
import os
import sys

import openpyxl
from openpyxl.chart import BarChart, Reference
from openpyxl.comments import Comment
from openpyxl.utils.datetime import CALENDAR_MAC_1904
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.datavalidation import DataValidation
from openpyxl.worksheet.table import Table, TableColumn, TableStyleInfo

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common as C  # noqa: E402

WRITER = f"openpyxl {openpyxl.__version__}"
BASE = ["client_id", "site", "client_type", "coached", "baseline", "hours",
        "earnings"]


def write_block(ws, rows, cols, top=1, left=1, getters=None):
    """Writes a header at row `top` and the rows below; returns the last row."""
    getters = getters or {}
    for j, c in enumerate(cols):
        ws.cell(row=top, column=left + j, value=c)
    for i, r in enumerate(rows, start=1):
        for j, c in enumerate(cols):
            g = getters.get(c)
            v = g(r, top + i, left + j) if g else r[c]
            ws.cell(row=top + i, column=left + j, value=v)
    return top + len(rows)


def new_wb(title="Data"):
    wb = openpyxl.Workbook()
    wb.active.title = title
    wb.properties.creator = "interop corpus"
    wb.properties.created = C.DOC_TIME
    wb.properties.modified = C.DOC_TIME
    return wb


def save(wb, rel):
    path = os.path.join(C.out_dir(), rel)
    C.ensure_dir(path)
    wb.save(path)


def main():
    rows = C.load_rows(C.data_path())
    fr = C.Fragments("openpyxl")
    n = len(rows)

    # 2a. formulas without saved results, used columns, simple arithmetic.
    wb = new_wb()
    ws = wb.active
    cols = BASE + ["baseline_entered", "earnings_raw"]
    H, I = "H", "I"
    kinds = ["={H}{r}*2-{H}{r}", "={H}{r}+0", "=SUM({H}{r},0)",
             "=ROUND({H}{r},2)", "=IF(D{r}=1,{H}{r},{H}{r})"]

    def base_f(r, row, col):
        return kinds[(row - 2) % len(kinds)].format(H=H, r=row)

    write_block(ws, rows, cols, getters={
        "baseline": base_f,
        "earnings": lambda r, row, col: f"=ROUND({I}{row},2)",
        "baseline_entered": lambda r, row, col: r["baseline"],
        "earnings_raw": lambda r, row, col: float(r["earnings_raw"]),
    })
    save(wb, "openpyxl/formulas_no_result_used.xlsx")
    fr.add(C.entry(
        "openpyxl/formulas_no_result_used.xlsx", WRITER,
        "formulas without saved results, used column, simple arithmetic",
        formula_columns={"baseline": "computed", "earnings": "computed"},
        notes="baseline cycles =H2*2-H2, =H2+0, =SUM(H2,0), =ROUND(H2,2), "
              "=IF(D2=1,H2,H2) over baseline_entered (H); earnings is "
              "=ROUND(I2,2) over earnings_raw (I, 6 decimals). Every cell "
              "is <f>..</f><v></v>: no result is saved.",
        verify=[[r"xl/worksheets/sheet1\.xml", r"<f>H2\*2-H2</f><v\s*/?>(</v>)?", "present"],
                [r"xl/worksheets/sheet1\.xml", r"<f>ROUND\(I2,2\)</f>", "present"]]))

    # 2b. formulas a reader cannot compute exactly, used column: refuse.
    wb = new_wb()
    ws = wb.active
    cols = BASE + ["earnings_entered"]

    def earn_f(r, row, col):
        if row % 2 == 0:
            return '=INDIRECT("H"&ROW())'
        return f"=RAND()*0+H{row}"

    write_block(ws, rows, cols, getters={
        "earnings": earn_f,
        "earnings_entered": lambda r, row, col: r["earnings"]})
    save(wb, "openpyxl/formulas_no_result_refuse.xlsx")
    fr.add(C.entry(
        "openpyxl/formulas_no_result_refuse.xlsx", WRITER,
        "formulas without saved results, used column, not computable",
        expect="refuse", reason="formula-no-result",
        formula_columns={"earnings": "missing"},
        notes='earnings alternates =INDIRECT("H"&ROW()) and =RAND()*0+H3 '
              "over earnings_entered (H); no result is saved. The effects "
              "are those the author meant (earnings_entered).",
        verify=[[r"xl/worksheets/sheet1\.xml", r"<f>INDIRECT\(", "present"]]))

    # 3. formulas without saved results in an unused column only.
    wb = new_wb()
    ws = wb.active
    cols = BASE + ["random_draw"]
    write_block(ws, rows, cols,
                getters={"random_draw": lambda r, row, col: "=RAND()"})
    save(wb, "openpyxl/formulas_no_result_unused.xlsx")
    fr.add(C.entry(
        "openpyxl/formulas_no_result_unused.xlsx", WRITER,
        "formulas without saved results in an unused column only",
        formula_columns={"random_draw": "missing"},
        notes="random_draw (H) is =RAND() with no saved result; no "
              "model column holds a formula.",
        verify=[[r"xl/worksheets/sheet1\.xml", r"<f>RAND\(\)</f>", "present"]]))

    # 5. strings: openpyxl writes every string inline.
    wb = new_wb()
    write_block(wb.active, rows, BASE)
    save(wb, "openpyxl/strings_inline.xlsx")
    fr.add(C.entry(
        "openpyxl/strings_inline.xlsx", WRITER,
        "inline strings (openpyxl writes every string as t=\"inlineStr\"; "
        "no sharedStrings part)",
        notes="The plainest openpyxl file: no shared strings table at all.",
        verify=[[r"xl/worksheets/sheet1\.xml", r't="inlineStr"><is><t>returning</t>', "present"],
                [r"xl/sharedStrings\.xml", r".", "absent"]]))

    # 6. numbers stored as text in baseline.
    wb = new_wb()
    write_block(wb.active, rows, BASE,
                getters={"baseline": lambda r, row, col: r["baseline_text"]})
    save(wb, "openpyxl/numbers_as_text.xlsx")
    fr.add(C.entry(
        "openpyxl/numbers_as_text.xlsx", WRITER, "numbers stored as text in baseline",
        notes="Every baseline cell is a string such as \"312.45\".",
        verify=[[r"xl/worksheets/sheet1\.xml", r'r="E2" t="inlineStr"', "present"]]))

    # 7a. an unused boolean column; 7b. coached as TRUE/FALSE.
    wb = new_wb()
    write_block(wb.active, rows, BASE + ["consented"])
    save(wb, "openpyxl/booleans_unused.xlsx")
    fr.add(C.entry(
        "openpyxl/booleans_unused.xlsx", WRITER, "booleans in an unused column",
        notes="consented (H) is TRUE/FALSE (t=\"b\").",
        verify=[[r"xl/worksheets/sheet1\.xml", r'r="H2" t="b"', "present"]]))

    wb = new_wb()
    write_block(wb.active, rows, BASE,
                getters={"coached": lambda r, row, col: bool(r["coached"])})
    save(wb, "openpyxl/booleans_treatment.xlsx")
    fr.add(C.entry(
        "openpyxl/booleans_treatment.xlsx", WRITER,
        "booleans as the treatment", spec=C.spec(treated="TRUE"),
        notes="coached is TRUE/FALSE booleans; TRUE is treated.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'r="D2" t="b"', "present"]]))

    # 8. error values: unused column; baseline in 2 rows.
    wb = new_wb()

    def err_col(r, row, col):
        return C.ERRORS[row % 2] if row % 5 == 0 else r["hours"] * 2

    write_block(wb.active, rows, BASE + ["hours_per_week"],
                getters={"hours_per_week": err_col})
    save(wb, "openpyxl/errors_unused.xlsx")
    fr.add(C.entry(
        "openpyxl/errors_unused.xlsx", WRITER, "error values in an unused column",
        notes="hours_per_week (H) holds #N/A or #DIV/0! (t=\"e\") in every "
              "fifth row; it is used by no model, so every row is data.",
        verify=[[r"xl/worksheets/sheet1\.xml", r't="e"><v>#N/A</v>', "present"],
                [r"xl/worksheets/sheet1\.xml", r't="e"><v>#DIV/0!</v>', "present"]]))

    wb = new_wb()

    def err_base(r, row, col):
        k = row - 1
        if k in C.ERROR_ROWS:
            return C.ERRORS[C.ERROR_ROWS.index(k)]
        return r["baseline"]

    write_block(wb.active, rows, BASE, getters={"baseline": err_base})
    save(wb, "openpyxl/errors_baseline.xlsx")
    fr.add(C.entry(
        "openpyxl/errors_baseline.xlsx", WRITER, "error values in baseline (2 rows)",
        fit_ids=C.ids_without_rows(rows, C.ERROR_ROWS),
        notes=f"baseline is #N/A in data row {C.ERROR_ROWS[0]} and #DIV/0! "
              f"in data row {C.ERROR_ROWS[1]}; those rows are left out "
              f"(n = {n - 2}).",
        verify=[[r"xl/worksheets/sheet1\.xml", r'r="E%d" t="e"><v>#N/A</v>' % (C.ERROR_ROWS[0] + 1), "present"]]))

    # 9. dates, 1900 and 1904.
    for epoch, name in ((None, "dates_1900"), (CALENDAR_MAC_1904, "dates_1904")):
        wb = new_wb()
        if epoch is not None:
            wb.epoch = epoch
        ws = wb.active
        write_block(ws, rows, BASE + ["visit_date"])
        for row in range(2, n + 2):
            ws.cell(row=row, column=8).number_format = "yyyy-mm-dd"
        rel = f"openpyxl/{name}.xlsx"
        save(wb, rel)
        v = [[r"xl/workbook\.xml", r'date1904="1"', "present" if epoch else "absent"]]
        first = rows[0]["visit_date"]
        serial = (first - (dt.date(1904, 1, 1) if epoch else dt.date(1899, 12, 30))).days
        v.append([r"xl/worksheets/sheet1\.xml", r'r="H2"[^>]*><v>%d</v>' % serial, "present"])
        fr.add(C.entry(
            rel, WRITER, f"dates in an unused column, {name[-4:]} date system",
            checks=[{"column": "visit_date", "row": 1, "date": first.isoformat()}],
            notes=f"visit_date (H) is a date with format yyyy-mm-dd; row 1 is "
                  f"stored as serial {serial}.",
            verify=v))

    # 10. title and blank rows above the header, title merged.
    wb = new_wb()
    ws = wb.active
    ws["A1"] = "Job coaching follow-up, spring cohort"
    ws.merge_cells("A1:G1")
    ws["A2"] = "Invented data for reader tests"
    write_block(ws, rows, BASE, top=4)
    save(wb, "openpyxl/title_merged.xlsx")
    fr.add(C.entry(
        "openpyxl/title_merged.xlsx", WRITER,
        "title merged across columns and blank rows above the header (header on row 4)",
        notes="A1:G1 merged title, A2 a subtitle, row 3 blank; header on row 4 "
              "(header_row 0: the reader should find it).",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<mergeCell ref="A1:G1"', "present"]]))

    # 11. hidden rows and columns, frozen panes, autofilter.
    wb = new_wb()
    ws = wb.active
    write_block(ws, rows, BASE + ["consented"])
    for rr in (5, 6, 30):
        ws.row_dimensions[rr].hidden = True
    ws.column_dimensions["E"].hidden = True
    ws.column_dimensions["H"].hidden = True
    ws.freeze_panes = "B2"
    ws.auto_filter.ref = f"A1:H{n + 1}"
    save(wb, "openpyxl/hidden_frozen_filter.xlsx")
    fr.add(C.entry(
        "openpyxl/hidden_frozen_filter.xlsx", WRITER,
        "hidden rows and columns, frozen panes, autofilter",
        notes="Sheet rows 5, 6 and 30 are hidden and are still data; column E "
              "(baseline, a control) and H (consented) are hidden; panes "
              "frozen at B2; autofilter on the data.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<row r="5"[^>]*hidden="1"', "present"],
                [r"xl/worksheets/sheet1\.xml", r'<pane xSplit="1" ySplit="1"', "present"],
                [r"xl/worksheets/sheet1\.xml", r'<autoFilter ref="A1:H%d"' % (n + 1), "present"]]))

    # 12. tables: without totals, with totals, two tables side by side.
    wb = new_wb()
    ws = wb.active
    last = write_block(ws, rows, BASE)
    t = Table(displayName="Clients", ref=f"A1:G{last}")
    t.tableStyleInfo = TableStyleInfo(name="TableStyleMedium2", showRowStripes=True)
    ws.add_table(t)
    save(wb, "openpyxl/table.xlsx")
    fr.add(C.entry(
        "openpyxl/table.xlsx", WRITER, "a table without a totals row",
        table="Clients", notes="Table Clients on A1:G61.",
        verify=[[r"xl/tables/table1\.xml", r'displayName="Clients"', "present"],
                [r"xl/tables/table1\.xml", r"totalsRowCount", "absent"]]))

    wb = new_wb()
    ws = wb.active
    last = write_block(ws, rows, BASE)
    tot = last + 1
    ws.cell(row=tot, column=1, value="Total")
    funcs = {"coached": ("sum", 109), "baseline": ("average", 101),
             "hours": ("sum", 109), "earnings": ("average", 101)}
    tcols = []
    for j, c in enumerate(BASE, start=1):
        tc = TableColumn(id=j, name=c)
        if j == 1:
            tc.totalsRowLabel = "Total"
        elif c in funcs:
            tc.totalsRowFunction = funcs[c][0]
            ws.cell(row=tot, column=j,
                    value=f"=SUBTOTAL({funcs[c][1]},Clients[{c}])")
        tcols.append(tc)
    t = Table(displayName="Clients", ref=f"A1:G{tot}", totalsRowCount=1,
              tableColumns=tcols)
    t.tableStyleInfo = TableStyleInfo(name="TableStyleMedium9", showRowStripes=True)
    t.autoFilter = openpyxl.worksheet.filters.AutoFilter(ref=f"A1:G{last}")
    ws.add_table(t)
    save(wb, "openpyxl/table_totals.xlsx")
    fr.add(C.entry(
        "openpyxl/table_totals.xlsx", WRITER,
        "a table with a totals row (label Total, SUBTOTAL sums and averages)",
        table="Clients",
        notes=f"Table Clients on A1:G{tot}, totalsRowCount 1; sheet row {tot} "
              "is the totals row (not data): A says Total, the others are "
              "SUBTOTAL formulas with no saved result.",
        verify=[[r"xl/tables/table1\.xml", r'totalsRowCount="1"', "present"],
                [r"xl/worksheets/sheet1\.xml", r"<f>SUBTOTAL\(101,Clients\[baseline\]\)</f><v\s*/?>", "present"]]))

    wb = new_wb()
    ws = wb.active
    half = n // 2
    write_block(ws, rows[:half], BASE, top=1, left=1)
    write_block(ws, rows[half:], BASE, top=1, left=9)
    t1 = Table(displayName="Cohort1", ref=f"A1:G{half + 1}")
    t2 = Table(displayName="Cohort2", ref=f"I1:O{n - half + 1}")
    for t in (t1, t2):
        t.tableStyleInfo = TableStyleInfo(name="TableStyleLight9", showRowStripes=True)
        ws.add_table(t)
    save(wb, "openpyxl/two_tables.xlsx")
    fr.add(C.entry(
        "openpyxl/two_tables.xlsx", WRITER,
        "two tables side by side on one sheet; the second is the data",
        table="Cohort2", fit_ids=[r["client_id"] for r in rows[half:]],
        notes=f"Cohort1 on A1:G{half + 1} holds data rows 1-{half}, Cohort2 "
              f"on I1:O{n - half + 1} holds rows {half + 1}-{n}; the expected "
              "fit is Cohort2's rows only. Both tables have the same column "
              "names.",
        verify=[[r"xl/tables/table2\.xml", r'displayName="Cohort2"', "present"]]))

    # 13. data validation and comments.
    wb = new_wb()
    ws = wb.active
    write_block(ws, rows, BASE)
    dv = DataValidation(type="list", formula1='"new,returning"', allow_blank=False)
    dv.add(f"C2:C{n + 1}")
    ws.add_data_validation(dv)
    ws["C1"].comment = Comment("new or returning client", "Evaluator")
    ws["G1"].comment = Comment("weekly earnings six months after intake", "Evaluator")
    ws["E10"].comment = Comment("checked against the intake form", "Evaluator")
    save(wb, "openpyxl/validation_comments.xlsx")
    fr.add(C.entry(
        "openpyxl/validation_comments.xlsx", WRITER,
        "data validation (dropdown on client_type) and comments",
        notes="List validation \"new,returning\" on C2:C61; comments on C1, "
              "G1 and E10.",
        verify=[[r"xl/worksheets/sheet1\.xml", r"<dataValidation[^>]*type=\"list\"", "present"],
                [r"xl/comments/comment1\.xml", r"intake form", "present"]]))

    # 14. a chart sheet first, a cover sheet, data on Clients.
    wb = new_wb("Cover")
    cover = wb.active
    cover["A1"] = "Job coaching follow-up"
    cover["A3"] = "The data are on the sheet Clients."
    ws = wb.create_sheet("Clients")
    write_block(ws, rows, BASE)
    cs = wb.create_chartsheet("Chart", 0)
    ch = BarChart()
    ch.title = "Earnings by client"
    ch.add_data(Reference(ws, min_col=7, min_row=1, max_row=n + 1), titles_from_data=True)
    cs.add_chart(ch)
    wb.active = 1
    save(wb, "openpyxl/chartsheet_first.xlsx")
    fr.add(C.entry(
        "openpyxl/chartsheet_first.xlsx", WRITER,
        "a chart sheet first, then a cover sheet, data on Clients",
        sheet="Clients",
        notes="Sheets in order: Chart (a chart sheet), Cover, Clients.",
        verify=[[r"xl/workbook\.xml", r'<sheet [^>]*name="Chart"[^/]*/><sheet [^>]*name="Cover"', "present"],
                [r"xl/chartsheets/sheet1\.xml", r"<chartsheet", "present"]]))

    # 15. unicode and apostrophes in sheet and column names.
    wb = new_wb("Clients' données")
    ws = wb.active
    cols = BASE[:-1] + ["revenu 6 mois (€)"]
    write_block(ws, rows, cols, getters={"revenu 6 mois (€)": lambda r, row, col: r["earnings"]})
    wb.defined_names.append(DefinedName("revenu", attr_text=f"'Clients'' données'!$G$2:$G${n + 1}"))
    save(wb, "openpyxl/unicode_names.xlsx")
    fr.add(C.entry(
        "openpyxl/unicode_names.xlsx", WRITER,
        "sheet and column names with unicode and an apostrophe",
        sheet="Clients' données", spec=C.spec(outcome="revenu 6 mois (€)"),
        notes="The outcome column is named \"revenu 6 mois (€)\"; a defined "
              "name revenu points at it with the quoted sheet name.",
        verify=[[r"xl/workbook\.xml", "name=\"Clients' données\"", "present"],
                [r"xl/workbook\.xml", r"'Clients'' données'!\$G\$2", "present"]]))

    fr.save()


if __name__ == "__main__":
    main()
