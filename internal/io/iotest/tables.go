package iotest

import (
	"fmt"
	"math"
	"reflect"
	"strings"

	"slopewise/internal/io/table"
)

// sameTables reports the first difference between two tables read from
// the same sheet, or "".
func SameTables(a, b *table.Table) string {
	if a.HeaderRow != b.HeaderRow || !reflect.DeepEqual(a.SourceRows, b.SourceRows) || !reflect.DeepEqual(a.Notes, b.Notes) {
		return fmt.Sprintf("header %d/%d, rows %d/%d, notes %v / %v", a.HeaderRow, b.HeaderRow, a.Len(), b.Len(), a.Notes, b.Notes)
	}
	if len(a.Columns) != len(b.Columns) {
		return fmt.Sprintf("%d columns, %d", len(a.Columns), len(b.Columns))
	}
	for j, ca := range a.Columns {
		cb := b.Columns[j]
		if ca.Name != cb.Name || ca.Kind != cb.Kind || !reflect.DeepEqual(ca.Levels, cb.Levels) || !reflect.DeepEqual(ca.Texts, cb.Texts) ||
			!reflect.DeepEqual(ca.Missing, cb.Missing) || ca.MissingCount != cb.MissingCount || ca.Converted != cb.Converted ||
			!reflect.DeepEqual(ca.Distinct, cb.Distinct) || len(ca.Numbers) != len(cb.Numbers) {
			return fmt.Sprintf("column %d %q/%q: %v/%v", j, ca.Name, cb.Name, ca.Kind, cb.Kind)
		}
		for i := range ca.Numbers {
			if math.Float64bits(ca.Numbers[i]) != math.Float64bits(cb.Numbers[i]) && !(math.IsNaN(ca.Numbers[i]) && math.IsNaN(cb.Numbers[i])) {
				return fmt.Sprintf("column %q row %d: %v, %v", ca.Name, i, ca.Numbers[i], cb.Numbers[i])
			}
		}
	}
	return ""
}

func NoteTexts(t *table.Table) string {
	var b strings.Builder
	for _, n := range t.Notes {
		b.WriteString(n.String())
		b.WriteString("\n")
	}
	return b.String()
}
