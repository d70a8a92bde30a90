// Writes the exceljs files of the interoperability corpus. exceljs never
// computes a formula: it saves the result it is given ({formula, result})
// and none otherwise.

import ExcelJS from "exceljs";
import * as C from "./common.mjs";

const WRITER = C.version("exceljs");
const rows = C.loadRows();
const n = rows.length;
const frags = [];

function book() {
  const wb = new ExcelJS.Workbook();
  wb.creator = "interop corpus";
  wb.created = C.DOC_TIME;
  wb.modified = C.DOC_TIME;
  return wb;
}

// Header at 1-based row `top`, data below; cellValue[col](r, row) gives a
// cell value.
function block(ws, data, cols, top = 1, left = 1, cellValue = {}) {
  cols.forEach((c, j) => { ws.getCell(top, left + j).value = c; });
  data.forEach((r, i) => {
    const row = top + 1 + i;
    cols.forEach((c, j) => {
      const f = cellValue[c];
      ws.getCell(row, left + j).value = f ? f(r, row) : r[c];
    });
  });
  return top + data.length;
}

async function save(wb, rel) {
  await wb.xlsx.writeFile(C.target(rel));
}

const S1 = "xl/worksheets/sheet1\\.xml";

// 1. formulas with saved results; earnings as one shared formula.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  const cols = ["client_id", "site", "client_type", "coached", "baseline", "hours_a", "hours_b",
    "hours_total", "earnings", "earnings_raw"];
  block(ws, rows, cols, 1, 1, {
    hours_total: (r, row) => ({ formula: `F${row}+G${row}`, result: r.hours }),
    earnings: (r, row) => (row === 2
      ? { formula: "ROUND(J2,2)", result: r.earnings, shareType: "shared", ref: `I2:I${n + 1}` }
      : { sharedFormula: "I2", result: r.earnings }),
    earnings_raw: (r) => r.earnings_raw,
  });
  await save(wb, "exceljs/formulas_saved.xlsx");
  frags.push(C.entry("exceljs/formulas_saved.xlsx", WRITER,
    "formulas with saved results in used columns (earnings as a shared formula)", {
      spec: C.spec({ controls: ["baseline", "hours_total"] }),
      fit_controls: ["baseline", "hours"],
      formula_columns: { hours_total: "saved", earnings: "saved" },
      notes: "hours_total is =F2+G2 with result; earnings is one shared formula "
        + `(<f t="shared" ref="I2:I${n + 1}" si="0">ROUND(J2,2)</f> in I2, <f t="shared" si="0"/> below), `
        + "every cell with its result in <v>.",
      verify: [[S1, '<f t="shared" ref="I2:I\\d+" si="0">ROUND\\(J2,2\\)</f>', "present"],
        [S1, '<f t="shared" si="0"\\s*/><v>', "present"]],
    }));
}

// 2a. formulas without results, simple arithmetic; and a shared-formula file.
{
  const kinds = ["H{r}*2-H{r}", "H{r}+0", "SUM(H{r},0)", "ROUND(H{r},2)", "IF(D{r}=1,H{r},H{r})"];
  const wb = book();
  const ws = wb.addWorksheet("Data");
  block(ws, rows, [...C.BASE, "baseline_entered", "earnings_raw"], 1, 1, {
    baseline: (r, row) => ({ formula: kinds[(row - 2) % 5].replaceAll("{r}", row) }),
    earnings: (r, row) => ({ formula: `ROUND(I${row},2)` }),
    baseline_entered: (r) => r.baseline,
    earnings_raw: (r) => r.earnings_raw,
  });
  await save(wb, "exceljs/formulas_no_result_used.xlsx");
  frags.push(C.entry("exceljs/formulas_no_result_used.xlsx", WRITER,
    "formulas without saved results, used column, simple arithmetic", {
      formula_columns: { baseline: "computed", earnings: "computed" },
      notes: "As openpyxl/formulas_no_result_used.xlsx; exceljs writes <f>..</f> and no <v> at all.",
      verify: [[S1, "<f>H2\\*2-H2</f></c>", "present"]],
    }));

  const wb2 = book();
  const ws2 = wb2.addWorksheet("Data");
  block(ws2, rows, [...C.BASE, "earnings_raw"], 1, 1, {
    earnings: (r, row) => (row === 2
      ? { formula: "ROUND(H2,2)", shareType: "shared", ref: `G2:G${n + 1}` }
      : { sharedFormula: "G2" }),
    earnings_raw: (r) => r.earnings_raw,
  });
  await save(wb2, "exceljs/formulas_no_result_shared.xlsx");
  frags.push(C.entry("exceljs/formulas_no_result_shared.xlsx", WRITER,
    "formulas without saved results, used column, one shared formula", {
      formula_columns: { earnings: "computed" },
      notes: `earnings is one shared formula ROUND(H2,2) over G2:G${n + 1} (H = earnings_raw), `
        + "no result saved: a reader must shift the master's references to compute each row.",
      verify: [[S1, '<f t="shared" ref="G2:G\\d+" si="0">ROUND\\(H2,2\\)</f>', "present"]],
    }));
}

