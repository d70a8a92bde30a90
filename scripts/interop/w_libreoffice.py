"""Writes the LibreOffice files of the interoperability corpus.

Each workbook starts as a flat OpenDocument spreadsheet (.fods) written
here, which LibreOffice headless loads and saves with its Office Open XML
filter ("Calc MS Excel 2007 XML"); LibreOffice computes every formula and
saves the results. The .xlsm is made through LibreOffice's UNO bridge: the
.fods is loaded, a Basic module in VBA compatibility mode is added, and the
document is stored with "Calc MS Excel 2007 VBA XML", which writes
xl/vbaProject.bin; a copy of that file is left at INTEROP_VBA_BIN for the
xlsxwriter script.

Usage: w_libreoffice.py WORKDIR       (WORKDIR: a scratch directory)
"""

import datetime as dt
import os
import subprocess
import sys
import time
import zipfile
from xml.sax.saxutils import escape, quoteattr

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common as C  # noqa: E402

BASE = ["client_id", "site", "client_type", "coached", "baseline", "hours",
        "earnings"]


def lo_version():
    out = subprocess.run(["soffice", "--version"], capture_output=True,
                         text=True, check=True).stdout.strip()
    # "LibreOffice 7.4.7.2 40(Build:2)"
    return " ".join(out.split()[:2])


NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
      'xmlns:style="urn:oasis:names:tc:opendocument:xmlns:style:1.0" '
      'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" '
      'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
      'xmlns:number="urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0" '
      'xmlns:fo="urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0" '
      'xmlns:dc="http://purl.org/dc/elements/1.1/" '
      'xmlns:meta="urn:oasis:names:tc:opendocument:xmlns:meta:1.0" '
      'xmlns:of="urn:oasis:names:tc:opendocument:xmlns:of:1.2" '
      'xmlns:ooo="http://openoffice.org/2004/office"')

STYLES = """<office:automatic-styles>
 <number:date-style style:name="N1"><number:year number:style="long"/><number:text>-</number:text><number:month number:style="long"/><number:text>-</number:text><number:day number:style="long"/></number:date-style>
 <style:style style:name="cdate" style:family="table-cell" style:data-style-name="N1"/>
 <style:style style:name="ctitle" style:family="table-cell"><style:text-properties fo:font-weight="bold" fo:font-size="14pt"/></style:style>
</office:automatic-styles>"""


class Cell:
    def __init__(self, value=None, kind=None, formula=None, style=None,
                 span=1, note=None, validation=None):
        self.value, self.kind, self.formula = value, kind, formula
        self.style, self.span, self.note = style, span, note
        self.validation = validation

    def xml(self):
        a = []
        if self.style:
            a.append(f'table:style-name="{self.style}"')
        if self.span > 1:
            a.append(f'table:number-columns-spanned="{self.span}" table:number-rows-spanned="1"')
        if self.validation:
            a.append(f'table:content-validation-name="{self.validation}"')
        if self.formula:
            a.append("table:formula=" + quoteattr("of:" + self.formula))
        v, k = self.value, self.kind
        body = ""
        if self.note:
            body += ('<office:annotation><dc:creator>Evaluator</dc:creator>'
                     f'<text:p>{escape(self.note)}</text:p></office:annotation>')
        if self.formula:
            pass
        elif v is None:
            pass
        elif k == "string" or isinstance(v, str):
            a.append('office:value-type="string"')
            body += f"<text:p>{escape(str(v))}</text:p>"
        elif k == "date":
            a.append(f'office:value-type="date" office:date-value="{v.isoformat()}"')
            body += f"<text:p>{v.isoformat()}</text:p>"
        elif isinstance(v, bool):
            a.append(f'office:value-type="boolean" office:boolean-value="{str(v).lower()}"')
            body += f"<text:p>{'TRUE' if v else 'FALSE'}</text:p>"
        else:
            a.append(f'office:value-type="float" office:value="{v!r}"')
            body += f"<text:p>{v!r}</text:p>"
        s = "<table:table-cell " + " ".join(a) + ">" + body + "</table:table-cell>"
        s += "<table:covered-table-cell/>" * (self.span - 1)
        return s


