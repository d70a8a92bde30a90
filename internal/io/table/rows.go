package table

import (
	"context"
	"fmt"
	"io"
	"slices"
	"sort"
	"strings"
)

// BufRow is a row held back while the header is found.
type BufRow struct {
	Num   int
	Cells []RawCell
}

// Build reads every row of src into table.
func Build(ctx context.Context, src RowSource, t *Table, opts Options, decimalComma bool) error {
	b := &Builder{Table: t, Cols: map[int]ColAdder{}, DecimalComma: decimalComma, keepRows: true,
		NewCol: func(i int) ColAdder { return newColBuilder(i) }}
	if err := ScanRows(ctx, src, t, opts, b); err != nil {
		return err
	}
	b.finish()
	return nil
}

// ScanRows finds the header row of src, as Options say, and hands every
// data row after it to b.
func ScanRows(ctx context.Context, src RowSource, t *Table, opts Options, b *Builder) error {
	var notes []string
	if x, ok := src.(interface {
		Regions() (*RegionFilter, []string)
	}); ok {
		b.filter, notes = x.Regions()
	}
	if b.filter != nil {
		t.Tables = b.filter.Tables
		for _, n := range notes {
			t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: n})
		}
		if r := b.filter.Region; r != nil {
			opts.HeaderRow = r.FirstRow
			if r.HeaderRows == 0 {
				opts.HeaderRow = NoHeader
			}
		}
	}
	var buf []BufRow
	for len(buf) < HeaderScanRows {
		num, cells, err := src.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		cells, drop := b.filter.keep(num, cells)
		if drop || IsBlankRow(cells) {
			continue
		}
		if err := checkWidth(num, cells); err != nil {
			return err
		}
		buf = append(buf, BufRow{num, KeptCells(src, cells)})
		if opts.HeaderRow > 0 && num >= opts.HeaderRow && len(buf) >= 2 {
			break
		}
	}
	if len(buf) == 0 {
		return &Error{Cause: ErrEmptySheet}
	}
	hi := -1 // index in buf of the header row, or of the last row above it
	var headerCells []RawCell
	switch {
	case opts.HeaderRow > 0:
		if last := buf[len(buf)-1].Num; last < opts.HeaderRow {
			return &Error{Cause: ErrHeaderOutside, Detail: fmt.Sprintf("row %d was asked for; the last row with values is row %d", opts.HeaderRow, last)}
		}
		for i, r := range buf {
			if r.Num <= opts.HeaderRow {
				hi = i
			}
		}
		t.HeaderRow = opts.HeaderRow
		if hi >= 0 && buf[hi].Num == opts.HeaderRow {
			headerCells = buf[hi].Cells
		}
	case opts.HeaderRow == 0:
		t.HeaderDetected = true
		if hi = DetectHeader(buf); hi >= 0 {
			headerCells = buf[hi].Cells
			t.HeaderRow = buf[hi].Num
		} else {
			t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: "no header row was found, so columns are named after their letters; set the header row if this is wrong"})
		}
	}
	if f := b.filter; f != nil && f.Region == nil && f.Auto != nil && t.HeaderRow == f.Auto.FirstRow && f.Auto.HeaderRows == 1 {
		// The header found is the only table's: said, but nothing beside
		// or below the table is left out unless the table is chosen (data
		// typed next to a table are often meant to belong to it).
		f.autoMatched = true
	}
	if b.filter != nil && b.filter.Region != nil {
		headerCells, _ = b.filter.keep(t.HeaderRow, append([]RawCell(nil), headerCells...))
	}
	_, isText := src.(textRows)
	isScanned := scannedText(src)
	b.fixedWidth = (isText || isScanned) && t.HeaderRow > 0
	if t.HeaderRow > 0 {
		b.Header = map[int]string{}
		for _, c := range headerCells {
			b.Header[c.Col] = HeaderText(c)
			b.col(c.Col)
		}
	}
	if b.fixedWidth {
		b.width = len(b.Cols)
		for c := range b.Cols {
			b.width = max(b.width, c+1)
		}
	}
	for _, r := range buf[hi+1:] {
		if err := b.addRow(r.Num, r.Cells); err != nil {
			return err
		}
	}
	for n := 0; ; n++ {
		if n%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return &Error{Cause: ErrCancelled, Underlying: err}
			}
			if opts.Progress != nil && n > 0 {
				opts.Progress(b.Rows)
			}
		}
		num, cells, err := src.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		if err := b.addRow(num, cells); err != nil {
			return err
		}
	}
	if b.Rows == 0 {
		if t.HeaderRow > 0 {
			return &Error{Cause: ErrNoDataRows, Detail: fmt.Sprintf("the header is row %d", t.HeaderRow)}
		}
		return &Error{Cause: ErrEmptySheet}
	}
	return nil
}