// 2b. not computable: refuse.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  block(ws, rows, [...C.BASE, "earnings_entered"], 1, 1, {
    earnings: (r, row) => ({ formula: row % 2 === 0 ? 'INDIRECT("H"&ROW())' : `RAND()*0+H${row}` }),
    earnings_entered: (r) => r.earnings,
  });
  await save(wb, "exceljs/formulas_no_result_refuse.xlsx");
  frags.push(C.entry("exceljs/formulas_no_result_refuse.xlsx", WRITER,
    "formulas without saved results, used column, not computable", {
      expect: "refuse", reason: "formula-no-result", formula_columns: { earnings: "missing" },
      notes: 'earnings alternates =INDIRECT("H"&ROW()) and =RAND()*0+H3 with no result; '
        + "the effects are those the author meant.",
      verify: [[S1, "<f>INDIRECT\\(", "present"]],
    }));
}

// 3. unused column only.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  block(ws, rows, [...C.BASE, "random_draw"], 1, 1, { random_draw: () => ({ formula: "RAND()" }) });
  await save(wb, "exceljs/formulas_no_result_unused.xlsx");
  frags.push(C.entry("exceljs/formulas_no_result_unused.xlsx", WRITER,
    "formulas without saved results in an unused column only", {
      formula_columns: { random_draw: "missing" },
      notes: "random_draw (H) is =RAND() with no result.",
      verify: [[S1, "<f>RAND\\(\\)</f>", "present"]],
    }));
}

// 5. rich text in site and client_type.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  const rich = (s, k) => ({ richText: [{ font: { bold: true }, text: s.slice(0, k) }, { text: s.slice(k) }] });
  block(ws, rows, C.BASE, 1, 1, {
    site: (r, row) => (row % 3 === 0 ? rich(r.site, 4) : r.site),
    client_type: (r, row) => (row % 4 === 1 ? rich(r.client_type, r.client_type === "new" ? 1 : 3) : r.client_type),
  });
  await save(wb, "exceljs/strings_rich.xlsx");
  frags.push(C.entry("exceljs/strings_rich.xlsx", WRITER,
    "shared strings with rich-text runs in site and client_type", {
      notes: "Some cells are rich text (a bold first run); the text is the runs joined.",
      verify: [["xl/sharedStrings\\.xml", "<r><rPr><b/>.*?</rPr><t>ret</t></r><r><t>urning</t></r>", "present"]],
    }));
}

// 6. numbers as text.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  block(ws, rows, C.BASE, 1, 1, { baseline: (r) => r.baseline_text });
  await save(wb, "exceljs/numbers_as_text.xlsx");
  frags.push(C.entry("exceljs/numbers_as_text.xlsx", WRITER, "numbers stored as text in baseline", {
    notes: "baseline cells are shared strings such as \"312.45\".",
    verify: [[S1, '<c r="E2" t="s">', "present"]],
  }));
}

// 7. booleans as the treatment.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  block(ws, rows, [...C.BASE, "consented"], 1, 1, { coached: (r) => r.coached === 1 });
  await save(wb, "exceljs/booleans_treatment.xlsx");
  frags.push(C.entry("exceljs/booleans_treatment.xlsx", WRITER,
    "booleans as the treatment, and an unused boolean column", {
      spec: C.spec({ treated: "TRUE" }),
      notes: "coached and consented are TRUE/FALSE (t=\"b\").",
      verify: [[S1, '<c r="D2" t="b">', "present"]],
    }));
}