class Sheet:
    def __init__(self, name):
        self.name = name
        self.rows = []  # list of (cells, hidden)
        self.hidden_cols = set()
        self.ncols = 0

    def row(self, cells, hidden=False):
        self.rows.append((cells, hidden))
        self.ncols = max(self.ncols, sum(c.span for c in cells))

    def xml(self):
        out = [f"<table:table table:name={quoteattr(self.name)}>"]
        for j in range(max(self.ncols, 1)):
            vis = ' table:visibility="collapse"' if j in self.hidden_cols else ""
            out.append(f"<table:table-column{vis}/>")
        for cells, hidden in self.rows:
            vis = ' table:visibility="collapse"' if hidden else ""
            out.append(f"<table:table-row{vis}>" + "".join(c.xml() for c in cells)
                       + "</table:table-row>")
        out.append("</table:table>")
        return "".join(out)


def document(sheets, null_date=None, validations="", db_ranges=""):
    calc = ""
    if null_date:
        calc = (f'<table:calculation-settings><table:null-date '
                f'table:date-value="{null_date}"/></table:calculation-settings>')
    return (f'<?xml version="1.0" encoding="UTF-8"?>\n<office:document {NS} '
            'office:version="1.2" office:mimetype="application/vnd.oasis.opendocument.spreadsheet">'
            '<office:meta><meta:generator>slopewise interop corpus</meta:generator></office:meta>'
            f"{STYLES}<office:body><office:spreadsheet>{calc}{validations}"
            + "".join(s.xml() for s in sheets)
            + f"{db_ranges}</office:spreadsheet></office:body></office:document>\n")


def data_sheet(name, rows, cols, getters=None, top=None, hidden_rows=()):
    getters = getters or {}
    sh = Sheet(name)
    for r in top or []:
        sh.row(r)
    sh.row([Cell(c) for c in cols])
    for i, r in enumerate(rows, start=1):
        sheet_row = len(sh.rows) + 1
        cells = []
        for c in cols:
            g = getters.get(c)
            cells.append(g(r, sheet_row) if g else Cell(r[c]))
        sh.row(cells, hidden=i in hidden_rows)
    return sh


