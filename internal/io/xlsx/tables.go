package xlsx

import (
	"fmt"
	"path"
	"strconv"
	"strings"

	"slopewise/internal/io/table"
)

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
func (p *Package) sheetTables(part string) ([]table.DataTable, []string) {
	var rels XMLRels
	relsPart := path.Join(path.Dir(part), "_rels", path.Base(part)+".rels")
	if p.File(relsPart) == nil {
		return nil, nil
	}
	if err := p.DecodePart(relsPart, &rels); err != nil {
		return nil, []string{"the sheet's relationships cannot be read, so its tables (if any) were not found: " + err.Error()}
	}
	var out []table.DataTable
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
		if err := p.DecodePart(target, &x); err != nil {
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

func parseTable(x xmlTable) (table.DataTable, bool) {
	d := table.DataTable{Name: x.DisplayName, Ref: x.Ref, HeaderRows: 1, TotalsRows: x.TotalsRowCount}
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
	col, ok = RefColumn(ref[:i])
	if !ok {
		return 0, 0, false
	}
	row, err := strconv.Atoi(ref[i:])
	if err != nil || row < 1 || row > 1048576 {
		return 0, 0, false
	}
	return col, row, true
}
