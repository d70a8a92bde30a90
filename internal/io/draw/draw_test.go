package draw

import (
	"fmt"
	"strings"
	"testing"

	"slopewise/internal/report"
)

// TestLayOutFormulas checks that a formula's references to grid cells
// become the sheet's cell names, and that a formula whose cells are not in
// the sheet is dropped while its cell keeps its value.
func TestLayOutFormulas(t *testing.T) {
	s := &report.Sheet{Title: "Title", Blocks: []report.Block{
		{Key: "effects", Title: "Effects", Rows: [][]report.Cell{
			{report.HeadingCell("Group"), report.HeadingCell("Effect"), report.HeadingCell("p")},
			{report.TextCell("a"), {Kind: report.Number, Value: 4, Formula: "{0}+2*{1}",
				Refs: []report.Ref{{Block: "terms", Row: 1, Col: 2}, {Block: "terms", Row: 2, Col: 2}}}, report.PValueCell(0.5)},
			{report.TextCell("b"), {Kind: report.Number, Value: 1, Formula: "{0}",
				Refs: []report.Ref{{Block: "gone", Row: 1, Col: 2}}}, report.PValueCell(0.5)},
			{report.TextCell("c"), {Kind: report.Number, Value: 1, Formula: "{0}",
				Refs: []report.Ref{{Block: "terms", Row: 1, Col: 0}}}, report.PValueCell(0.5)},
		}},
		{Key: "terms", Title: "Terms", Rows: [][]report.Cell{
			{report.HeadingCell("Term"), report.HeadingCell("Role"), report.HeadingCell("Estimate")},
			{report.TextCell("x"), report.TextCell("treatment"), report.NumberCell(2, "0.0")},
			{report.TextCell("y"), report.TextCell("interaction"), report.NumberCell(1, "0.0")},
		}},
	}}
	l := LayOut(s)
	got := map[string]string{}
	for _, p := range l.cells {
		if p.cell.Kind == report.Number && len(p.cell.Refs) == 0 && p.col == 1 {
			got[cellName(p.row, p.col)] = p.cell.Formula
		}
	}
	// Row 1 the title, a blank row, the block's title in row 3, its
	// headings in row 4 and its rows 5 to 7; a blank row, the terms
	// block's title in row 9, its headings in row 10, its estimates in
	// C11 and C12. B6 refers to a block that is not there, B7 to a text.
	want := map[string]string{"B5": "C11+2*C12", "B6": "", "B7": ""}
	for ref, f := range want {
		if got[ref] != f {
			t.Errorf("%s: formula %q, want %q (all: %v)", ref, got[ref], f, got)
		}
	}
}

// TestLayOutPageBreaks checks where the printed pages break: a table that
// would be split moves to the next page whole; a block longer than a page
// is left to the spreadsheet program to break, and the block after it
// starts a new page; no break falls inside a short block.
func TestLayOutPageBreaks(t *testing.T) {
	table := func(key string, rows int) report.Block {
		b := report.Block{Key: key, Title: key, Rows: [][]report.Cell{{report.HeadingCell("a"), report.HeadingCell("b"), report.HeadingCell("c")}}}
		for i := range rows {
			b.Rows = append(b.Rows, []report.Cell{report.TextCell(fmt.Sprint(i)), report.NumberCell(float64(i), "0"), report.NumberCell(1, "0")})
		}
		return b
	}
	s := &report.Sheet{Title: "Title", Blocks: []report.Block{table("one", 30), table("two", 30), table("long", 5000), table("after", 3)}}
	l := LayOut(s)
	starts := map[int]string{}
	for _, u := range l.units {
		for _, p := range l.cells {
			if p.row == u.from && p.col == 0 {
				starts[u.from] = p.cell.Text
			}
		}
	}
	var at []string
	for _, r := range l.breaks {
		name, ok := starts[r]
		if !ok {
			t.Errorf("a page break at row %d, inside a block", r+1)
		}
		at = append(at, name)
	}
	if fmt.Sprint(at) != "[two after]" {
		t.Errorf("page breaks before %v, want before two (which does not fit after one) and after (after the long list)", at)
	}
}

// TestLayOutLongTitle checks that a block's title longer than the sheet is
// wide wraps across the sheet's columns in a taller row, and a short one
// stays on one line.
func TestLayOutLongTitle(t *testing.T) {
	row := []report.Cell{report.HeadingCell("a"), report.HeadingCell("b"), report.HeadingCell("c")}
	long := strings.Repeat("a rather long title ", 12)
	l := LayOut(&report.Sheet{Blocks: []report.Block{{Title: "Short", Rows: [][]report.Cell{row}}, {Title: long, Rows: [][]report.Cell{row}}}})
	// Short's title in row 1, its headings in row 2, a blank row, the long
	// title in row 4.
	if h := l.rowHeight(0); h != titleHeight {
		t.Errorf("short title: row %g points high", h)
	}
	if h := l.rowHeight(3); h < 2*titleHeight {
		t.Errorf("long title: row %g points high, want two lines or more", h)
	}
	merged := false
	for _, m := range l.merges {
		merged = merged || m == [4]int{3, 0, 3, len(l.widths) - 1}
	}
	if !merged {
		t.Errorf("long title not merged across the sheet: %v", l.merges)
	}
}
