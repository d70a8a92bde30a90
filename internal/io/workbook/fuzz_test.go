package workbook

import (
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"slopewise/internal/io/delimited"
	"slopewise/internal/io/table"

	"slopewise/internal/io/iotest"
)

// checkTable checks what must hold for any table the reader returns.
func checkTable(t *testing.T, tab *Table) {
	t.Helper()
	n := tab.Len()
	if n == 0 {
		t.Fatal("a table without rows was returned")
	}
	names := map[string]bool{}
	for _, c := range tab.Columns {
		if names[c.Name] {
			t.Fatalf("duplicate column name %q", c.Name)
		}
		names[c.Name] = true
		if len(c.Missing) != n {
			t.Fatalf("column %q has %d reasons for %d rows", c.Name, len(c.Missing), n)
		}
		total := 0
		for i, r := range c.Missing {
			if r != Present {
				total++
			}
			switch c.Kind {
			case Number, Date, YesNo, Category:
				if math.IsNaN(c.Numbers[i]) != (r != Present) {
					t.Fatalf("column %q row %d: value %v with reason %v", c.Name, i, c.Numbers[i], r)
				}
			}
			if (c.Kind == YesNo || c.Kind == Category) && r == Present {
				if k := int(c.Numbers[i]); k < 0 || k >= len(c.Levels) || c.Levels[k] != c.Texts[i] {
					t.Fatalf("column %q row %d: code %v does not name %q", c.Name, i, c.Numbers[i], c.Texts[i])
				}
			}
		}
		if total != c.MissingTotal() {
			t.Fatalf("column %q: %d missing, counted %d", c.Name, total, c.MissingTotal())
		}
	}
}

// readChecked reads path and checks the table or the error.
func readChecked(t *testing.T, path string) *Table {
	t.Helper()
	tab, err := Read(context.Background(), path, Options{})
	if err != nil {
		checkError(t, err)
		return nil
	}
	checkTable(t, tab)
	return tab
}

// checkError checks that a failure is one of ours.
func checkError(t *testing.T, err error) {
	t.Helper()
	var e *Error
	if !errors.As(err, &e) {
		t.Fatalf("error %T %v is not an *Error", err, err)
	}
	if e.Cause == nil && e.Underlying == nil {
		t.Fatalf("error without a cause: %v", err)
	}
}

// FuzzReadText reads arbitrary bytes as a CSV file, and, when they read,
// writes them beside as a workbook and reads its data sheet back: the
// same columns and values must come out (read → write → read).
func FuzzReadText(f *testing.F) {
	for _, s := range []string{
		"a,b\n1,2\n3,4\n",
		"\uFEFFx;y\n1,5;2\n\"q\r\nr\";3\n",
		"id\tgroup\n1\tA\n2\tB\n3\tA\n",
		"h|v\nNA|#DIV/0!\n-|1,234.5\n",
		"caf\xe9;n\n1;2\n",
		"a,b\n\"unclosed,1\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		dir := t.TempDir()
		path := filepath.Join(dir, "in.csv")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		tab := readChecked(t, path)
		if tab == nil {
			return
		}
		w, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{})
		if err != nil {
			t.Fatalf("writing a table that reads: %v", err)
		}
		if !workbookSafe(data) {
			return // the workbook cannot hold these bytes as they are
		}
		back, err := Read(context.Background(), w.Path, Options{Sheet: DataSheetName, HeaderRow: max(tab.HeaderRow, NoHeader*boolInt(tab.HeaderRow == 0))})
		if err != nil {
			t.Fatalf("reading the data sheet back: %v", err)
		}
		compareTables(t, tab, back, pointOnlyColumns(path, tab))
	})
}

// pointOnlyColumns lists, by index, the columns of a decimal-comma text
// file with a data cell that is no number by the file's rules but is one
// where a decimal point is the rule, as in a workbook ("1.5", ".0"). The
// copy keeps such a cell's text, and the workbook reader, which takes a
// number stored as text for a number, reads it as one: a known limit of
// the copy (a cell could say "text on purpose" only through a style the
// reader does not read), so these columns are compared by name only. A
// file the scanner refuses gives none.
func pointOnlyColumns(path string, tab *Table) map[int]bool {
	if tab.Text == nil || !tab.Text.DecimalComma {
		return nil
	}
	src, err := delimited.OpenScanner(path, tab.Text)
	if err != nil {
		return nil
	}
	defer src.Close()
	cols := map[int]bool{}
	for {
		num, cells, err := src.Next()
		if err != nil {
			return cols
		}
		if num <= tab.HeaderRow {
			continue
		}
		for _, c := range cells {
			s := table.TrimSpace(c.Text)
			if _, ok := table.ParseNumber(s, true); ok {
				continue
			}
			if _, ok := table.ParseNumber(s, false); ok {
				cols[c.Col] = true
			}
		}
	}
}

