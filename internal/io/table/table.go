package table

import (
	"fmt"
	"io/fs"
	"math"
	"time"
)

// Table is one sheet read into named, typed columns. Row i of every column
// is the same data row; SourceRows[i] is its row number in the sheet (for a
// CSV file, its record number, counting the header line as 1, which is the
// row a spreadsheet program shows when it opens the file).
type Table struct {
	Path  string
	Sheet string // empty for text files
	// HeaderRow is the sheet row that gave the column names (1-based), or 0
	// when the table has no header row.
	HeaderRow int
	// HeaderDetected is true when HeaderRow was found by Slopewise rather
	// than given by the caller.
	HeaderDetected bool
	Columns        []*Column
	SourceRows     []int
	// Notes are the things the reader found or did that a person should
	// know: renamed columns, converted numbers, formulas without values.
	Notes []Note
	// Text describes how a text file was read; nil for workbooks.
	Text *TextFormat
	// Tables are the tables defined in the sheet; Region names the one
	// read as the data region, empty when the whole sheet was read.
	Tables []DataTable
	Region string
	// Source is the file as it was when reading began (size, time,
	// identity), for the save to check that it writes into that version.
	Source fs.FileInfo
}

// TextFormat is what was sniffed from a text file.
type TextFormat struct {
	Delimiter    rune
	Encoding     string // "UTF-8" or "Windows-1252"
	DecimalComma bool
}

// Len is the number of data rows.
func (t *Table) Len() int { return len(t.SourceRows) }