// HeaderText is a header cell's text: numbers as written, errors as text.
func HeaderText(c RawCell) string {
	switch c.Type {
	case CellNumber:
		return formatNumber(c.Num)
	case CellNoValue:
		return ""
	}
	return c.Text
}

func IsBlankRow(cells []RawCell) bool {
	for _, c := range cells {
		if c.Type != CellText || TrimSpace(c.Text) != "" {
			return false
		}
	}
	return true
}

// ColAdder takes one column's cells: the cell of data row row (0-based),
// the rows it was not given being blank. Rows come in order; a second
// cell of a row is ignored.
type ColAdder interface {
	Add(row int, c *RawCell, decimalComma bool)
}

// Builder turns data rows into columns: a Table's (colBuilder), or
// a streamed file's survey (colSurvey).
type Builder struct {
	Table  *Table
	Cols   map[int]ColAdder
	NewCol func(index int) ColAdder
	// keepRows: the rows' numbers go into t.SourceRows.
	keepRows     bool
	Rows         int
	Header       map[int]string
	DecimalComma bool
	blankRows    int
	firstBlank   int
	cached       []int
	cachedAdders []ColAdder // the columns in the order of cached
	dense        []ColAdder // cols by index, for the indexes seen
	// fixedWidth: a text file's rows may not be wider than its header.
	fixedWidth bool
	width      int
	// filter keeps a workbook's rows to the data region (tables.go).
	filter *RegionFilter
}

func (b *Builder) col(i int) ColAdder {
	if i < len(b.dense) && b.dense[i] != nil {
		return b.dense[i]
	}
	c, ok := b.Cols[i]
	if !ok {
		c = b.NewCol(i)
		b.Cols[i] = c
	}
	if i < maxDenseColumns {
		if i >= len(b.dense) {
			b.dense = append(b.dense, make([]ColAdder, i+1-len(b.dense))...)
		}
		b.dense[i] = c
	}
	return c
}

// maxDenseColumns bounds the column indexes Builder finds by
// position rather than in its map (a sheet has at most 16,384 columns).
const maxDenseColumns = 1 << 14

func (b *Builder) addRow(num int, cells []RawCell) error {
	cells, drop := b.filter.keep(num, cells)
	if drop {
		return nil
	}
	if err := checkWidth(num, cells); err != nil {
		return err
	}
	if IsBlankRow(cells) {
		if b.blankRows == 0 {
			b.firstBlank = num
		}
		b.blankRows++
		return nil
	}
	for _, c := range cells {
		if b.fixedWidth && c.Col >= b.width {
			if TrimSpace(c.Text) != "" {
				return &Error{Cell: fmt.Sprintf("line %d", c.Line), Cause: ErrRaggedRow,
					Detail: fmt.Sprintf("the header has %d columns; this row has a value in column %d", b.width, c.Col+1)}
			}
			continue
		}
		b.col(c.Col)
	}
	if cells := int64(b.Rows+1) * int64(len(b.Cols)); cells > maxTableCells {
		return &Error{Cell: fmt.Sprintf("row %d", num), Cause: ErrTooManyCells,
			Detail: fmt.Sprintf("the data reach %d rows of %d columns, more than the %d cells Slopewise holds in memory", b.Rows+1, len(b.Cols), maxTableCells)}
	}
	if b.keepRows {
		b.Table.SourceRows = append(b.Table.SourceRows, num)
	}
	row := b.Rows
	b.Rows++
	for k := range cells {
		c := &cells[k]
		if b.fixedWidth && c.Col >= b.width {
			continue
		}
		b.col(c.Col).Add(row, c, b.DecimalComma)
	}
	return nil
}