// 8. error values (plain error cells, no formula).
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  block(ws, rows, [...C.BASE, "hours_per_week"], 1, 1, {
    baseline: (r, row) => {
      const k = C.ERROR_ROWS.indexOf(row - 1);
      return k >= 0 ? { error: C.ERRORS[k] } : r.baseline;
    },
    hours_per_week: (r, row) => (row % 5 === 0 ? { error: C.ERRORS[row % 2] } : r.hours * 2),
  });
  await save(wb, "exceljs/errors_baseline.xlsx");
  frags.push(C.entry("exceljs/errors_baseline.xlsx", WRITER,
    "error values in baseline (2 rows) and in an unused column, as plain error cells", {
      fit_ids: C.idsWithoutRows(rows, C.ERROR_ROWS),
      notes: `baseline is #N/A in data row ${C.ERROR_ROWS[0]} and #DIV/0! in row ${C.ERROR_ROWS[1]} `
        + `(t="e", no formula): left out, n = ${n - 2}. hours_per_week has errors too, unused.`,
      verify: [[S1, `<c r="E${C.ERROR_ROWS[0] + 1}" t="e"><v>#N/A</v>`, "present"]],
    }));
}

// 9. dates, 1904.
{
  const wb = book();
  wb.properties.date1904 = true;
  const ws = wb.addWorksheet("Data");
  block(ws, rows, [...C.BASE, "visit_date"], 1, 1, { visit_date: (r) => r.visit_date });
  ws.getColumn(8).numFmt = "yyyy-mm-dd";
  await save(wb, "exceljs/dates_1904.xlsx");
  frags.push(C.entry("exceljs/dates_1904.xlsx", WRITER, "dates in an unused column, 1904 date system", {
    checks: [{ column: "visit_date", row: 1, date: rows[0].visit_date_text }],
    notes: "workbook.properties.date1904 = true.",
    verify: [["xl/workbook\\.xml", 'date1904="1"', "present"]],
  }));
}

// 10. merged title above the header.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  ws.getCell("A1").value = "Job coaching follow-up, spring cohort";
  ws.mergeCells("A1:G1");
  ws.getCell("A2").value = "Invented data for reader tests";
  ws.mergeCells("A2:D2");
  block(ws, rows, C.BASE, 4);
  await save(wb, "exceljs/title_merged.xlsx");
  frags.push(C.entry("exceljs/title_merged.xlsx", WRITER,
    "title merged across columns and blank rows above the header (header on row 4)", {
      notes: "A1:G1 and A2:D2 merged; header on row 4 (header_row 0: to be found).",
      verify: [[S1, '<mergeCell ref="A1:G1"/>', "present"]],
    }));
}

// 11. hidden rows and columns, frozen panes, autofilter.
{
  const wb = book();
  const ws = wb.addWorksheet("Data", { views: [{ state: "frozen", xSplit: 2, ySplit: 1 }] });
  block(ws, rows, [...C.BASE, "consented"]);
  for (const r of [2, 20, 61]) ws.getRow(r).hidden = true;
  ws.getColumn(4).hidden = true;
  ws.autoFilter = `A1:H${n + 1}`;
  await save(wb, "exceljs/hidden_frozen_filter.xlsx");
  frags.push(C.entry("exceljs/hidden_frozen_filter.xlsx", WRITER,
    "hidden rows and columns, frozen panes, autofilter", {
      notes: "Sheet rows 2, 20 and 61 (the first and last data rows among them) hidden, still data; "
        + "column D (coached, the treatment) hidden; panes frozen at C2; autofilter A1:H61.",
      verify: [[S1, '<row r="61"[^>]*hidden="1"', "present"], [S1, 'state="frozen"', "present"]],
    }));
}

