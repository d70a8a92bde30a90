package workbook

import (
	"context"
	"fmt"
	"io"
	"slices"
	"sort"
	"strings"
)

// bufRow is a row held back while the header is found.
type bufRow struct {
	num   int
	cells []rawCell
}

// build reads every row of src into table.
func build(ctx context.Context, src rowSource, t *Table, opts Options, decimalComma bool) error {
	b := &tableBuilder{t: t, cols: map[int]colAdder{}, decimalComma: decimalComma, keepRows: true,
		newCol: func(i int) colAdder { return newColBuilder(i) }}
	if err := scanRows(ctx, src, t, opts, b); err != nil {
		return err
	}
	b.finish()
	return nil
}

// scanRows finds the header row of src, as Options say, and hands every
// data row after it to b.
func scanRows(ctx context.Context, src rowSource, t *Table, opts Options, b *tableBuilder) error {
	var notes []string
	if x, ok := src.(interface {
		Regions() (*regionFilter, []string)
	}); ok {
		b.filter, notes = x.Regions()
	}
	if b.filter != nil {
		t.Tables = b.filter.tables
		for _, n := range notes {
			t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: n})
		}
		if r := b.filter.region; r != nil {
			opts.HeaderRow = r.FirstRow
			if r.HeaderRows == 0 {
				opts.HeaderRow = NoHeader
			}
		}
	}
	var buf []bufRow
	for len(buf) < headerScanRows {
		num, cells, err := src.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		cells, drop := b.filter.keep(num, cells)
		if drop || isBlankRow(cells) {
			continue
		}
		if err := checkWidth(num, cells); err != nil {
			return err
		}
		buf = append(buf, bufRow{num, keptCells(src, cells)})
		if opts.HeaderRow > 0 && num >= opts.HeaderRow && len(buf) >= 2 {
			break
		}
	}
	if len(buf) == 0 {
		return &Error{Cause: ErrEmptySheet}
	}
	hi := -1 // index in buf of the header row, or of the last row above it
	var headerCells []rawCell
	switch {
	case opts.HeaderRow > 0:
		if last := buf[len(buf)-1].num; last < opts.HeaderRow {
			return &Error{Cause: ErrHeaderOutside, Detail: fmt.Sprintf("row %d was asked for; the last row with values is row %d", opts.HeaderRow, last)}
		}
		for i, r := range buf {
			if r.num <= opts.HeaderRow {
				hi = i
			}
		}
		t.HeaderRow = opts.HeaderRow
		if hi >= 0 && buf[hi].num == opts.HeaderRow {
			headerCells = buf[hi].cells
		}
	case opts.HeaderRow == 0:
		t.HeaderDetected = true
		if hi = detectHeader(buf); hi >= 0 {
			headerCells = buf[hi].cells
			t.HeaderRow = buf[hi].num
		} else {
			t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: "no header row was found, so columns are named after their letters; set the header row if this is wrong"})
		}
	}
	if f := b.filter; f != nil && f.region == nil && f.auto != nil && t.HeaderRow == f.auto.FirstRow && f.auto.HeaderRows == 1 {
		// The header found is the only table's: said, but nothing beside
		// or below the table is left out unless the table is chosen (data
		// typed next to a table are often meant to belong to it).
		f.autoMatched = true
	}
	if b.filter != nil && b.filter.region != nil {
		headerCells, _ = b.filter.keep(t.HeaderRow, append([]rawCell(nil), headerCells...))
	}
	_, isText := src.(textRows)
	isScanned := scannedText(src)
	b.fixedWidth = (isText || isScanned) && t.HeaderRow > 0
	if t.HeaderRow > 0 {
		b.header = map[int]string{}
		for _, c := range headerCells {
			b.header[c.Col] = headerText(c)
			b.col(c.Col)
		}
	}
	if b.fixedWidth {
		b.width = len(b.cols)
		for c := range b.cols {
			b.width = max(b.width, c+1)
		}
	}
	for _, r := range buf[hi+1:] {
		if err := b.addRow(r.num, r.cells); err != nil {
			return err
		}
	}
	for n := 0; ; n++ {
		if n%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return &Error{Cause: ErrCancelled, Underlying: err}
			}
			if opts.Progress != nil && n > 0 {
				opts.Progress(b.rows)
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
	if b.rows == 0 {
		if t.HeaderRow > 0 {
			return &Error{Cause: ErrNoDataRows, Detail: fmt.Sprintf("the header is row %d", t.HeaderRow)}
		}
		return &Error{Cause: ErrEmptySheet}
	}
	return nil
}

