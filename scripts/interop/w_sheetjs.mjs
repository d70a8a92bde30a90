// Writes the SheetJS (package "xlsx") files of the interoperability corpus.
// SheetJS never computes a formula: a cell {f} gets <f> only, {f, v} gets
// <f> and <v>. Without bookSST it writes every string as t="str" with the
// text in <v> (the type Excel uses for a formula's text result), with
// bookSST as shared strings. It writes no calcPr, and Date cells always as
// 1900-system serials, even in a date1904 workbook: the 1904 file here gets
// its serials computed by hand.

import XLSX from "xlsx";
import * as C from "./common.mjs";

const WRITER = C.version("xlsx").replace(/^xlsx /, "SheetJS xlsx ");
const rows = C.loadRows();
const n = rows.length;
const frags = [];
const S1 = "xl/worksheets/sheet1\\.xml";

function cell(v) {
  if (v !== null && typeof v === "object" && !(v instanceof Date)) return v;
  if (typeof v === "number") return { t: "n", v };
  if (typeof v === "boolean") return { t: "b", v };
  return { t: "s", v: String(v) };
}

// A sheet with a header at 0-based row `top`; cellValue[col](r, row1) gives
// a value or a cell object (row1: the 1-based sheet row).
function sheet(data, cols, top = 0, cellValue = {}, ws = {}) {
  cols.forEach((c, j) => { ws[XLSX.utils.encode_cell({ r: top, c: j })] = cell(c); });
  data.forEach((r, i) => {
    const R = top + 1 + i;
    cols.forEach((c, j) => {
      const f = cellValue[c];
      ws[XLSX.utils.encode_cell({ r: R, c: j })] = cell(f ? f(r, R + 1) : r[c]);
    });
  });
  const prev = ws["!ref"] ? XLSX.utils.decode_range(ws["!ref"]) : { s: { r: 0, c: 0 }, e: { r: 0, c: 0 } };
  prev.e.r = Math.max(prev.e.r, top + data.length);
  prev.e.c = Math.max(prev.e.c, cols.length - 1);
  ws["!ref"] = XLSX.utils.encode_range(prev);
  return ws;
}

function save(sheets, rel, opts = {}, wbProps = null) {
  const wb = XLSX.utils.book_new();
  for (const [name, ws] of sheets) XLSX.utils.book_append_sheet(wb, ws, name);
  wb.Props = { Author: "interop corpus", CreatedDate: C.DOC_TIME };
  if (wbProps) wb.Workbook = { WBProps: wbProps };
  XLSX.writeFile(wb, C.target(rel), { compression: true, ...opts });
}

// 1. formulas with saved results (f and v).
{
  const cols = ["client_id", "site", "client_type", "coached", "baseline", "hours_a", "hours_b",
    "hours_total", "earnings", "earnings_raw"];
  save([["Data", sheet(rows, cols, 0, {
    hours_total: (r, row) => ({ t: "n", f: `F${row}+G${row}`, v: r.hours }),
    earnings: (r, row) => ({ t: "n", f: `ROUND(J${row},2)`, v: r.earnings }),
  })]], "sheetjs/formulas_saved.xlsx", { bookSST: true });
  frags.push(C.entry("sheetjs/formulas_saved.xlsx", WRITER, "formulas with saved results in used columns", {
    spec: C.spec({ controls: ["baseline", "hours_total"] }),
    fit_controls: ["baseline", "hours"],
    formula_columns: { hours_total: "saved", earnings: "saved" },
    notes: "Cells {t:'n', f, v}: <f>F2+G2</f><v>11</v>, <f>ROUND(J2,2)</f><v>..</v>.",
    verify: [[S1, "<f>ROUND\\(J2,2\\)</f><v>", "present"]],
  }));
}

// 2a. no results, simple arithmetic.
{
  const kinds = ["H{r}*2-H{r}", "H{r}+0", "SUM(H{r},0)", "ROUND(H{r},2)", "IF(D{r}=1,H{r},H{r})"];
  save([["Data", sheet(rows, [...C.BASE, "baseline_entered", "earnings_raw"], 0, {
    baseline: (r, row) => ({ t: "n", f: kinds[(row - 2) % 5].replaceAll("{r}", row) }),
    earnings: (r, row) => ({ t: "n", f: `ROUND(I${row},2)` }),
    baseline_entered: (r) => r.baseline,
  })]], "sheetjs/formulas_no_result_used.xlsx");
  frags.push(C.entry("sheetjs/formulas_no_result_used.xlsx", WRITER,
    "formulas without saved results, used column, simple arithmetic", {
      formula_columns: { baseline: "computed", earnings: "computed" },
      notes: "As openpyxl/formulas_no_result_used.xlsx; cells {t:'n', f} give <f>..</f> and no <v>. "
        + "Strings are t=\"str\" (no bookSST).",
      verify: [[S1, "<c r=\"E2\"><f>H2\\*2-H2</f></c>", "present"], [S1, 't="str"><v>returning</v>', "present"]],
    }));
}