// workbookSafe reports text that a workbook stores unchanged: XML 1.0
// has no place for control characters other than tab and line breaks
// (excelize writes U+FFFD for them), and a cell holds at most 32,767
// characters ("Excel specifications and limits", common practice).
func workbookSafe(data []byte) bool {
	if len(data) > 32767 {
		return false
	}
	for _, c := range data {
		if c < 0x20 && c != '\t' && c != '\n' && c != '\r' || c == 0x7f {
			return false
		}
	}
	return true
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// compareTables checks that two reads of the same data agree.
func compareTables(t *testing.T, a, b *Table, byNameOnly map[int]bool) {
	t.Helper()
	if a.Len() != b.Len() || len(a.Columns) != len(b.Columns) {
		t.Fatalf("shape %dx%d read back as %dx%d", a.Len(), len(a.Columns), b.Len(), len(b.Columns))
	}
	for j, ca := range a.Columns {
		cb := b.Columns[j]
		if byNameOnly[ca.Index] {
			if ca.Name != cb.Name {
				t.Fatalf("column %d: %q read back as %q", j, ca.Name, cb.Name)
			}
			continue
		}
		if ca.Name != cb.Name || ca.Kind != cb.Kind {
			t.Fatalf("column %d: %q %v read back as %q %v", j, ca.Name, ca.Kind, cb.Name, cb.Kind)
		}
		// Codes of labels may be renumbered when a number's label changes
		// form ("00," is 0), but must map one to one.
		relabel := map[float64]float64{}
		coded := ca.Kind == YesNo || ca.Kind == Category
		for i := range ca.Missing {
			if ca.Missing[i] != cb.Missing[i] {
				t.Fatalf("column %q row %d: %v read back as %v", ca.Name, i, ca.Missing[i], cb.Missing[i])
			}
			if coded && ca.Missing[i] == Present {
				if k, ok := relabel[ca.Numbers[i]]; ok && k != cb.Numbers[i] {
					t.Fatalf("column %q row %d: code %v read back as %v, earlier as %v", ca.Name, i, ca.Numbers[i], cb.Numbers[i], k)
				}
				relabel[ca.Numbers[i]] = cb.Numbers[i]
				continue
			}
			if ca.Numbers != nil && ca.Missing[i] == Present && ca.Numbers[i] != cb.Numbers[i] {
				t.Fatalf("column %q row %d: %v read back as %v", ca.Name, i, ca.Numbers[i], cb.Numbers[i])
			}
			if ca.Texts != nil && ca.Texts[i] != cb.Texts[i] && !sameNumber(a, ca.Texts[i], cb.Texts[i]) {
				t.Fatalf("column %q row %d: %q read back as %q", ca.Name, i, ca.Texts[i], cb.Texts[i])
			}
		}
	}
}

// sameNumber: a number in a text column reads back in its plain form
// ("1,5" in a decimal-comma file is 1.5 in the workbook).
func sameNumber(a *Table, x, y string) bool {
	dc := a.Text != nil && a.Text.DecimalComma
	vx, okx := table.ParseNumber(x, dc)
	vy, oky := table.ParseNumber(y, false)
	return okx && oky && vx == vy
}

// FuzzReadWorkbook puts arbitrary bytes inside the <sheetData> of an
// otherwise valid workbook, with a shared string table and a date style.
func FuzzReadWorkbook(f *testing.F) {
	for _, s := range []string{
		iotest.Row(1, iotest.Inl("A1", "id"), iotest.Inl("B1", "when")) + iotest.Row(2, iotest.Num("A2", "1"), iotest.NumS("B2", 1, "45000")),
		iotest.Row(1, iotest.Sst("A1", 0), iotest.Sst("B1", 1)) + iotest.Row(2, iotest.Errc("A2", "#N/A"), iotest.FormulaNoValue("B2", "A2+1")),
		iotest.Row(3, iotest.Boolc("C3", true), `<c r="D3" t="str"><f>X</f><v>text</v></c>`) + iotest.Row(4, `<c t="d"><v>2024-02-29T12:00:00</v></c>`),
		`<row><c><v>1e308</v></c><c t="s"><v>99</v></c></row>`,
		`<row r="2"><c r="XFD2" s="1"><v>-0</v></c></row><row r="1"><c r="A1"><is><r><t>a</t></r><r><t>b</t></r></is></c></row>`,
		// The shapes of the hostile and foreign files (issues 11 and 12):
		// empty values, formulas without results, shared and array
		// formulas, rows and cells without r, a cell past its length.
		iotest.Row(1, iotest.Inl("A1", "a"), iotest.Inl("B1", "b")) + `<row><c><v></v></c><c><f>A2*2</f><v/></c></row><row><c t="str"><f>"x"</f><v></v></c><c><f t="shared" ref="B3:B4" si="0">A3+1</f></c></row><row><c><v>4</v></c><c><f t="shared" si="0"/></c></row>`,
		`<row>` + strings.Repeat(`<c><v>1</v></c>`, 300) + `</row>`,
		strings.Repeat(`<row><c><v>1</v></c></row>`, 300),
		`<row><c t="inlineStr"><is><t>` + strings.Repeat("x", 33000) + `</t></is></c></row>`,
		`<row><c t="s"><v>` + strings.Repeat("9", 30) + `</v></c><c r="XFE1"><v>1</v></c></row>`,
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		b := &iotest.RawBook{
			Shared: []string{"name", "score"},
			Xfs:    []int{14},
			Sheets: []iotest.RawSheet{{Name: "S", Rows: []string{string(data)}}},
		}
		path := b.Write(t, t.TempDir(), "in.xlsx")
		readChecked(t, path)
	})
}

// FuzzSniff reads arbitrary bytes as a file named .xlsx: the format
// checks (zip, OLE compound file) and excelize must refuse, not panic.
func FuzzSniff(f *testing.F) {
	f.Add(iotest.OleFile("Workbook"))
	f.Add(iotest.OleFile("EncryptionInfo", "EncryptedPackage"))
	f.Add(iotest.ZipOf(f, "mimetype", "application/vnd.oasis.opendocument.spreadsheet"))
	f.Add(iotest.SimpleBook().Bytes(f))
	f.Fuzz(func(t *testing.T, data []byte) {
		path := filepath.Join(t.TempDir(), "in.xlsx")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		readChecked(t, path)
	})
}