// headerText is a header cell's text: numbers as written, errors as text.
func headerText(c rawCell) string {
	switch c.Type {
	case cellNumber:
		return formatNumber(c.Num)
	case cellNoValue:
		return ""
	}
	return c.Text
}

func isBlankRow(cells []rawCell) bool {
	for _, c := range cells {
		if c.Type != cellText || trimSpace(c.Text) != "" {
			return false
		}
	}
	return true
}

// colAdder takes one column's cells: the cell of data row row (0-based),
// the rows it was not given being blank. Rows come in order; a second
// cell of a row is ignored.
type colAdder interface {
	add(row int, c *rawCell, decimalComma bool)
}

// tableBuilder turns data rows into columns: a Table's (colBuilder), or
// a streamed file's survey (colSurvey).
type tableBuilder struct {
	t      *Table
	cols   map[int]colAdder
	newCol func(index int) colAdder
	// keepRows: the rows' numbers go into t.SourceRows.
	keepRows     bool
	rows         int
	header       map[int]string
	decimalComma bool
	blankRows    int
	firstBlank   int
	cached       []int
	cachedAdders []colAdder // the columns in the order of cached
	dense        []colAdder // cols by index, for the indexes seen
	// fixedWidth: a text file's rows may not be wider than its header.
	fixedWidth bool
	width      int
	// filter keeps a workbook's rows to the data region (tables.go).
	filter *regionFilter
}

func (b *tableBuilder) col(i int) colAdder {
	if i < len(b.dense) && b.dense[i] != nil {
		return b.dense[i]
	}
	c, ok := b.cols[i]
	if !ok {
		c = b.newCol(i)
		b.cols[i] = c
	}
	if i < maxDenseColumns {
		if i >= len(b.dense) {
			b.dense = append(b.dense, make([]colAdder, i+1-len(b.dense))...)
		}
		b.dense[i] = c
	}
	return c
}

// maxDenseColumns bounds the column indexes tableBuilder finds by
// position rather than in its map (a sheet has at most 16,384 columns).
const maxDenseColumns = 1 << 14

func (b *tableBuilder) addRow(num int, cells []rawCell) error {
	cells, drop := b.filter.keep(num, cells)
	if drop {
		return nil
	}
	if err := checkWidth(num, cells); err != nil {
		return err
	}
	if isBlankRow(cells) {
		if b.blankRows == 0 {
			b.firstBlank = num
		}
		b.blankRows++
		return nil
	}
	for _, c := range cells {
		if b.fixedWidth && c.Col >= b.width {
			if trimSpace(c.Text) != "" {
				return &Error{Cell: fmt.Sprintf("line %d", c.Line), Cause: ErrRaggedRow,
					Detail: fmt.Sprintf("the header has %d columns; this row has a value in column %d", b.width, c.Col+1)}
			}
			continue
		}
		b.col(c.Col)
	}
	if cells := int64(b.rows+1) * int64(len(b.cols)); cells > maxTableCells {
		return &Error{Cell: fmt.Sprintf("row %d", num), Cause: ErrTooManyCells,
			Detail: fmt.Sprintf("the data reach %d rows of %d columns, more than the %d cells Slopewise holds in memory", b.rows+1, len(b.cols), maxTableCells)}
	}
	if b.keepRows {
		b.t.SourceRows = append(b.t.SourceRows, num)
	}
	row := b.rows
	b.rows++
	for k := range cells {
		c := &cells[k]
		if b.fixedWidth && c.Col >= b.width {
			continue
		}
		b.col(c.Col).add(row, c, b.decimalComma)
	}
	return nil
}

// maxTextColumns bounds the columns of a text file. A sheet holds 16,384
// columns (maxColumns); a text file may hold more, and the columns a
// model uses can still be read from it, up to four times as many.
const maxTextColumns = 4 * maxColumns

