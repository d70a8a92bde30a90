package xlsx

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

// tableXML is a table part as spreadsheet programs write it (ECMA-376
// Part 1, section 18.5.1.2; the attributes are the ones openpyxl,
// xlsxwriter and exceljs write in testdata/interop).
func tableXML(id int, name, ref string, totals bool) string {
	tot := ""
	if totals {
		tot = ` totalsRowCount="1"`
	}
	return fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><table xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" id="%d" name="%s" displayName="%s" ref="%s"%s><autoFilter ref="%s"/><tableColumns count="3"><tableColumn id="1" name="arm"/><tableColumn id="2" name="group"/><tableColumn id="3" name="score"/></tableColumns></table>`, id, name, name, ref, tot, ref)
}

// tableSheet writes rows of arm, group, score from row first: a header,
// n data rows, and a totals row when totals is set.
func tableRows(first, n int, totals bool, score func(i int) int) []string {
	rows := []string{iotest.Row(first, iotest.Inl(fmt.Sprintf("A%d", first), "arm"), iotest.Inl(fmt.Sprintf("B%d", first), "group"), iotest.Inl(fmt.Sprintf("C%d", first), "score"))}
	for i := 1; i <= n; i++ {
		r := first + i
		rows = append(rows, iotest.Row(r, iotest.Num(fmt.Sprintf("A%d", r), fmt.Sprint(i%2)), iotest.Num(fmt.Sprintf("B%d", r), fmt.Sprint(i/2%2)), iotest.Num(fmt.Sprintf("C%d", r), fmt.Sprint(score(i)))))
	}
	if totals {
		r := first + n + 1
		rows = append(rows, iotest.Row(r, iotest.Inl(fmt.Sprintf("A%d", r), "Total"), `<c r="B`+fmt.Sprint(r)+`"><f>SUBTOTAL(101,B2:B9)</f><v>0.5</v></c>`, `<c r="C`+fmt.Sprint(r)+`"><f>SUBTOTAL(109,C2:C9)</f><v>999</v></c>`))
	}
	return rows
}

func tableBook(rows []string, tables ...string) *iotest.RawBook {
	b := &iotest.RawBook{Extra: map[string]string{}}
	var parts, rels []string
	for i, tx := range tables {
		name := fmt.Sprintf("xl/tables/table%d.xml", i+1)
		b.Extra[name] = tx
		parts = append(parts, fmt.Sprintf(`<tablePart r:id="rT%d"/>`, i+1))
		rels = append(rels, fmt.Sprintf(`<Relationship Id="rT%d" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/table" Target="../tables/table%d.xml"/>`, i+1, i+1))
	}
	tail := ""
	if len(parts) > 0 {
		tail = fmt.Sprintf(`<tableParts count="%d">%s</tableParts>`, len(parts), strings.Join(parts, ""))
	}
	b.Sheets = []iotest.RawSheet{{Name: "Cover", Rows: []string{iotest.Row(1, iotest.Inl("A1", "About this workbook"))}}, {Name: "Data", Rows: rows, Tail: tail, Rels: strings.Join(rels, "")}}
	return b
}

func TestTableTotalsRowLeftOut(t *testing.T) {
	rows := tableRows(3, 8, true, func(i int) int { return 10 * i })
	rows = append([]string{iotest.Row(1, iotest.Inl("A1", "Scores by group"))}, rows...)
	path := tableBook(rows, tableXML(1, "Scores", "A3:C12", true)).Write(t, t.TempDir(), "totals.xlsx")
	for _, fast := range []bool{true, false} {
		tab, err := readCalc(context.Background(), path, table.Options{Sheet: "Data"}, fast)
		if err != nil {
			t.Fatal(err)
		}
		if tab.Len() != 8 || tab.HeaderRow != 3 || tab.Region != "" || len(tab.Tables) != 1 {
			t.Fatalf("rows %d, header %d, region %q, tables %v", tab.Len(), tab.HeaderRow, tab.Region, tab.Tables)
		}
		if g := tab.Column("group"); g.Kind != table.YesNo || len(g.Levels) != 2 {
			t.Errorf("group: %v %v; the totals row's average would make it three values", g.Kind, g.Levels)
		}
		notes := iotest.NoteTexts(tab)
		for _, want := range []string{`the header row is that of the table "Scores" (A3:C12); the sheet was read whole`, `the totals row of the table "Scores" (row 12) is not data and was left out`} {
			if !strings.Contains(notes, want) {
				t.Errorf("notes lack %q:\n%s", want, notes)
			}
		}
	}
}

