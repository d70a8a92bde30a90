// Package report turns a run's spec and results into what a person reads.
//
// This file holds the grid: a results sheet described as blocks of typed
// cells, independent of any file format or widget toolkit. The report fills
// it once; the workbook writer draws it into a spreadsheet and the GUI shows
// the same grid, so both say the same thing.
package report

// Sheet is one results sheet: blocks drawn top to bottom, a readable
// settings block, and the machine-readable spec of the run.
type Sheet struct {
	// Name is the sheet name wanted. A writer keeps it unique in the target
	// (for example by adding " (2)"), so it is a wish, not a promise.
	Name string
	// Title is the sheet's first row, repeated at the top of every printed
	// page: what the sheet answers, in a line.
	Title string
	// Footer is printed at the foot of every page beside the workbook's
	// name and the page number: the date of the run.
	Footer string
	// Blocks are drawn in order, one blank row between two blocks.
	Blocks []Block
	// Settings is the run's spec in words, drawn as a two-column block
	// after the others so that a reader can see how the numbers were made.
	Settings []Setting
	// Spec is the run's spec as JSON. A writer stores it verbatim in the
	// sheet so that a later run can read it back and repeat the run exactly.
	Spec []byte
}

// Block is a titled group of rows, or a picture.
type Block struct {
	// Key names the block for programs ("effects", "differences", "note",
	// "cautions", "chart", …), so a viewer can pick blocks without
	// reading titles. It is not drawn.
	Key string
	// Title is drawn as a heading row above the block when not empty.
	Title string
	// Rows are the block's rows of cells, left to right from column A.
	// Rows may have different lengths.
	Rows [][]Cell
	// Image, when set, is drawn below the rows, anchored at column A.
	Image *Image
}

// Setting is one line of the readable settings block.
type Setting struct {
	Label string
	Value string
}

// Kind says how a cell is stored and shown.
type Kind int

// Cell kinds. The zero Kind is an empty cell.
const (
	// Blank is an empty cell that keeps its place in a row.
	Blank Kind = iota
	// Text is a plain label or value.
	Text
	// Heading is a label drawn in bold: a column header or a row title.
	Heading
	// Number is stored at full precision and shown with Format.
	Number
	// Percent holds a fraction (0.25 for 25 %) and is shown as a percentage
	// with Decimals digits.
	Percent
	// PValue holds a p-value, shown with three decimals and as "<0.001"
	// below one in a thousand; the stored value keeps every digit.
	PValue
	// Paragraph is text that wraps inside a cell merged across Span
	// columns: a note or a caution of a few sentences.
	Paragraph
)

// Cell is one typed cell of the grid. Which fields matter depends on Kind.
type Cell struct {
	Kind Kind
	// Text is the content of Text, Heading and Paragraph cells.
	Text string
	// Value is the content of Number, Percent and PValue cells.
	Value float64
	// Format is the display format of a Number cell in spreadsheet
	// notation ("0.00", "#,##0", "0.000E+00"); empty means general.
	Format string
	// Decimals is the number of digits after the point of a Percent cell.
	Decimals int
	// Span is how many columns a Paragraph covers (at least 1).
	Span int
	// Formula, when set on a Number cell, is how a spreadsheet computes
	// Value from other cells of the sheet, so that a reader can follow it:
	// spreadsheet notation without the leading "=", in which {0}, {1}, …
	// stand for the cells Refs[0], Refs[1], …. Value stays the number to
	// show (and to store as the formula's result).
	Formula string
	Refs    []Ref
}

// Ref names a cell of the grid: row Row (0-based, in Rows) and column Col
// of the block whose Key is Block.
type Ref struct {
	Block    string
	Row, Col int
}

// Image is a picture drawn into the sheet, such as the effects chart.
type Image struct {
	// Title describes the picture for readers who cannot see it.
	Title string
	// PNG holds the encoded picture.
	PNG []byte
	// Width and Height are the picture's size in pixels, used to reserve
	// rows below it.
	Width, Height int
}

// TextCell returns a plain text cell.
func TextCell(s string) Cell { return Cell{Kind: Text, Text: s} }

// HeadingCell returns a bold label cell.
func HeadingCell(s string) Cell { return Cell{Kind: Heading, Text: s} }

// NumberCell returns a number cell shown with the given display format.
func NumberCell(v float64, format string) Cell {
	return Cell{Kind: Number, Value: v, Format: format}
}

// PercentCell returns a fraction shown as a percentage.
func PercentCell(fraction float64, decimals int) Cell {
	return Cell{Kind: Percent, Value: fraction, Decimals: decimals}
}

// PValueCell returns a p-value cell.
func PValueCell(p float64) Cell { return Cell{Kind: PValue, Value: p} }

// ParagraphCell returns wrapped text merged across span columns.
func ParagraphCell(s string, span int) Cell {
	return Cell{Kind: Paragraph, Text: s, Span: max(span, 1)}
}

// The names the results sheets are given (a second run's sheet gets a
// number after the name when it is added beside the first).
const (
	ResultsSheet    = "Results"
	ModeratorsSheet = "Moderators"
)
