package workbook

import (
	"fmt"
	"path"
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

type xmlTable struct {
	Name           string `xml:"name,attr"`
	DisplayName    string `xml:"displayName,attr"`
	Ref            string `xml:"ref,attr"`
	HeaderRowCount *int   `xml:"headerRowCount,attr"`
	TotalsRowCount int    `xml:"totalsRowCount,attr"`
}

// relTable is the relationship type suffix of a table part (ECMA-376
// Part 1, section 15.2).
const relTable = "/table"

// maxTables bounds the tables read from one sheet.
const maxTables = 1000

// sheetTables reads the tables of a worksheet part. A table part that
// cannot be read is reported in the returned notes, not as an error: the
// sheet's cells are still there.
func (p *xlsxPackage) sheetTables(part string) ([]DataTable, []string) {
	var rels xmlRels
	relsPart := path.Join(path.Dir(part), "_rels", path.Base(part)+".rels")
	if p.file(relsPart) == nil {
		return nil, nil
	}
	if err := p.decodePart(relsPart, &rels); err != nil {
		return nil, []string{"the sheet's relationships cannot be read, so its tables (if any) were not found: " + err.Error()}
	}
	var out []DataTable
	var notes []string
	for _, r := range rels.Rels {
		if !strings.HasSuffix(r.Type, relTable) || len(out) >= maxTables {
			continue
		}
		target := r.Target
		if strings.HasPrefix(target, "/") {
			target = strings.TrimPrefix(target, "/")
		} else {
			target = path.Join(path.Dir(part), target)
		}
		var x xmlTable
		if err := p.decodePart(target, &x); err != nil {
			notes = append(notes, fmt.Sprintf("the table part %s cannot be read; if it has a totals row, that row is read as data", target))
			continue
		}
		d, ok := parseTable(x)
		if !ok {
			notes = append(notes, fmt.Sprintf("the table %q has a range %q that is not a range of cells; if it has a totals row, that row is read as data", x.DisplayName, x.Ref))
			continue
		}
		out = append(out, d)
	}
	return out, notes
}

func parseTable(x xmlTable) (DataTable, bool) {
	d := DataTable{Name: x.DisplayName, Ref: x.Ref, HeaderRows: 1, TotalsRows: x.TotalsRowCount}
	if d.Name == "" {
		d.Name = x.Name
	}
	if x.HeaderRowCount != nil {
		d.HeaderRows = *x.HeaderRowCount
	}
	from, to, found := strings.Cut(x.Ref, ":")
	if !found {
		to = from
	}
	c1, r1, ok1 := cellRef(from)
	c2, r2, ok2 := cellRef(to)
	if !ok1 || !ok2 || d.HeaderRows < 0 || d.HeaderRows > 1 || d.TotalsRows < 0 || d.TotalsRows > 1 {
		return d, false
	}
	d.FirstRow, d.LastRow = min(r1, r2), max(r1, r2)
	d.FirstCol, d.LastCol = min(c1, c2), max(c1, c2)
	return d, d.LastRow-d.FirstRow+1 >= d.HeaderRows+d.TotalsRows
}

// cellRef splits "$B$12" into column 1 and row 12.
func cellRef(ref string) (col, row int, ok bool) {
	ref = strings.ReplaceAll(ref, "$", "")
	i := 0
	for i < len(ref) && (ref[i]|0x20) >= 'a' && (ref[i]|0x20) <= 'z' {
		i++
	}
	col, ok = refColumn(ref[:i])
	if !ok {
		return 0, 0, false
	}
	row, err := strconv.Atoi(ref[i:])
	if err != nil || row < 1 || row > 1048576 {
		return 0, 0, false
	}
	return col, row, true
}

// findTable finds a table by name, without regard to case as spreadsheet
// programs compare names.
func findTable(tables []DataTable, name string) (DataTable, bool) {
	for _, d := range tables {
		if strings.EqualFold(d.Name, name) {
			return d, true
		}
	}
	return DataTable{}, false
}

func tableNames(tables []DataTable) string {
	var names []string
	for _, d := range tables {
		names = append(names, strconv.Quote(d.Name))
	}
	if len(names) == 0 {
		return "none"
	}
	return strings.Join(names, ", ")
}

// regionFilter keeps a sheet's rows and cells to the data region: the
// table read, if any, and never a table's totals row.
type regionFilter struct {
	tables []DataTable
	region *DataTable // the table read as the data region; nil: the sheet
	auto   *DataTable // the sheet's only table
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
func (f *regionFilter) keep(num int, cells []rawCell) (out []rawCell, drop bool) {
	if f == nil || f.region == nil && len(f.tables) == 0 {
		return cells, false
	}
	if f.region != nil && (num < f.region.FirstRow || num > f.region.dataEnd()) {
		if num > f.region.LastRow && !isBlankRow(cells) {
			f.belowLeft++
		}
		return nil, true
	}
	out = cells[:0]
	dropped := false
	for _, c := range cells {
		if f.region != nil && (c.Col < f.region.FirstCol || c.Col > f.region.LastCol) {
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

func (f *regionFilter) inTotals(num, col int) bool {
	for _, d := range f.tables {
		if d.TotalsRows > 0 && num > d.dataEnd() && num <= d.LastRow && col >= d.FirstCol && col <= d.LastCol {
			return true
		}
	}
	return false
}

// notes says what the filter did.
func (f *regionFilter) notes(t *Table) {
	if f == nil {
		return
	}
	add := func(format string, args ...any) {
		t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: fmt.Sprintf(format, args...)})
	}
	if f.region != nil {
		t.Region = f.region.Name
		add("the data were read from the table %q (%s), as chosen", f.region.Name, f.region.Ref)
		if f.belowLeft > 0 {
			add("%d row(s) with values below the table were left out", f.belowLeft)
		}
	} else if f.autoMatched {
		add("the header row is that of the table %q (%s); the sheet was read whole. To read the table alone, choose it as the data region", f.auto.Name, f.auto.Ref)
	} else if len(f.tables) > 0 {
		add("this sheet holds the table(s) %s; the whole sheet was read. To read one table only, choose it as the data region", tableNames(f.tables))
	}
	for _, d := range f.tables {
		for r := d.dataEnd() + 1; r <= d.LastRow; r++ {
			if f.totalsLeft[r] {
				add("the totals row of the table %q (row %d) is not data and was left out", d.Name, r)
			}
		}
	}
}
