package table

import (
	"fmt"
	"strconv"
	"strings"
)

// DataTable is a table defined in a worksheet (a named range with a
// header row and perhaps a totals row, xl/tables/tableN.xml; ECMA-376
// Part 1, section 18.5). Its totals row is never data: its cells are
// left out of every reading, and a table can be read on its own as the
// data region (Options.Table).
type DataTable struct {
	// Name is the name people see and type (displayName).
	Name string
	// Ref is the table's range, header and totals rows included ("A3:G64").
	Ref string
	// HeaderRows and TotalsRows are the number of header and totals rows
	// (0 or 1 each).
	HeaderRows, TotalsRows int
	// FirstRow and LastRow are 1-based sheet rows; FirstCol and LastCol
	// 0-based columns.
	FirstRow, LastRow, FirstCol, LastCol int
}

// dataEnd is the last row of the table's data.
func (d DataTable) dataEnd() int { return d.LastRow - d.TotalsRows }

// FindTable finds a table by name, without regard to case as spreadsheet
// programs compare names.
func FindTable(tables []DataTable, name string) (DataTable, bool) {
	for _, d := range tables {
		if strings.EqualFold(d.Name, name) {
			return d, true
		}
	}
	return DataTable{}, false
}

func TableNames(tables []DataTable) string {
	var names []string
	for _, d := range tables {
		names = append(names, strconv.Quote(d.Name))
	}
	if len(names) == 0 {
		return "none"
	}
	return strings.Join(names, ", ")
}

// RegionFilter keeps a sheet's rows and cells to the data region: the
// table read, if any, and never a table's totals row.
type RegionFilter struct {
	Tables []DataTable
	Region *DataTable // the table read as the data region; nil: the sheet
	Auto   *DataTable // the sheet's only table
	// autoMatched: the header row found is the only table's.
	autoMatched bool
	// totalsLeft counts the totals rows whose cells were left out;
	// belowLeft the rows below the region.
	totalsLeft map[int]bool
	belowLeft  int
}

// keep filters one row's cells in place; drop is true when the row is
// outside the region or nothing of it is left, so that it is neither data
// nor a blank row.
func (f *RegionFilter) keep(num int, cells []RawCell) (out []RawCell, drop bool) {
	if f == nil || f.Region == nil && len(f.Tables) == 0 {
		return cells, false
	}
	if f.Region != nil && (num < f.Region.FirstRow || num > f.Region.dataEnd()) {
		if num > f.Region.LastRow && !IsBlankRow(cells) {
			f.belowLeft++
		}
		return nil, true
	}
	out = cells[:0]
	dropped := false
	for _, c := range cells {
		if f.Region != nil && (c.Col < f.Region.FirstCol || c.Col > f.Region.LastCol) {
			continue
		}
		if f.inTotals(num, c.Col) {
			dropped = true
			continue
		}
		out = append(out, c)
	}
	if dropped {
		if f.totalsLeft == nil {
			f.totalsLeft = map[int]bool{}
		}
		f.totalsLeft[num] = true
	}
	return out, dropped && len(out) == 0
}

func (f *RegionFilter) inTotals(num, col int) bool {
	for _, d := range f.Tables {
		if d.TotalsRows > 0 && num > d.dataEnd() && num <= d.LastRow && col >= d.FirstCol && col <= d.LastCol {
			return true
		}
	}
	return false
}

// notes says what the filter did.
func (f *RegionFilter) notes(t *Table) {
	if f == nil {
		return
	}
	add := func(format string, args ...any) {
		t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: fmt.Sprintf(format, args...)})
	}
	if f.Region != nil {
		t.Region = f.Region.Name
		add("the data were read from the table %q (%s), as chosen", f.Region.Name, f.Region.Ref)
		if f.belowLeft > 0 {
			add("%d row(s) with values below the table were left out", f.belowLeft)
		}
	} else if f.autoMatched {
		add("the header row is that of the table %q (%s); the sheet was read whole. To read the table alone, choose it as the data region", f.Auto.Name, f.Auto.Ref)
	} else if len(f.Tables) > 0 {
		add("this sheet holds the table(s) %s; the whole sheet was read. To read one table only, choose it as the data region", TableNames(f.Tables))
	}
	for _, d := range f.Tables {
		for r := d.dataEnd() + 1; r <= d.LastRow; r++ {
			if f.totalsLeft[r] {
				add("the totals row of the table %q (row %d) is not data and was left out", d.Name, r)
			}
		}
	}
}