// 2b. not computable: refuse.
save([["Data", sheet(rows, [...C.BASE, "earnings_entered"], 0, {
  earnings: (r, row) => ({ t: "n", f: row % 2 === 0 ? 'INDIRECT("H"&ROW())' : `RAND()*0+H${row}` }),
  earnings_entered: (r) => r.earnings,
})]], "sheetjs/formulas_no_result_refuse.xlsx");
frags.push(C.entry("sheetjs/formulas_no_result_refuse.xlsx", WRITER,
  "formulas without saved results, used column, not computable", {
    expect: "refuse", reason: "formula-no-result", formula_columns: { earnings: "missing" },
    notes: 'earnings alternates =INDIRECT("H"&ROW()) and =RAND()*0+H3 with no result; '
      + "the effects are those the author meant.",
    verify: [[S1, "<f>INDIRECT\\(&quot;H&quot;&amp;ROW\\(\\)\\)</f>|<f>INDIRECT\\(\"H\"&amp;ROW\\(\\)\\)</f>", "present"]],
  }));

// 3. unused column only.
save([["Data", sheet(rows, [...C.BASE, "random_draw"], 0, {
  random_draw: () => ({ t: "n", f: "RAND()" }),
})]], "sheetjs/formulas_no_result_unused.xlsx", { bookSST: true });
frags.push(C.entry("sheetjs/formulas_no_result_unused.xlsx", WRITER,
  "formulas without saved results in an unused column only", {
    formula_columns: { random_draw: "missing" },
    notes: "random_draw (H) is =RAND() with no result.",
    verify: [[S1, "<f>RAND\\(\\)</f></c>", "present"]],
  }));

// 5. strings: t="str" (default) in one file, shared strings in the others.
save([["Data", sheet(rows, C.BASE)]], "sheetjs/strings_str.xlsx");
frags.push(C.entry("sheetjs/strings_str.xlsx", WRITER,
  "every string as t=\"str\" with the text in <v> (SheetJS without bookSST)", {
    notes: "No sharedStrings part; the header and the site and client_type cells are "
      + "<c t=\"str\"><v>text</v></c>, which is the cell type of a formula's text result, with no formula.",
    verify: [[S1, '<c r="C2" t="str"><v>', "present"], ["xl/sharedStrings\\.xml", ".", "absent"]],
  }));

// 6. numbers as text.
save([["Data", sheet(rows, C.BASE, 0, { baseline: (r) => ({ t: "s", v: r.baseline_text }) })]],
  "sheetjs/numbers_as_text.xlsx", { bookSST: true });
frags.push(C.entry("sheetjs/numbers_as_text.xlsx", WRITER, "numbers stored as text in baseline", {
  notes: "baseline cells are shared strings such as \"312.45\".",
  verify: [[S1, '<c r="E2" t="s">', "present"]],
}));

// 7. booleans as the treatment.
save([["Data", sheet(rows, [...C.BASE, "consented"], 0, { coached: (r) => r.coached === 1 })]],
  "sheetjs/booleans_treatment.xlsx", { bookSST: true });
frags.push(C.entry("sheetjs/booleans_treatment.xlsx", WRITER,
  "booleans as the treatment, and an unused boolean column", {
    spec: C.spec({ treated: "TRUE" }),
    notes: "coached and consented are TRUE/FALSE (t=\"b\").",
    verify: [[S1, '<c r="D2" t="b">', "present"]],
  }));

// 8. error values.
{
  const code = { "#N/A": 0x2a, "#DIV/0!": 0x07 };
  save([["Data", sheet(rows, [...C.BASE, "hours_per_week"], 0, {
    baseline: (r, row) => {
      const k = C.ERROR_ROWS.indexOf(row - 1);
      return k >= 0 ? { t: "e", v: code[C.ERRORS[k]] } : r.baseline;
    },
    hours_per_week: (r, row) => (row % 5 === 0 ? { t: "e", v: code[C.ERRORS[row % 2]] } : r.hours * 2),
  })]], "sheetjs/errors_baseline.xlsx", { bookSST: true });
  frags.push(C.entry("sheetjs/errors_baseline.xlsx", WRITER,
    "error values in baseline (2 rows) and in an unused column", {
      fit_ids: C.idsWithoutRows(rows, C.ERROR_ROWS),
      notes: `baseline is #N/A in data row ${C.ERROR_ROWS[0]} and #DIV/0! in row ${C.ERROR_ROWS[1]} `
        + `(t="e"): left out, n = ${n - 2}.`,
      verify: [[S1, `<c r="E${C.ERROR_ROWS[0] + 1}" t="e"><v>#N/A</v>`, "present"]],
    }));
}