// MaxTextColumns bounds the columns of a text file. A sheet holds 16,384
// columns (maxColumns); a text file may hold more, and the columns a
// model uses can still be read from it, up to four times as many.
const MaxTextColumns = 4 * MaxColumns

// checkWidth refuses a row with a value past maxTextColumns (cells come
// in column order).
func checkWidth(num int, cells []RawCell) error {
	if n := len(cells); n > 0 && cells[n-1].Col >= MaxTextColumns {
		where := fmt.Sprintf("row %d", num)
		if cells[n-1].Line > 0 {
			where = fmt.Sprintf("line %d", cells[n-1].Line)
		}
		return &Error{Cell: where, Cause: ErrTooManyColumns, Detail: fmt.Sprintf("the row has values in more than %d columns, the most Slopewise reads from a text file", MaxTextColumns)}
	}
	return nil
}

// maxTableCells bounds the cells (rows times columns) of a table held in
// memory: about 1 GB at nine bytes a cell. A million rows of a hundred
// columns fit; a header of 16,384 columns over a million rows, 16 billion
// cells, is refused after a few thousand rows instead of taking every
// byte of memory.
const maxTableCells = 128 << 20

// sortedIndexes lists the column indexes in order; cached between rows
// because new columns are rare.
func (b *Builder) sortedIndexes() []int {
	if len(b.cached) != len(b.Cols) {
		b.cached = b.cached[:0]
		for i := range b.Cols {
			b.cached = append(b.cached, i)
		}
		sort.Ints(b.cached)
		b.cachedAdders = b.cachedAdders[:0]
		for _, i := range b.cached {
			b.cachedAdders = append(b.cachedAdders, b.Cols[i])
		}
	}
	return b.cached
}

// ColumnNames returns the columns' indexes in order and their names,
// noting renamed columns in the table.
func (b *Builder) ColumnNames() ([]int, []string) {
	t := b.Table
	idx := b.sortedIndexes()
	header := make([]string, len(idx))
	for i, ci := range idx {
		header[i] = b.Header[ci]
	}
	names, notes := NameColumns(header, idx, t.Sheet, t.HeaderRow)
	t.Notes = append(t.Notes, notes...)
	return idx, names
}

func (b *Builder) finish() {
	t := b.Table
	b.filter.notes(t)
	idx, names := b.ColumnNames()
	if b.blankRows > 0 {
		t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: fmt.Sprintf("%d entirely blank row(s) were left out, the first being row %d", b.blankRows, b.firstBlank)})
	}
	for i, ci := range idx {
		cb := b.Cols[ci].(*colBuilder)
		cb.pad(b.Rows)
		col := &Column{Name: names[i], Letter: ColumnLetter(ci), Index: ci}
		cb.finish(col)
		if col.Kind == Empty && b.Header[ci] == "" && col.MissingCount[Blank] == len(col.Missing) {
			continue // a spacer column with neither name nor values
		}
		t.Columns = append(t.Columns, col)
		t.Notes = append(t.Notes, columnNotes(t, col)...)
	}
}