func TestTwoTablesChooseOne(t *testing.T) {
	rows := append(tableRows(1, 8, false, func(i int) int { return i }), tableRows(12, 8, true, func(i int) int { return 100 + i })...)
	path := tableBook(rows, tableXML(1, "Pilot", "A1:C9", false), tableXML(2, "Main", "A12:C21", true)).Write(t, t.TempDir(), "two.xlsx")
	whole, err := Read(context.Background(), path, table.Options{Sheet: "Data"})
	if err != nil {
		t.Fatal(err)
	}
	if whole.Region != "" || whole.Len() != 17 || !strings.Contains(iotest.NoteTexts(whole), `this sheet holds the table(s) "Pilot", "Main"; the whole sheet was read`) {
		t.Errorf("whole sheet: region %q, %d rows (the second header is a row of text; the totals row is left out)\n%s", whole.Region, whole.Len(), iotest.NoteTexts(whole))
	}
	// Named without a sheet: the sheet that holds it is found.
	main, err := Read(context.Background(), path, table.Options{Table: "main"})
	if err != nil {
		t.Fatal(err)
	}
	if main.Sheet != "Data" || main.Region != "Main" || main.HeaderRow != 12 || main.Len() != 8 || main.SourceRows[0] != 13 {
		t.Fatalf("sheet %q region %q header %d rows %v", main.Sheet, main.Region, main.HeaderRow, main.SourceRows)
	}
	if s := main.Column("score"); s.Numbers[0] != 101 || s.Numbers[7] != 108 {
		t.Errorf("scores %v", s.Numbers)
	}
	_, err = Read(context.Background(), path, table.Options{Sheet: "Data", Table: "Other"})
	if !errors.Is(err, table.ErrTableNotFound) || !strings.Contains(err.Error(), `the tables of this sheet are "Pilot", "Main"`) {
		t.Errorf("unknown table: %v", err)
	}
	_, err = Read(context.Background(), path, table.Options{Table: "Other"})
	if !errors.Is(err, table.ErrTableNotFound) {
		t.Errorf("unknown table, no sheet: %v", err)
	}
}

// TestColumnBesideTable: a column typed next to the sheet's only table,
// its name in the table's header row, is read with the sheet (data next
// to a table are often meant to belong to it); choosing the table leaves
// it out.
func TestColumnBesideTable(t *testing.T) {
	rows := tableRows(1, 8, false, func(i int) int { return i })
	for i := range rows {
		r := i + 1
		cell := iotest.Num(fmt.Sprintf("D%d", r), fmt.Sprint(r))
		if r == 1 {
			cell = iotest.Inl("D1", "extra")
		}
		rows[i] = strings.Replace(rows[i], "</row>", cell+"</row>", 1)
	}
	path := tableBook(rows, tableXML(1, "Pilot", "A1:C9", false)).Write(t, t.TempDir(), "beside.xlsx")
	whole, err := Read(context.Background(), path, table.Options{Sheet: "Data"})
	if err != nil {
		t.Fatal(err)
	}
	if whole.Column("extra") == nil || whole.Len() != 8 {
		t.Errorf("the column beside the table is not read: %d columns, %d rows", len(whole.Columns), whole.Len())
	}
	alone, err := Read(context.Background(), path, table.Options{Sheet: "Data", Table: "Pilot"})
	if err != nil {
		t.Fatal(err)
	}
	if alone.Column("extra") != nil || len(alone.Columns) != 3 {
		t.Errorf("the table chosen still has %d columns", len(alone.Columns))
	}
}

// TestSheetsCountRows: SheetsCounted counts each worksheet's rows of cells
// (excelize v2.11.1 writes a stale <dimension ref="A1">, so the count is
// made, not read from it), including a sheet without rows.
func TestSheetsCountRows(t *testing.T) {
	f := excelize.NewFile()
	f.SetSheetName("Sheet1", "Data")
	for r := 1; r <= 12; r++ {
		f.SetSheetRow("Data", fmt.Sprintf("B%d", r+2), &[]any{r, r * 2, "x"})
	}
	f.NewSheet("Empty")
	path := filepath.Join(t.TempDir(), "extent.xlsx")
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
	sheets, err := SheetsCounted(path, func(string) bool { return true })
	if err != nil {
		t.Fatal(err)
	}
	got := fmt.Sprintf("%+v", sheets)
	want := "[{Name:Data Hidden:false Worksheet:true Rows:12 RowsMore:false} {Name:Empty Hidden:false Worksheet:true Rows:0 RowsMore:false}]"
	// Sheets counts nothing: opening a workbook reads no sheet for it.
	if plain, err := Sheets(path); err != nil || plain[0].Rows != 0 {
		t.Errorf("Sheets counted rows: %+v %v", plain, err)
	}
	if got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
}
