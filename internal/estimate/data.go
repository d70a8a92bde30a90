package estimate

import (
	"fmt"
	"math"
	"strconv"
)

// Column is one named column of the data.
//
// A numeric column has Num (NaN where a cell is missing or not a number);
// its Text may then hold, per row, the original text of a cell that was not
// a number, so that a dropped row can say why. A text column has Text only,
// "" for a missing cell. Why, when set, says per row why a missing cell is
// missing, as a noun phrase ("a spreadsheet error value"); "" for a blank.
type Column struct {
	Name string
	Num  []float64
	Text []string
	Why  []string
}

// IsNumeric reports whether the column holds numbers.
func (c *Column) IsNumeric() bool { return c.Num != nil }

// Len returns the number of rows.
func (c *Column) Len() int {
	if c.Num != nil {
		return len(c.Num)
	}
	return len(c.Text)
}

// Data is the table the model is fitted to.
type Data struct {
	Columns []Column
	// RowLabels names each row in messages (a spreadsheet's row number, for
	// example). Nil means 1, 2, 3, ….
	RowLabels []int
}

// rows returns the number of rows, checking that all columns agree.
func (d *Data) rows() (int, error) {
	n := -1
	for i := range d.Columns {
		c := &d.Columns[i]
		if n >= 0 && c.Len() != n {
			return 0, fail(ErrSpec, c.Name, fmt.Sprintf("Column %q has %d rows but column %q has %d; every column must have one value per row.", c.Name, c.Len(), d.Columns[0].Name, n))
		}
		n = c.Len()
	}
	if n < 0 {
		n = 0
	}
	if d.RowLabels != nil && len(d.RowLabels) != n {
		return 0, fail(ErrSpec, "", fmt.Sprintf("There are %d row labels for %d rows.", len(d.RowLabels), n))
	}
	return n, nil
}

// column finds a column by name.
func (d *Data) column(name, role string) (*Column, error) {
	for i := range d.Columns {
		if d.Columns[i].Name == name {
			return &d.Columns[i], nil
		}
	}
	return nil, fail(ErrSpec, name, fmt.Sprintf("The %s column %q is not in the data. Pick one of the columns that are there.", role, name))
}

func (d *Data) label(i int) int {
	if d.RowLabels != nil {
		return d.RowLabels[i]
	}
	return i + 1
}

// cellText returns the text kept for a non-number cell of a numeric column.
func (c *Column) cellText(i int) string {
	if c.Text != nil && i < len(c.Text) {
		return c.Text[i]
	}
	return ""
}

// why returns the reason a missing cell is missing, if the caller said.
func (c *Column) why(i int) string {
	if c.Why != nil && i < len(c.Why) {
		return c.Why[i]
	}
	return ""
}

// key returns a cell as a category key: the text, or the number written
// shortly; "" when missing.
func (c *Column) key(i int) string {
	if c.Num != nil {
		v := c.Num[i]
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return ""
		}
		return formatNumber(v)
	}
	return c.Text[i]
}

// formatNumber writes a number in the shortest form that reads back
// exactly, without an exponent in the range a spreadsheet shows plainly
// (a level 1000000 reads "1000000", not "1e+06").
func formatNumber(v float64) string {
	if a := math.Abs(v); a == 0 || (a >= 1e-4 && a < 1e15) {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}
