package workbook

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"

	"slopewise/internal/io/iotest"
)

func TestReadMessySheet(t *testing.T) {
	path := iotest.VisitsBook().Write(t, t.TempDir(), "visits.xlsx")
	tab, err := Read(context.Background(), path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if tab.HeaderRow != 3 || !tab.HeaderDetected || tab.Sheet != "Visits" {
		t.Fatalf("header row %d (detected %v), sheet %q; want row 3 detected on Visits", tab.HeaderRow, tab.HeaderDetected, tab.Sheet)
	}
	if tab.Len() != 12 || tab.SourceRows[0] != 4 || tab.SourceRows[11] != 15 {
		t.Fatalf("rows %d from %v", tab.Len(), tab.SourceRows)
	}
	want := []struct {
		name string
		kind Kind
	}{
		{"ID", Number}, {"Arm", YesNo}, {"Site", Category}, {"Score", Number},
		{"Column E", Empty}, {"Visit date", Date}, {"Score (2)", Number}, {"Flag", YesNo},
	}
	if len(tab.Columns) != len(want) {
		var got []string
		for _, c := range tab.Columns {
			got = append(got, c.Name)
		}
		t.Fatalf("columns %q", got)
	}
	for i, w := range want {
		c := tab.Columns[i]
		if c.Name != w.name || c.Kind != w.kind {
			t.Errorf("column %d: %q %v, want %q %v", i, c.Name, c.Kind, w.name, w.kind)
		}
	}
	score := tab.Column("Score")
	// The stored value, not the displayed "10.37": full precision.
	if got, want := score.Numbers[1], 10.1234567; got != want {
		t.Errorf("score row 2 = %v, want the stored %v", got, want)
	}
	if score.Numbers[4] != 12.5 || score.Converted != 1 {
		t.Errorf("number stored as text: %v, converted %d", score.Numbers[4], score.Converted)
	}
	wantReasons := map[int]Reason{2: Marker, 3: ErrorValue, 5: TextInNumbers, 6: NoCachedValue, 7: Blank}
	for i, r := range score.Missing {
		if wantReasons[i] != r {
			t.Errorf("score row %d: reason %v, want %v", i, r, wantReasons[i])
		}
		if r != Present && !math.IsNaN(score.Numbers[i]) {
			t.Errorf("score row %d is missing but holds %v", i, score.Numbers[i])
		}
	}
	if score.MissingTotal() != 5 || score.MissingCount[ErrorValue] != 1 {
		t.Errorf("missing counts %v", score.MissingCount)
	}
	if got := tab.CellRef(score, 3); got != `sheet "Visits", cell D7` {
		t.Errorf("cell reference %q", got)
	}
	arm := tab.Column("Arm")
	if arm.Levels[0] != "control" || arm.Levels[1] != "treated" || arm.Numbers[0] != 1 || arm.Texts[1] != "control" {
		t.Errorf("arm levels %q, first codes %v %v", arm.Levels, arm.Numbers[0], arm.Texts[1])
	}
	site := tab.Column("Site")
	if strings.Join(site.Levels, ",") != "East,North,South" || site.Numbers[0] != 1 {
		t.Errorf("site levels %q code %v", site.Levels, site.Numbers[0])
	}
	// 45000 is 2023-03-15 in the 1900 date system (LibreOffice Calc shows
	// =DATE(2023;3;15) as 45000 with the default 1899-12-30 epoch).
	d, ok := tab.Column("Visit date").Time(0)
	if !ok || !d.Equal(time.Date(2023, 3, 15, 0, 0, 0, 0, time.UTC)) {
		t.Errorf("date %v", d)
	}
	notes := iotest.NoteTexts(tab)
	for _, want := range []string{
		`another column is already named "Score", so this one is called "Score (2)"`,
		`cell E3, column "Column E": the header cell is blank`,
		`1 formula cell(s), the first at sheet "Visits", cell D10, have no saved result, and Slopewise cannot calculate them (the formula in D10 uses INDIRECT, which Slopewise does not calculate)`,
		`1 number(s) stored as text were read as numbers`,
		`column "Column E": every cell with a value is an error value`,
		`text value(s) in this number column count as missing, the first at sheet "Visits", cell D9`,
	} {
		if !strings.Contains(notes, want) {
			t.Errorf("notes lack %q:\n%s", want, notes)
		}
	}
	problems := tab.Problems()
	if len(problems) == 0 || !strings.HasPrefix(tab.Describe(problems[0]), `sheet "Visits", cell`) {
		t.Errorf("problems %v", problems)
	}
}

func TestReadDate1904(t *testing.T) {
	b := &iotest.RawBook{Date1904: true, Xfs: []int{14}}
	rows := []string{iotest.Row(1, iotest.Inl("A1", "When"), iotest.Inl("B1", "n"))}
	for i := 0; i < 5; i++ {
		rows = append(rows, iotest.Row(i+2, iotest.NumS(fmt.Sprintf("A%d", i+2), 1, "0"), iotest.Num(fmt.Sprintf("B%d", i+2), fmt.Sprint(i))))
	}
	b.Sheets = []iotest.RawSheet{{Name: "S", Rows: rows}}
	tab, err := Read(context.Background(), b.Write(t, t.TempDir(), "d.xlsx"), Options{})
	if err != nil {
		t.Fatal(err)
	}
	// Serial 0 in the 1904 system is 1904-01-01 (ECMA-376 Part 1,
	// section 18.17.4.1).
	d, _ := tab.Column("When").Time(0)
	if !d.Equal(time.Date(1904, 1, 1, 0, 0, 0, 0, time.UTC)) {
		t.Errorf("1904 serial 0 read as %v", d)
	}
}

func TestHeaderOverride(t *testing.T) {
	path := iotest.VisitsBook().Write(t, t.TempDir(), "v.xlsx")
	tab, err := Read(context.Background(), path, Options{HeaderRow: 4})
	if err != nil {
		t.Fatal(err)
	}
	if tab.HeaderRow != 4 || tab.HeaderDetected || tab.Columns[0].Name != "100" || tab.Len() != 11 {
		t.Errorf("header %d detected %v first name %q rows %d", tab.HeaderRow, tab.HeaderDetected, tab.Columns[0].Name, tab.Len())
	}
	tab, err = Read(context.Background(), path, Options{HeaderRow: NoHeader})
	if err != nil {
		t.Fatal(err)
	}
	if tab.HeaderRow != 0 || tab.Columns[0].Name != "Column A" || tab.SourceRows[0] != 1 {
		t.Errorf("no header: row %d name %q first row %d", tab.HeaderRow, tab.Columns[0].Name, tab.SourceRows[0])
	}
	_, err = Read(context.Background(), path, Options{HeaderRow: 400})
	if !errors.Is(err, ErrHeaderOutside) {
		t.Errorf("header below the data: %v", err)
	}
}

func TestReadOtherSheetAndSheets(t *testing.T) {
	b := iotest.VisitsBook()
	b.Sheets = append([]iotest.RawSheet{{Name: "Chart", Chart: true}}, b.Sheets...)
	b.Sheets = append(b.Sheets, iotest.RawSheet{Name: "Small", Rows: []string{iotest.Row(1, iotest.Inl("A1", "x"), iotest.Inl("B1", "y")), iotest.Row(2, iotest.Num("A2", "1"), iotest.Num("B2", "2")), iotest.Row(3, iotest.Num("A3", "3"), iotest.Num("B3", "5"))}})
	path := b.Write(t, t.TempDir(), "multi.xlsx")
	sheets, err := Sheets(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(sheets) != 3 || sheets[0].Worksheet || !sheets[1].Worksheet || sheets[2].Name != "Small" {
		t.Fatalf("sheets %+v", sheets)
	}
	tab, err := Read(context.Background(), path, Options{})
	if err != nil || tab.Sheet != "Visits" {
		t.Fatalf("default sheet: %v %v", tab, err)
	}
	tab, err = Read(context.Background(), path, Options{Sheet: "Small"})
	if err != nil || tab.Len() != 2 || tab.Column("y").Numbers[1] != 5 {
		t.Fatalf("Small: %+v %v", tab, err)
	}
	if _, err := Read(context.Background(), path, Options{Sheet: "Chart"}); !errors.Is(err, ErrNotWorksheet) {
		t.Errorf("chart sheet: %v", err)
	}
	_, err = Read(context.Background(), path, Options{Sheet: "Nope"})
	if !errors.Is(err, ErrSheetNotFound) || !strings.Contains(err.Error(), `"Visits", "Small"`) {
		t.Errorf("missing sheet: %v", err)
	}
}

func TestParseNumber(t *testing.T) {
	cases := []struct {
		in    string
		comma bool
		want  float64
		ok    bool
	}{
		{"12", false, 12, true},
		{"-0.5", false, -0.5, true},
		{"1,234,567.25", false, 1234567.25, true},
		{"1 234,5", true, 1234.5, true},
		{"1.234,5", true, 1234.5, true},
		{"12,5", true, 12.5, true},
		{"12,5", false, 0, false},
		{"1,23", false, 0, false},
		{"12%", false, 0.12, true},
		{"1e-3", false, 0.001, true},
		{"inf", false, 0, false},
		{"NaN", false, 0, false},
		{"0x10", false, 0, false},
		{"1_000", false, 0, false},
		{"1e999", false, 0, false},
		{"-", false, 0, false},
		{".5", false, 0.5, true},
		{"12.3.4", false, 0, false},
		{"1234,567.8", false, 0, false},
	}
	for _, c := range cases {
		got, ok := table.ParseNumber(c.in, c.comma)
		if ok != c.ok || ok && got != c.want {
			t.Errorf("parseNumber(%q, %v) = %v, %v; want %v, %v", c.in, c.comma, got, ok, c.want, c.ok)
		}
	}
}

func TestIsDateFormat(t *testing.T) {
	// Format codes as spreadsheet programs write them (ECMA-376 Part 1,
	// section 18.8.31, and common practice).
	for code, want := range map[string]bool{
		`yyyy\-mm\-dd`:       true,
		`d/m/yy h:mm`:        true,
		`[h]:mm:ss`:          true,
		`0.00`:               false,
		`#,##0 "days"`:       false,
		`[Red]0.0;[Blue]0.0`: false,
		`General`:            false,
		`0.00E+00`:           false,
		`[$-409]mmm yy`:      true,
	} {
		if got := xlsx.IsDateFormat(code); got != want {
			t.Errorf("isDateFormat(%q) = %v", code, got)
		}
	}
}

func TestColumnLetter(t *testing.T) {
	for i, want := range map[int]string{0: "A", 25: "Z", 26: "AA", 701: "ZZ", 702: "AAA", 16383: "XFD"} {
		if got := table.ColumnLetter(i); got != want {
			t.Errorf("columnLetter(%d) = %q, want %q", i, got, want)
		}
		if got, _ := xlsx.RefColumn(want + "12"); got != i {
			t.Errorf("refColumn(%q) = %d", want+"12", got)
		}
	}
}

func TestSerialDates(t *testing.T) {
	// Serial 60 is the phantom 1900-02-29 and 61 is 1900-03-01; serial 1
	// is 1900-01-01 (ECMA-376 Part 1, section 18.17.4.1).
	for serial, want := range map[float64]time.Time{
		1:        time.Date(1900, 1, 1, 0, 0, 0, 0, time.UTC),
		61:       time.Date(1900, 3, 1, 0, 0, 0, 0, time.UTC),
		45000.5:  time.Date(2023, 3, 15, 12, 0, 0, 0, time.UTC),
		36526.25: time.Date(2000, 1, 1, 6, 0, 0, 0, time.UTC),
	} {
		if got := table.SerialToTime(serial); !got.Equal(want) {
			t.Errorf("serial %v = %v, want %v", serial, got, want)
		}
	}
	if got := table.TimeToSerial(time.Date(2023, 3, 15, 12, 0, 0, 0, time.UTC)); got != 45000.5 {
		t.Errorf("timeToSerial = %v", got)
	}
}

func TestDetectHeader(t *testing.T) {
	textRow := func(n int, vals ...string) table.BufRow {
		var cells []table.RawCell
		for i, v := range vals {
			if v != "" {
				cells = append(cells, table.RawCell{Col: i, Type: table.CellText, Text: v})
			}
		}
		return table.BufRow{Num: n, Cells: cells}
	}
	cases := []struct {
		name string
		rows []table.BufRow
		want int // index of the header row, -1 for none
	}{
		{"names above numbers", []table.BufRow{textRow(1, "id", "score"), textRow(2, "1", "2"), textRow(3, "3", "4")}, 0},
		{"title, blank line, header", []table.BufRow{textRow(1, "Spring visits"), textRow(3, "id", "site", "score"), textRow(4, "1", "North", "2"), textRow(5, "2", "South", "5")}, 1},
		{"numbers only", []table.BufRow{textRow(1, "1", "2"), textRow(2, "3", "4")}, -1},
		{"text table", []table.BufRow{textRow(1, "name", "town"), textRow(2, "Ann", "Oslo"), textRow(3, "Bo", "Lund")}, 0},
		{"data rows with text and numbers", []table.BufRow{textRow(1, "Ann", "Oslo", "3"), textRow(2, "Bo", "Lund", "4")}, -1},
		{"header only", []table.BufRow{textRow(2, "id", "score")}, 0},
	}
	for _, c := range cases {
		if got := table.DetectHeader(c.rows); got != c.want {
			t.Errorf("%s: header at %d, want %d", c.name, got, c.want)
		}
	}
}

func TestReadCancelledAndProgress(t *testing.T) {
	var b strings.Builder
	b.WriteString("id,score\n")
	for i := 0; i < 10000; i++ {
		fmt.Fprintf(&b, "%d,%d\n", i, i%7)
	}
	path := iotest.WriteFile(t, t.TempDir(), "long.csv", []byte(b.String()))
	var seen []int
	tab, err := Read(context.Background(), path, Options{Progress: func(n int) { seen = append(seen, n) }})
	if err != nil || tab.Len() != 10000 {
		t.Fatalf("%v %v", tab, err)
	}
	if len(seen) == 0 || seen[len(seen)-1] > 10000 {
		t.Errorf("progress %v", seen)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Read(ctx, path, Options{}); !errors.Is(err, ErrCancelled) || !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled read: %v", err)
	}
}