// columnNotes reports what a person should know about one column.
func columnNotes(t *Table, col *Column) []Note {
	var notes []Note
	add := func(format string, args ...any) {
		notes = append(notes, Note{Sheet: t.Sheet, Column: col.Name, Text: fmt.Sprintf(format, args...)})
	}
	if col.Converted > 0 {
		add("%d number(s) stored as text were read as numbers", col.Converted)
	}
	if col.Kind == Empty && col.MissingCount[ErrorValue] > 0 {
		add("every cell with a value is an error value (such as #DIV/0!), so the column has no usable values; check the formulas that fill it")
	}
	if n := col.MissingCount[TextInNumbers]; n > 0 {
		first := firstMissing(col, TextInNumbers)
		add("%d text value(s) in this number column count as missing, the first at %s", n, t.CellRef(col, first))
	}
	if n := col.MissingCount[BadDate]; n > 0 {
		first := firstMissing(col, BadDate)
		add("%d value(s) in this date column are not dates and count as missing, the first at %s", n, t.CellRef(col, first))
	}
	return notes
}

func firstMissing(col *Column, r Reason) int {
	for i, m := range col.Missing {
		if m == r {
			return i
		}
	}
	return 0
}

// DetectHeader finds the header row among the first rows: the first row,
// at least half as wide as the widest, whose cells are mostly text and
// above rows holding more numbers than it does. A table of text only
// takes its first wide row. It returns -1 when no row qualifies.
func DetectHeader(rows []BufRow) int {
	width := 0
	for _, r := range rows {
		width = max(width, nonBlank(r.Cells))
	}
	firstWide := -1
	for i, r := range rows {
		n := nonBlank(r.Cells)
		if n == 0 || n*2 < width {
			continue
		}
		if firstWide < 0 {
			firstWide = i
		}
		text, num := shares(r.Cells)
		if text < 0.5 {
			continue
		}
		below := rows[i+1:]
		if len(below) > 10 {
			below = below[:10]
		}
		if len(below) == 0 {
			// A sheet of one wide row: a header with no data below it.
			if i == firstWide {
				return i
			}
			break
		}
		var sum float64
		for _, b := range below {
			_, nb := shares(b.Cells)
			sum += nb
		}
		numBelow := sum / float64(len(below))
		if numBelow > num+0.1 || numBelow == 0 && num == 0 {
			return i
		}
		if i >= 20 {
			break
		}
	}
	return -1
}

func nonBlank(cells []RawCell) int {
	n := 0
	for _, c := range cells {
		if c.Type != CellText || TrimSpace(c.Text) != "" {
			n++
		}
	}
	return n
}

// shares returns the fractions of a row's non-blank cells that are text
// and that are numbers (stored, or written as text).
func shares(cells []RawCell) (text, num float64) {
	var n, nt, nn int
	for _, c := range cells {
		switch c.Type {
		case CellNumber, CellBool:
			n++
			nn++
		case CellText:
			s := TrimSpace(c.Text)
			if s == "" {
				continue
			}
			n++
			if ClassifyText(s) != Present {
				continue
			}
			if _, ok := ParseNumber(s, false); ok {
				nn++
			} else if _, ok := ParseNumber(s, true); ok {
				nn++
			} else if _, ok := ParseDate(s); ok {
				nn++
			} else {
				nt++
			}
		default:
			n++
		}
	}
	if n == 0 {
		return 0, 0
	}
	return float64(nt) / float64(n), float64(nn) / float64(n)
}

// scannedText reports the sources whose cells' texts live only until
// the next row.
func scannedText(src RowSource) bool {
	x, ok := src.(textRows)
	return ok && x.TextRows()
}

// textRows is a source of a text file's rows: TextRows says whether the
// cells' texts live only until the next row (the scanner's) or are kept.
type textRows interface {
	TextRows() (transient bool)
}

// KeptCells copies a row's cells so that they outlive the next call of
// Next, with the texts too when the scanner handed them out.
func KeptCells(src RowSource, cells []RawCell) []RawCell {
	kept := slices.Clone(cells)
	if scannedText(src) {
		for i := range kept {
			kept[i].Text = strings.Clone(kept[i].Text)
		}
	}
	return kept
}

// The limits of a sheet: Excel's specifications and limits (from
// memory), which the file format's cell names also imply (ECMA-376 Part
// 1, section 18.3.1.4: rows 1 to 1,048,576, columns A to XFD).
const (
	MaxRows      = 1 << 20
	MaxColumns   = 1 << 14
	MaxCellChars = 32767
)