// Column returns the column with the given name, or nil.
func (t *Table) Column(name string) *Column {
	for _, c := range t.Columns {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// CellRef names the cell of column c in data row i in words a person can
// find: `sheet "Visits", cell D17`.
func (t *Table) CellRef(c *Column, i int) string {
	cell := fmt.Sprintf("cell %s%d", c.Letter, t.SourceRows[i])
	if t.Sheet == "" {
		return cell
	}
	return fmt.Sprintf("sheet %q, %s", t.Sheet, cell)
}

// Kind is what a column holds.
type Kind int

// Column kinds.
const (
	// Empty: no cell of the column has a usable value.
	Empty Kind = iota
	// Number: numeric values in Numbers.
	Number
	// YesNo: exactly two distinct values. Numbers holds 0 or 1 (the index
	// into Levels), Texts the value as read.
	YesNo
	// Category: text with few distinct values, listed in Levels. Texts holds
	// each row's value, Numbers each row's index into Levels.
	Category
	// Text: free text in Texts.
	Text
	// Date: dates and times in Numbers as days since 1899-12-30 (the 1900
	// date system's serial numbers; workbooks in the 1904 system are
	// converted). Use Time to get a time.Time.
	Date
)

var kindNames = [...]string{"empty", "number", "yes/no", "category", "text", "date"}

func (k Kind) String() string {
	if k < 0 || int(k) >= len(kindNames) {
		return fmt.Sprintf("Kind(%d)", int(k))
	}
	return kindNames[k]
}

// Reason says why a cell is missing.
type Reason uint8

// Reasons a cell is missing. Present means the cell has a usable value.
const (
	Present Reason = iota
	// Blank: the cell is empty or holds only spaces.
	Blank
	// ErrorValue: a spreadsheet error value such as #DIV/0! or #N/A.
	ErrorValue
	// Marker: a missing-value marker typed by hand, such as "NA" or "-".
	Marker
	// TextInNumbers: text in a column that is otherwise numeric.
	TextInNumbers
	// NoCachedValue: a formula without a usable saved result (none, or
	// one the workbook marks as out of date) that Slopewise could not
	// calculate.
	NoCachedValue
	// BadDate: a value in a date column that is not a date.
	BadDate
	numReasons
)

var reasonNames = [...]string{"present", "blank", "error value", "missing marker", "text in a number column", "formula without a usable saved result", "not a date"}

func (r Reason) String() string {
	if int(r) >= len(reasonNames) {
		return fmt.Sprintf("Reason(%d)", int(r))
	}
	return reasonNames[r]
}

// Column is one named, typed column.
type Column struct {
	// Name is the header text, made unique; a blank header gets the name
	// "Column D" from its letter.
	Name string
	// Letter is the sheet column ("D"); for text files, the letter a
	// spreadsheet program would show for the field.
	Letter string
	// Index is the 0-based position in the sheet.
	Index int
	Kind  Kind
	// Numbers holds one value a row for Number, Date, YesNo and Category
	// columns (see Kind); NaN marks a missing cell. Nil for Text and Empty.
	Numbers []float64
	// Texts holds one value a row for YesNo, Category and Text columns, the
	// empty string marking a missing cell. Nil for Number, Date and Empty.
	Texts []string
	// Levels are the distinct values of a YesNo column (two, the first
	// coded 0) or a Category column (sorted, coded by position).
	Levels []string
	// Distinct holds, for a Number or Date column, its first three
	// distinct values in order of appearance (fewer when it has fewer):
	// enough to tell a constant, a two-valued and a many-valued column
	// without a pass over it.
	Distinct []float64
	// Missing holds one reason a row: Present, or why the cell is missing.
	Missing []Reason
	// MissingCount counts the missing cells by reason.
	MissingCount [numReasons]int
	// Converted counts numbers that were stored as text and converted.
	Converted int
	// Formulas counts the column's formula cells in data rows by where
	// their values came from.
	Formulas FormulaCount
}

// FormulaCount counts a column's formula cells by where their values
// came from.
type FormulaCount struct {
	// Saved: the result saved in the file was read.
	Saved int
	// Computed: the file held no result, or one it marks as out of date,
	// and Slopewise calculated it.
	Computed int
	// Missing: no usable result and not calculated; these cells are
	// missing with the reason NoCachedValue.
	Missing int
	// Stale counts the cells among Computed and Missing whose saved
	// result the workbook marks as out of date (it asks to be
	// recalculated when opened).
	Stale int
	// Why says why the first missing one was not calculated.
	Why string
}

// Total is the number of formula cells.
func (f FormulaCount) Total() int { return f.Saved + f.Computed + f.Missing }

// MissingTotal is the number of missing cells for any reason.
func (c *Column) MissingTotal() int {
	n := 0
	for r := Blank; r < numReasons; r++ {
		n += c.MissingCount[r]
	}
	return n
}

// Time converts row i of a Date column to a time.Time in UTC.
func (c *Column) Time(i int) (time.Time, bool) {
	v := c.Numbers[i]
	if math.IsNaN(v) {
		return time.Time{}, false
	}
	return SerialToTime(v), true
}

// excelEpoch is day 0 of the 1900 date system as used after 1900-03-01.
// The 1900 system counts 1900-02-29, a day that did not exist, so serials
// from 61 on are one day ahead of a plain count from 1899-12-31 ("ECMA-376
// Part 1, section 18.17.4.1", and common practice in every reader).
var excelEpoch = time.Date(1899, 12, 30, 0, 0, 0, 0, time.UTC)

// Date1904Offset is the serial of 1904-01-01 in the 1900 system.
const Date1904Offset = 1462

// SerialToTime converts a 1900-system serial to a time, rounding to the
// millisecond.
func SerialToTime(v float64) time.Time {
	if v < 61 && v >= 1 {
		v++ // before the phantom 1900-02-29
	}
	ms := math.Round(v * 86400e3)
	return excelEpoch.Add(time.Duration(ms) * time.Millisecond)
}

// TimeToSerial is the inverse of serialToTime for dates after 1900-03-01.
func TimeToSerial(t time.Time) float64 {
	return float64(t.Sub(excelEpoch).Milliseconds()) / 86400e3
}

// Note is something the reader found or did that a person should know.
type Note struct {
	Sheet  string
	Cell   string // a cell reference, when the note is about one cell
	Column string // the column's name, when the note is about a column
	Text   string
}

func (n Note) String() string {
	s := ""
	if n.Sheet != "" {
		s += fmt.Sprintf("sheet %q, ", n.Sheet)
	}
	if n.Cell != "" {
		s += "cell " + n.Cell + ", "
	}
	if n.Column != "" {
		s += fmt.Sprintf("column %q: ", n.Column)
	} else if s != "" {
		s = s[:len(s)-2] + ": "
	}
	return s + n.Text
}

// Problem is one missing cell, for listing by cell reference.
type Problem struct {
	Column *Column
	Row    int // data row index
	Reason Reason
}

// Problems lists every missing cell of the table in column order. For a
// large table with many blanks this is long; MissingCount gives the totals.
func (t *Table) Problems() []Problem {
	var out []Problem
	for _, c := range t.Columns {
		for i, r := range c.Missing {
			if r != Present {
				out = append(out, Problem{Column: c, Row: i, Reason: r})
			}
		}
	}
	return out
}

// Describe says where and why: `sheet "Visits", cell D17: error value`.
func (t *Table) Describe(p Problem) string {
	return t.CellRef(p.Column, p.Row) + ": " + p.Reason.String()
}

// ColumnLetter converts a 0-based column index to its letters (0 → "A").
func ColumnLetter(i int) string {
	var b []byte
	for i++; i > 0; i = (i - 1) / 26 {
		b = append([]byte{byte('A' + (i-1)%26)}, b...)
	}
	return string(b)
}