// 12. tables.
function tableCols(totals) {
  return C.BASE.map((c) => {
    const d = { name: c, filterButton: true };
    if (totals) {
      if (c === "client_id") d.totalsRowLabel = "Total";
      else if (c === "baseline" || c === "earnings") d.totalsRowFunction = "average";
      else if (c === "coached" || c === "hours") d.totalsRowFunction = "sum";
      else d.totalsRowFunction = "none";
    }
    return d;
  });
}
for (const totals of [false, true]) {
  const wb = book();
  const ws = wb.addWorksheet("Data");
  ws.addTable({ name: "Clients", ref: "A1", headerRow: true, totalsRow: totals,
    style: { theme: "TableStyleMedium2", showRowStripes: true },
    columns: tableCols(totals), rows: rows.map((r) => C.BASE.map((c) => r[c])) });
  const rel = totals ? "exceljs/table_totals.xlsx" : "exceljs/table.xlsx";
  await save(wb, rel);
  frags.push(C.entry(rel, WRITER, totals
    ? "a table with a totals row (label Total, SUBTOTAL sums and averages)"
    : "a table without a totals row", {
    table: "Clients",
    notes: totals ? `Table Clients A1:G${n + 2}, totals row ${n + 2} (not data).` : `Table Clients A1:G${n + 1}.`,
    verify: [["xl/tables/table1\\.xml", 'totalsRowCount="1"', totals ? "present" : "absent"]],
  }));
}
{
  // two tables, one above the other: a pilot cohort, then the main one.
  const wb = book();
  const ws = wb.addWorksheet("Data");
  const pilot = rows.slice(0, 20);
  const main = rows.slice(20);
  ws.getCell("A1").value = "Pilot";
  ws.addTable({ name: "Pilot", ref: "A2", headerRow: true, columns: tableCols(false),
    rows: pilot.map((r) => C.BASE.map((c) => r[c])) });
  const top = 2 + pilot.length + 3;
  ws.getCell(`A${top - 1}`).value = "Main cohort";
  ws.addTable({ name: "Main", ref: `A${top}`, headerRow: true, totalsRow: true, columns: tableCols(true),
    rows: main.map((r) => C.BASE.map((c) => r[c])) });
  await save(wb, "exceljs/two_tables.xlsx");
  frags.push(C.entry("exceljs/two_tables.xlsx", WRITER,
    "two tables one above the other; the second (with a totals row) is the data", {
      table: "Main", fit_ids: main.map((r) => r.client_id),
      notes: `Table Pilot on A2:G${2 + pilot.length} (data rows 1-20), a label above each table, `
        + `table Main on A${top}:G${top + main.length + 1} (rows 21-${n}) with a totals row. `
        + "The expected fit is Main's rows.",
      verify: [["xl/tables/table2\\.xml", 'name="Main"', "present"]],
    }));
}

// 13. data validation and notes.
{
  const wb = book();
  const ws = wb.addWorksheet("Data");
  block(ws, rows, C.BASE);
  for (let r = 2; r <= n + 1; r++) {
    ws.getCell(`C${r}`).dataValidation = { type: "list", allowBlank: false, formulae: ['"new,returning"'] };
  }
  ws.getCell("C1").note = "new or returning client";
  ws.getCell("E10").note = "checked against the intake form";
  await save(wb, "exceljs/validation_comments.xlsx");
  frags.push(C.entry("exceljs/validation_comments.xlsx", WRITER,
    "data validation (dropdown on client_type) and notes", {
      notes: "A list validation on every client_type cell; notes on C1 and E10.",
      verify: [[S1, 'type="list"', "present"], ["xl/comments1\\.xml", "intake form", "present"]],
    }));
}

// 15. unicode names.
{
  const wb = book();
  const cover = wb.addWorksheet("Résumé");
  cover.getCell("A1").value = "Job coaching follow-up";
  const ws = wb.addWorksheet("Clients' données");
  const cols = [...C.BASE.slice(0, -1), "revenu 6 mois (€)"];
  block(ws, rows, cols, 1, 1, { "revenu 6 mois (€)": (r) => r.earnings });
  const mean = rows.reduce((s, r) => s + r.earnings, 0) / n;
  cover.getCell("A2").value = { formula: `AVERAGE('Clients'' données'!G2:G${n + 1})`, result: mean };
  await save(wb, "exceljs/unicode_names.xlsx");
  frags.push(C.entry("exceljs/unicode_names.xlsx", WRITER,
    "sheet and column names with unicode and an apostrophe; a cover sheet first", {
      sheet: "Clients' données", spec: C.spec({ outcome: "revenu 6 mois (€)" }),
      notes: "Sheets: Résumé (with an AVERAGE over the data, result saved), then Clients' données.",
      verify: [["xl/workbook\\.xml", "name=\"Clients&apos; données\"|name=\"Clients' données\"", "present"]],
    }));
}

C.saveFragments("exceljs", frags);