def convert(srcs, outdir, work, filt="xlsx:Calc MS Excel 2007 XML"):
    prof = "file://" + os.path.join(work, "lo-profile")
    subprocess.run(["soffice", "-env:UserInstallation=" + prof, "--headless",
                    "--norestore", "--convert-to", filt, "--outdir", outdir] + srcs,
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


class Uno:
    """A LibreOffice process driven through UNO, for what --convert-to
    cannot do: adding a VBA project before saving."""

    def __init__(self, work):
        import uno
        self.uno = uno
        self.pipe = f"slopewise_interop_{os.getpid()}"
        prof = "file://" + os.path.join(work, "lo-profile-uno")
        self.proc = subprocess.Popen(
            ["soffice", "-env:UserInstallation=" + prof, "--headless",
             "--invisible", "--norestore", "--nologo",
             f"--accept=pipe,name={self.pipe};urp;"],
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        local = uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext(
            "com.sun.star.bridge.UnoUrlResolver", local)
        ctx = None
        for _ in range(120):
            try:
                ctx = resolver.resolve(
                    f"uno:pipe,name={self.pipe};urp;StarOffice.ComponentContext")
                break
            except Exception:
                time.sleep(0.5)
        if ctx is None:
            self.close()
            raise RuntimeError("LibreOffice did not answer on its UNO pipe")
        self.desk = ctx.ServiceManager.createInstanceWithContext(
            "com.sun.star.frame.Desktop", ctx)

    def pv(self, n, v):
        from com.sun.star.beans import PropertyValue
        p = PropertyValue()
        p.Name, p.Value = n, v
        return p

    def convert(self, src, dst, filt, prepare=None):
        doc = self.desk.loadComponentFromURL(
            self.uno.systemPathToFileUrl(src), "_blank", 0,
            (self.pv("Hidden", True),))
        try:
            if prepare:
                prepare(doc)
            doc.storeToURL(self.uno.systemPathToFileUrl(dst),
                           (self.pv("FilterName", filt),))
        finally:
            doc.close(True)

    def close(self):
        try:
            self.desk.terminate()
        except Exception:
            pass
        try:
            self.proc.wait(60)
        except subprocess.TimeoutExpired:
            self.proc.terminate()
            self.proc.wait(30)


def add_vba(doc):
    libs = doc.BasicLibraries
    libs.VBACompatibilityMode = True
    lib = libs.getByName("Standard")
    lib.insertByName("Coaching",
                     "Option VBASupport 1\n"
                     "Sub CountCoached()\n"
                     "  MsgBox \"Coached clients: \" & Application.WorksheetFunction.Sum(Range(\"D2:D61\"))\n"
                     "End Sub\n")


def main():
    work = sys.argv[1]
    os.makedirs(work, exist_ok=True)
    rows = C.load_rows(C.data_path())
    n = len(rows)
    writer = lo_version()
    fr = C.Fragments("libreoffice")
    docs = {}  # stem -> fods text
    calc_facts = [r"xl/workbook\.xml", r'<fileVersion appName="Calc"/>', "present"]

    # 17. plain xlsx from an .fods; consented booleans become numbers.
    docs["plain_from_fods"] = document([data_sheet("Data", rows, BASE + ["consented"])])
    fr.add(C.entry(
        "libreoffice/plain_from_fods.xlsx", writer,
        "plain data saved by LibreOffice's Office Open XML filter from an .fods",
        notes="consented was an ODF boolean; LibreOffice saves it as the "
              "number 1/0 (t=\"n\"), not t=\"b\". Every formula-free cell is "
              "as in data.csv.",
        verify=[calc_facts, [r"xl/workbook\.xml", r'date1904="false"', "present"],
                [r"xl/sharedStrings\.xml", r"<t xml:space=\"preserve\">returning</t>|<t>returning</t>", "present"]]))

    # 1 + 17. formulas with saved results in used columns.
    cols = ["client_id", "site", "client_type", "coached", "baseline",
            "hours_a", "hours_b", "hours_total", "earnings", "earnings_raw"]
    docs["formulas_saved"] = document([data_sheet("Data", rows, cols, getters={
        "hours_total": lambda r, R: Cell(formula=f"=[.F{R}]+[.G{R}]"),
        "earnings": lambda r, R: Cell(formula=f"=ROUND([.J{R}];2)"),
        "earnings_raw": lambda r, R: Cell(float(r["earnings_raw"])),
    })])
    fr.add(C.entry(
        "libreoffice/formulas_saved.xlsx", writer,
        "formulas with saved results in used columns (computed by LibreOffice)",
        spec=C.spec(controls=["baseline", "hours_total"]),
        fit_controls=["baseline", "hours"],
        formula_columns={"hours_total": "saved", "earnings": "saved"},
        notes="The .fods had formulas and no values; LibreOffice computed "
              "them and saved <f aca=\"false\">ROUND(J2,2)</f><v>..</v>.",
        verify=[calc_facts, [r"xl/worksheets/sheet1\.xml", r'<f aca="false">ROUND\(J2,2\)</f><v>%s</v>' % rows[0]["earnings_text"].rstrip("0").rstrip("."), "present"]]))

    # 6. numbers stored as text.
    docs["numbers_as_text"] = document([data_sheet("Data", rows, BASE, getters={
        "baseline": lambda r, R: Cell(r["baseline_text"], kind="string")})])
    fr.add(C.entry(
        "libreoffice/numbers_as_text.xlsx", writer, "numbers stored as text in baseline",
        notes="baseline was an ODF string cell; saved as a shared string.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<c r="E2" s="\d+" t="s">', "present"]]))

    # 8. error values as formula results.
    def err_base(r, R):
        k = R - 1
        if k in C.ERROR_ROWS:
            return Cell(formula=["=NA()", "=1/0"][C.ERROR_ROWS.index(k)])
        return Cell(r["baseline"])

    def err_unused(r, R):
        return Cell(formula=f"=[.F{R}]/0") if R % 6 == 0 else Cell(r["hours"] * 2)

    docs["errors_baseline"] = document([data_sheet(
        "Data", rows, BASE + ["hours_per_week"],
        getters={"baseline": err_base, "hours_per_week": err_unused})])
    fr.add(C.entry(
        "libreoffice/errors_baseline.xlsx", writer,
        "error values in baseline (2 rows) and in an unused column, as saved formula results",
        fit_ids=C.ids_without_rows(rows, C.ERROR_ROWS),
        formula_columns={"baseline": "saved", "hours_per_week": "saved"},
        notes=f"baseline is =NA() (#N/A) in data row {C.ERROR_ROWS[0]} and =1/0 "
              f"(#DIV/0!) in row {C.ERROR_ROWS[1]}: left out, n = {n - 2}.",
        verify=[[r"xl/worksheets/sheet1\.xml", r't="e"><f aca="false">NA\(\)</f><v>#N/A</v>', "present"]]))

    # 9. dates: 1904 null date; and the StarCalc 1900-01-01 null date.
    def date_cell(r, R):
        return Cell(r["visit_date"], kind="date", style="cdate")

    docs["dates_1904"] = document([data_sheet("Data", rows, BASE + ["visit_date"],
                                              getters={"visit_date": date_cell})],
                                  null_date="1904-01-01")
    fr.add(C.entry(
        "libreoffice/dates_1904.xlsx", writer, "dates in an unused column, 1904 date system",
        checks=[{"column": "visit_date", "row": 1, "date": rows[0]["visit_date"].isoformat()}],
        notes="The .fods null date was 1904-01-01; LibreOffice writes "
              "workbookPr date1904=\"true\" (the word, not 1).",
        verify=[[r"xl/workbook\.xml", r'date1904="true"', "present"]]))
    # LibreOffice 7.4 saves a 1900-01-01 null date as date1904="false" with
    # serials counted from 1900-01-01 and nothing else: every date reads two
    # days early, and no reader can tell.
    shifted = rows[0]["visit_date"].toordinal() - 2
    docs["dates_nulldate_1900"] = document([data_sheet("Data", rows, BASE + ["visit_date"],
                                                       getters={"visit_date": date_cell})],
                                           null_date="1900-01-01")
    fr.add(C.entry(
        "libreoffice/dates_nulldate_1900.xlsx", writer,
        "dates from a document whose null date is 1900-01-01 (the old StarCalc setting)",
        checks=[{"column": "visit_date", "row": 1,
                 "date": dt.date.fromordinal(shifted).isoformat()}],
        notes="The author typed 2024-03-05 in row 1, but LibreOffice 7.4 "
              "writes the serial counted from 1900-01-01 with date1904=\"false\" "
              "and no dateCompatibility attribute, so the file itself says "
              "two days earlier; the check is what the file says. visit_date "
              "is unused: the fit matches.",
        verify=[[r"xl/workbook\.xml", r'date1904="false"', "present"],
                [r"xl/workbook\.xml", r"dateCompatibility", "absent"]]))

    # 10. a merged title and blank rows above the header.
    title = [[Cell("Job coaching follow-up, spring cohort", style="ctitle", span=7)],
             [Cell("Invented data for reader tests")], []]
    docs["title_merged"] = document([data_sheet("Data", rows, BASE, top=title)])
    fr.add(C.entry(
        "libreoffice/title_merged.xlsx", writer,
        "title merged across columns and blank rows above the header (header on row 4)",
        notes="A1:G1 merged; header on row 4 (header_row 0: to be found).",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<mergeCell ref="A1:G1"/>', "present"]]))

    # 11. hidden rows and columns, frozen panes, autofilter.
    sh = data_sheet("Data", rows, BASE + ["consented"], hidden_rows={10, 11, 50})
    sh.hidden_cols = {5, 7}
    docs["hidden_frozen_filter"] = document(
        [sh],
        db_ranges=('<table:database-ranges><table:database-range table:name="__Anonymous_Sheet_DB__0" '
                   f'table:target-range-address="Data.A1:Data.H{n + 1}" '
                   'table:display-filter-buttons="true"/></table:database-ranges>'))
    fr.add(C.entry(
        "libreoffice/hidden_frozen_filter.xlsx", writer,
        "hidden rows and columns, autofilter (no frozen panes: see notes)",
        notes="Data rows 10, 11 and 50 (sheet rows 11, 12, 51) hidden, still "
              "data; columns F (hours) and H (consented) hidden; autofilter "
              "on A1:H61. LibreOffice headless saves no frozen panes from an "
              "ODF document (they belong to a view, and a headless "
              "conversion has none), so this file has none.",
        verify=[[r"xl/worksheets/sheet1\.xml", r'<row r="11"[^>]*hidden="true"', "present"],
                [r"xl/worksheets/sheet1\.xml", r'<autoFilter ref="A1:H%d"' % (n + 1), "present"],
                [r"xl/worksheets/sheet1\.xml", r"<pane ", "absent"]]))

    # 13. validation and comments.
    val = ('<table:content-validations><table:content-validation table:name="val1" '
           'table:condition="of:cell-content-is-in-list(&quot;new&quot;;&quot;returning&quot;)" '
           'table:allow-empty-cell="false" table:display-list="unsorted" '
           'table:base-cell-address="Data.C2"/></table:content-validations>')
    notes = {("client_type", 0): "new or returning client",
             ("baseline", 9): "checked against the intake form"}

    def with_val(r, R):
        return Cell(r["client_type"], validation="val1")

    sh = data_sheet("Data", rows, BASE, getters={"client_type": with_val})
    for (col, i), text in notes.items():
        sh.rows[i][0][BASE.index(col)].note = text
    docs["validation_comments"] = document([sh], validations=val)
    fr.add(C.entry(
        "libreoffice/validation_comments.xlsx", writer,
        "data validation (dropdown on client_type) and comments",
        notes="A list validation on C2:C61 and comments on C1 and E10.",
        verify=[[r"xl/worksheets/sheet1\.xml", r"<dataValidation[^>]*type=\"list\"", "present"],
                [r"xl/comments1\.xml", r"intake form", "present"]]))

    # 15. unicode sheet and column names, with a sheet before it.
    cover = Sheet("Résumé")
    cover.row([Cell("Job coaching follow-up")])
    cover.row([Cell(formula="=AVERAGE([$'Clients'' données'.G2:.G61])")])
    cols = BASE[:-1] + ["revenu 6 mois (€)"]
    docs["unicode_names"] = document([cover, data_sheet(
        "Clients' données", rows, cols,
        getters={"revenu 6 mois (€)": lambda r, R: Cell(r["earnings"])})])
    fr.add(C.entry(
        "libreoffice/unicode_names.xlsx", writer,
        "sheet and column names with unicode and an apostrophe; a cover sheet first",
        sheet="Clients' données", spec=C.spec(outcome="revenu 6 mois (€)"),
        notes="Sheets: Résumé (with =AVERAGE('Clients'' données'!G2:G61), "
              "saved), then Clients' données.",
        verify=[[r"xl/workbook\.xml", "name=\"Clients&apos; données\"|name=\"Clients' données\"", "present"]]))

    # write the .fods files and convert them in one LibreOffice run
    srcs = []
    for stem, text in docs.items():
        p = os.path.join(work, stem + ".fods")
        with open(p, "w", encoding="utf-8") as f:
            f.write(text)
        srcs.append(p)
    outdir = os.path.join(C.out_dir(), "libreoffice")
    os.makedirs(outdir, exist_ok=True)
    convert(srcs, outdir, work)
    for stem in docs:
        if not os.path.exists(os.path.join(outdir, stem + ".xlsx")):
            sys.exit(f"LibreOffice did not write {stem}.xlsx")

    # 17. the "Calc Office Open XML" filter (File > Save As > "Office Open
    # XML Spreadsheet"), which writes workbookPr dateCompatibility="false".
    ooxml = os.path.join(work, "ooxml")
    os.makedirs(ooxml, exist_ok=True)
    p = os.path.join(ooxml, "office_open_xml_filter.fods")
    with open(p, "w", encoding="utf-8") as f:
        f.write(document([data_sheet("Data", rows, BASE)]))
    convert([p], outdir, work, filt="xlsx:Calc Office Open XML")
    fr.add(C.entry(
        "libreoffice/office_open_xml_filter.xlsx", writer,
        "plain data saved with LibreOffice's \"Office Open XML Spreadsheet\" filter (dateCompatibility)",
        notes="The filter \"Calc Office Open XML\" writes workbookPr "
              "dateCompatibility=\"false\", which the workbook writer library "
              "drops; Slopewise puts it back when it saves.",
        verify=[calc_facts, [r"xl/workbook\.xml", r'dateCompatibility="false"', "present"]]))

    # 16. .xlsm with a VBA project, through UNO.
    fods = os.path.join(work, "macro_enabled.fods")
    with open(fods, "w", encoding="utf-8") as f:
        f.write(document([data_sheet("Data", rows, BASE)]))
    xlsm = os.path.join(outdir, "macro_enabled.xlsm")
    lo = Uno(work)
    try:
        lo.convert(fods, xlsm, "Calc MS Excel 2007 VBA XML", add_vba)
    finally:
        lo.close()
    with zipfile.ZipFile(xlsm) as z:
        if "xl/vbaProject.bin" in z.namelist():
            vba = os.environ.get("INTEROP_VBA_BIN")
            if vba:
                with open(vba, "wb") as f:
                    f.write(z.read("xl/vbaProject.bin"))
    fr.add(C.entry(
        "libreoffice/macro_enabled.xlsm", writer,
        "macro-enabled .xlsm with a vbaProject.bin written by LibreOffice",
        notes="Made through UNO: the .fods loaded, a Basic module Coaching "
              "(Option VBASupport 1, one Sub) added with the library "
              "container in VBA compatibility mode, stored with the filter "
              "\"Calc MS Excel 2007 VBA XML\". Without VBA compatibility "
              "mode LibreOffice writes an .xlsm with no vbaProject.bin.",
        verify=[[r"xl/vbaProject\.bin", r".", "present"],
                [r"\[Content_Types\]\.xml", r"sheet\.macroEnabled\.main\+xml", "present"]]))
    fr.save()


if __name__ == "__main__":
    main()