// 9. dates, 1904: serials computed here (see the note at the top).
{
  const epoch1904 = Date.UTC(1904, 0, 1);
  save([["Data", sheet(rows, [...C.BASE, "visit_date"], 0, {
    visit_date: (r) => ({ t: "n", v: (r.visit_date.getTime() - epoch1904) / 86400000, z: "yyyy-mm-dd" }),
  })]], "sheetjs/dates_1904.xlsx", { bookSST: true }, { date1904: true });
  frags.push(C.entry("sheetjs/dates_1904.xlsx", WRITER, "dates in an unused column, 1904 date system", {
    checks: [{ column: "visit_date", row: 1, date: rows[0].visit_date_text }],
    notes: "workbookPr date1904=\"true\" (the word). visit_date holds 1904-system serials "
      + "with format yyyy-mm-dd; SheetJS 0.18.5 would have written a Date cell as a 1900 serial.",
    verify: [["xl/workbook\\.xml", 'date1904="true"', "present"]],
  }));
}

// 10 + 11 + 13. a merged title, hidden rows and a column, autofilter, comments.
{
  const ws = {};
  ws.A1 = cell("Job coaching follow-up, spring cohort");
  ws.A2 = cell("Invented data for reader tests");
  sheet(rows, [...C.BASE, "consented"], 3, {}, ws);
  ws["!merges"] = [XLSX.utils.decode_range("A1:G1")];
  ws["!rows"] = [];
  for (const r of [6, 7, 33]) ws["!rows"][r] = { hidden: true }; // sheet rows 7, 8, 34
  ws["!cols"] = [];
  ws["!cols"][7] = { hidden: true };
  ws["!autofilter"] = { ref: `A4:H${n + 4}` };
  ws.C4.c = [{ a: "Evaluator", t: "new or returning client" }];
  ws.E12.c = [{ a: "Evaluator", t: "checked against the intake form" }];
  save([["Data", ws]], "sheetjs/title_hidden_filter_comments.xlsx", { bookSST: true });
  frags.push(C.entry("sheetjs/title_hidden_filter_comments.xlsx", WRITER,
    "merged title above the header (header on row 4), hidden rows and column, autofilter, comments", {
      notes: "A1:G1 merged, subtitle in A2, row 3 blank, header on row 4; sheet rows 7, 8 and 34 "
        + "hidden (still data); column H (consented) hidden; autofilter A4:H64; comments on C4 "
        + "and E12. SheetJS 0.18.5 writes no frozen panes.",
      verify: [[S1, '<mergeCell ref="A1:G1"/>', "present"], [S1, '<row r="7" hidden="1"', "present"],
        ["xl/comments1\\.xml", "intake form", "present"]],
    }));
}

// 15. unicode names.
{
  const cols = [...C.BASE.slice(0, -1), "revenu 6 mois (€)"];
  const ws = sheet(rows, cols, 0, { "revenu 6 mois (€)": (r) => r.earnings });
  const mean = rows.reduce((s, r) => s + r.earnings, 0) / n;
  const cover = { "!ref": "A1:A2", A1: cell("Job coaching follow-up"),
    A2: { t: "n", f: `AVERAGE('Clients'' données'!G2:G${n + 1})`, v: mean } };
  save([["Résumé", cover], ["Clients' données", ws]], "sheetjs/unicode_names.xlsx", { bookSST: true });
  frags.push(C.entry("sheetjs/unicode_names.xlsx", WRITER,
    "sheet and column names with unicode and an apostrophe; a cover sheet first", {
      sheet: "Clients' données", spec: C.spec({ outcome: "revenu 6 mois (€)" }),
      notes: "Sheets: Résumé (an AVERAGE over the data, result saved), then Clients' données.",
      verify: [["xl/workbook\\.xml", "name=\"Clients&apos; données\"|name=\"Clients' données\"", "present"]],
    }));
}

C.saveFragments("sheetjs", frags);