// checkWidth refuses a row with a value past maxTextColumns (cells come
// in column order).
func checkWidth(num int, cells []rawCell) error {
	if n := len(cells); n > 0 && cells[n-1].Col >= maxTextColumns {
		where := fmt.Sprintf("row %d", num)
		if cells[n-1].Line > 0 {
			where = fmt.Sprintf("line %d", cells[n-1].Line)
		}
		return &Error{Cell: where, Cause: ErrTooManyColumns, Detail: fmt.Sprintf("the row has values in more than %d columns, the most Slopewise reads from a text file", maxTextColumns)}
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
func (b *tableBuilder) sortedIndexes() []int {
	if len(b.cached) != len(b.cols) {
		b.cached = b.cached[:0]
		for i := range b.cols {
			b.cached = append(b.cached, i)
		}
		sort.Ints(b.cached)
		b.cachedAdders = b.cachedAdders[:0]
		for _, i := range b.cached {
			b.cachedAdders = append(b.cachedAdders, b.cols[i])
		}
	}
	return b.cached
}

// columnNames returns the columns' indexes in order and their names,
// noting renamed columns in the table.
func (b *tableBuilder) columnNames() ([]int, []string) {
	t := b.t
	idx := b.sortedIndexes()
	header := make([]string, len(idx))
	for i, ci := range idx {
		header[i] = b.header[ci]
	}
	names, notes := nameColumns(header, idx, t.Sheet, t.HeaderRow)
	t.Notes = append(t.Notes, notes...)
	return idx, names
}

func (b *tableBuilder) finish() {
	t := b.t
	b.filter.notes(t)
	idx, names := b.columnNames()
	if b.blankRows > 0 {
		t.Notes = append(t.Notes, Note{Sheet: t.Sheet, Text: fmt.Sprintf("%d entirely blank row(s) were left out, the first being row %d", b.blankRows, b.firstBlank)})
	}
	for i, ci := range idx {
		cb := b.cols[ci].(*colBuilder)
		cb.pad(b.rows)
		col := &Column{Name: names[i], Letter: columnLetter(ci), Index: ci}
		cb.finish(col)
		if col.Kind == Empty && b.header[ci] == "" && col.MissingCount[Blank] == len(col.Missing) {
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

// detectHeader finds the header row among the first rows: the first row,
// at least half as wide as the widest, whose cells are mostly text and
// above rows holding more numbers than it does. A table of text only
// takes its first wide row. It returns -1 when no row qualifies.
func detectHeader(rows []bufRow) int {
	width := 0
	for _, r := range rows {
		width = max(width, nonBlank(r.cells))
	}
	firstWide := -1
	for i, r := range rows {
		n := nonBlank(r.cells)
		if n == 0 || n*2 < width {
			continue
		}
		if firstWide < 0 {
			firstWide = i
		}
		text, num := shares(r.cells)
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
			_, nb := shares(b.cells)
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

func nonBlank(cells []rawCell) int {
	n := 0
	for _, c := range cells {
		if c.Type != cellText || trimSpace(c.Text) != "" {
			n++
		}
	}
	return n
}

// shares returns the fractions of a row's non-blank cells that are text
// and that are numbers (stored, or written as text).
func shares(cells []rawCell) (text, num float64) {
	var n, nt, nn int
	for _, c := range cells {
		switch c.Type {
		case cellNumber, cellBool:
			n++
			nn++
		case cellText:
			s := trimSpace(c.Text)
			if s == "" {
				continue
			}
			n++
			if classifyText(s) != Present {
				continue
			}
			if _, ok := parseNumber(s, false); ok {
				nn++
			} else if _, ok := parseNumber(s, true); ok {
				nn++
			} else if _, ok := parseDate(s); ok {
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
func scannedText(src rowSource) bool {
	x, ok := src.(textRows)
	return ok && x.TextRows()
}

// textRows is a source of a text file's rows: TextRows says whether the
// cells' texts live only until the next row (the scanner's) or are kept.
type textRows interface {
	TextRows() (transient bool)
}

// keptCells copies a row's cells so that they outlive the next call of
// Next, with the texts too when the scanner handed them out.
func keptCells(src rowSource, cells []rawCell) []rawCell {
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
	maxRows      = 1 << 20
	maxColumns   = 1 << 14
	maxCellChars = 32767
)
