package draw

import (
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"slopewise/internal/report"
)

// SpecMarker is the text in column A of the row that holds the run's
// machine-readable spec; the JSON follows in columns B, C, … in pieces of
// at most specChunk characters (a cell holds at most 32,767 characters:
// "Excel specifications and limits", common practice).
const SpecMarker = "slopewise-run-spec/v1"

const specChunk = 30000

// DefaultSheetName is the results sheet's name when the grid names none.
const DefaultSheetName = "Slopewise results"

// placed is one grid cell at its place in the sheet (0-based).
type placed struct {
	row, col int
	cell     report.Cell
	style    int
}

// layout is the grid laid out on sheet rows.
type layout struct {
	cells   []placed
	merges  [][4]int // row1, col1, row2, col2
	heights map[int]float64
	images  []placedImage
	widths  []float64
	rows    int
	specRow int
	// title is set when row 1 holds the sheet's title, which is then
	// printed at the top of every page.
	title bool
	// footer is the text printed at the foot of every page beside the
	// workbook's name and the page number.
	footer string
	// units are the rows [from, to) of each block and of the settings,
	// which a page should not split; breaks are the rows that start a new
	// printed page (page breaks before them).
	units  []unit
	breaks []int
	// refs places each block's grid rows on sheet rows, for formulas.
	refs map[string][]int
}

// unit is the rows [from, to) of a block; a table or a picture is kept
// whole on one page when it fits, while text may run on to the next.
type unit struct {
	from, to int
	keep     bool
}

type placedImage struct {
	row int
	img *report.Image
	// scale shrinks the picture to the width of the sheet's columns.
	scale float64
}

// Character widths of the columns (in the spreadsheet's unit, the width
// of a digit), set by the tables, not by sentences: at least minWidth; a
// table's text and the labels of label–value rows widen the first column
// up to firstWidth, other columns up to otherWidth, and wrap beyond; a
// heading widens its column only to its longest word, and wraps.
const (
	minWidth   = 7
	firstWidth = 26
	otherWidth = 12
	// headingWidth: a heading's longest word widens a column up to this
	// ("Untreated", "Difference"); a longer word breaks inside the cell.
	headingWidth = 11
	lineHight    = 15 // points a row of one line of 11-point text takes
	// wrapLine is the height of each line of wrapped 11-point text: the
	// default font's line is about 13.4 points (Carlito, with Calibri's
	// metrics: ascent and descent 1.22 em), with a little to spare.
	wrapLine  = 14
	rowPixels = 20 // pixels a default row takes on screen
)

// columnPoints is the printed width of a column of w characters: 7 pixels
// a character and 5 of padding at 96 pixels an inch (the default font's
// digit; ECMA-376 Part 1, 18.3.1.13, from memory).
func columnPoints(w float64) float64 { return (math.Trunc(w*7) + 5) * 0.75 }

// isTable reports a row of a table (three cells or more), whose cells set
// the widths of their columns; shorter rows are labels with values.
func isTable(cells []report.Cell) bool { return len(cells) >= 3 }

// columnWidths sets each column's width from the tables and the labels.
func columnWidths(s *report.Sheet) []float64 {
	var widths []float64
	widen := func(col int, w, most float64) {
		for len(widths) <= col {
			widths = append(widths, minWidth)
		}
		widths[col] = math.Max(widths[col], math.Min(w, most))
	}
	for _, b := range s.Blocks {
		for _, cells := range b.Rows {
			for c, cell := range cells {
				most := float64(otherWidth)
				if c == 0 {
					most = firstWidth
				}
				switch {
				case IsNumeric(cell.Kind):
					widen(c, float64(numberChars(cell))+2, 40)
				case cell.Kind == report.Heading && isTable(cells):
					widen(c, float64(longestWord(cell.Text))+2, min(most, headingWidth))
				case cell.Kind == report.Text && isTable(cells) && (c == 0 || c < len(cells)-1):
					// The last text of a row spills into the empty cells to
					// its right instead.
					widen(c, float64(utf8.RuneCountInString(cell.Text))+2, most)
				case (cell.Kind == report.Heading || cell.Kind == report.Text) && c == 0 && len(cells) == 2:
					widen(c, float64(utf8.RuneCountInString(cell.Text))+2, most)
				}
			}
		}
	}
	for _, st := range s.Settings {
		widen(0, float64(utf8.RuneCountInString(st.Label))+2, firstWidth)
	}
	for len(widths) < 2 {
		widths = append(widths, minWidth)
	}
	// A narrow sheet is widened to printWidthChars, the extra shared by
	// the columns after the first: printed one page wide at about 80%, the
	// text stays above 8 points while a page holds more, and sentences
	// wrap into fewer lines.
	total := 0.0
	for _, w := range widths {
		total += w
	}
	if extra := printWidthChars - total; extra > 0 && len(widths) > 1 {
		for c := 1; c < len(widths); c++ {
			widths[c] = math.Round(widths[c] + extra/float64(len(widths)-1))
		}
	}
	return widths
}

// numberChars is how many characters a number cell shows.
func numberChars(c report.Cell) int {
	switch c.Kind {
	case report.PValue:
		return 6
	case report.Percent:
		return len(strconv.FormatFloat(100*c.Value, 'f', max(c.Decimals, 0), 64)) + 1
	}
	f := c.Format
	switch {
	case math.IsNaN(c.Value) || math.IsInf(c.Value, 0):
		return 1
	case strings.Contains(f, "E+"):
		return 10
	case f == "":
		return min(len(strconv.FormatFloat(c.Value, 'g', -1, 64)), 11)
	}
	decimals := 0
	if i := strings.IndexByte(f, '.'); i >= 0 {
		decimals = strings.Count(f[i:], "0")
	}
	n := len(strconv.FormatFloat(c.Value, 'f', decimals, 64))
	if strings.Contains(f, ",") {
		n += int(math.Log10(math.Max(math.Abs(c.Value), 1))) / 3
	}
	return n
}

func longestWord(s string) int {
	n := 0
	for _, w := range strings.Fields(s) {
		n = max(n, utf8.RuneCountInString(w))
	}
	return n
}

// wrappedLines is how many lines text takes in a cell of width characters,
// wrapped at spaces: a character of text takes about 0.85 of a digit's
// width, a bold one about one (Carlito, Calibri's metrics, measured
// in LibreOffice's pages).
func wrappedLines(text string, width float64, bold bool) int {
	room := width * 1.2
	if bold {
		room = width * 0.95
	}
	room = math.Max(room-1, 1)
	lines := 0
	for _, para := range strings.Split(text, "\n") {
		lines++
		used := 0.0
		for _, w := range strings.Fields(para) {
			n := float64(utf8.RuneCountInString(w))
			switch {
			case used == 0:
				used = n
			case used+1+n <= room:
				used += 1 + n
			default:
				lines++
				used = n
			}
			for used > room { // a word longer than the line breaks anywhere
				lines++
				used -= room
			}
		}
	}
	return lines
}

// LayOut places the sheet's title, then the blocks top to bottom, a blank
// row between blocks, then the settings block and the spec row; it sets
// the row heights that wrapped text needs and the printed pages' breaks.
func LayOut(s *report.Sheet) *layout {
	l := &layout{heights: map[int]float64{}, refs: map[string][]int{}, footer: s.Footer}
	l.widths = columnWidths(s)
	last := len(l.widths) - 1
	spanWidth := func(from, to int) float64 {
		w := 0.0
		for c := from; c <= to; c++ {
			w += l.widths[c]
		}
		return w
	}
	grow := func(row int, lines int) {
		l.heights[row] = math.Min(409, math.Max(l.heights[row], math.Max(lineHight, float64(lines)*wrapLine+3)))
	}
	merged := func(r, c int, cell report.Cell, style int, bold bool) {
		if c < last {
			l.merges = append(l.merges, [4]int{r, c, r, last})
		}
		l.cells = append(l.cells, placed{row: r, col: c, cell: cell, style: style})
		grow(r, wrappedLines(cell.Text, spanWidth(c, last), bold))
	}
	r := 0
	if s.Title != "" {
		l.title = true
		merged(0, 0, report.HeadingCell(s.Title), styleSheetTitle, true)
		l.heights[0] *= 14.0 / 11
		r = 1
	}
	for bi, b := range s.Blocks {
		if bi > 0 || l.title {
			r++
		}
		from := r
		if b.Title != "" {
			l.cells = append(l.cells, placed{row: r, col: 0, cell: report.Cell{Kind: report.Heading, Text: b.Title}, style: styleTitle})
			l.heights[r] = titleHeight
			if lines := wrappedLines(b.Title, spanWidth(0, last)*11/13, true); lines > 1 {
				// A title longer than the page is wide wraps across it.
				l.merges = append(l.merges, [4]int{r, 0, r, last})
				l.cells[len(l.cells)-1].style = styleTitleWrapped
				l.heights[r] = float64(lines) * titleHeight
			}
			r++
		}
		keep := b.Image != nil
		var rowsAt []int
		for i, cells := range b.Rows {
			rowsAt = append(rowsAt, r)
			table := isTable(cells)
			keep = keep || table
			if len(cells) == 0 && i > 0 {
				// A blank row inside a block ends one of its tables: each is
				// kept whole on its own.
				l.units = append(l.units, unit{from, r + 1, keep})
				from, keep = r+1, false
			}
			for c, cell := range cells {
				if c > last {
					break
				}
				p := placed{row: r, col: c, cell: cell}
				switch {
				case cell.Kind == report.Paragraph:
					to := min(c+max(cell.Span, 1)-1, last)
					if to > c {
						l.merges = append(l.merges, [4]int{r, c, r, to})
					}
					grow(r, wrappedLines(cell.Text, spanWidth(c, to), false))
				case cell.Kind == report.Heading && table && spillsBelow(b.Rows, i, c):
					// Over text that spills to the right, the heading does too.
				case cell.Kind == report.Heading && table:
					p.style = styleColumnHeading
					if numericBelow(b.Rows, i, c) {
						p.style = styleNumberHeading
					}
					grow(r, wrappedLines(cell.Text, l.widths[c], true))
				case cell.Kind == report.Heading && len(cells) == 2 && c == 0:
					p.style = styleLabel
					grow(r, wrappedLines(cell.Text, l.widths[c], true))
				case cell.Kind == report.Text && len(cells) == 2 && c == 1:
					merged(r, c, cell, styleWrapped, false)
					continue
				case cell.Kind == report.Text && table && (c < len(cells)-1 || c == last):
					// Text wraps in its column, but the last of a row spills
					// into the empty cells to its right, if there are any.
					if float64(utf8.RuneCountInString(cell.Text))+1 > l.widths[c]*1.1 {
						p.style = styleWrapped
						grow(r, wrappedLines(cell.Text, l.widths[c], false))
					}
				}
				l.cells = append(l.cells, p)
			}
			r++
		}
		l.refs[b.Key] = rowsAt
		if b.Image != nil && len(b.Image.PNG) > 0 {
			im := placedImage{row: r, img: b.Image, scale: 1}
			if room := spanWidth(0, last)*7 + float64(5*len(l.widths)); float64(b.Image.Width) > room {
				im.scale = room / float64(b.Image.Width)
			}
			l.images = append(l.images, im)
			r += int(math.Ceil(float64(b.Image.Height)*im.scale/rowPixels)) + 1
		}
		l.units = append(l.units, unit{from, r, keep})
	}
	if len(s.Settings) > 0 {
		if len(s.Blocks) > 0 || l.title {
			r++
		}
		from := r
		l.cells = append(l.cells, placed{row: r, col: 0, cell: report.Cell{Kind: report.Heading, Text: "Settings of this run"}, style: styleTitle})
		l.heights[r] = titleHeight
		r++
		for _, st := range s.Settings {
			l.cells = append(l.cells, placed{row: r, col: 0, cell: report.HeadingCell(st.Label), style: styleLabel})
			grow(r, wrappedLines(st.Label, l.widths[0], true))
			merged(r, 1, report.TextCell(st.Value), styleWrapped, false)
			r++
		}
		l.units = append(l.units, unit{from, r, false})
	}
	if len(s.Spec) > 0 {
		r++
		l.specRow = r
		l.cells = append(l.cells, placed{row: r, col: 0, cell: report.TextCell(SpecMarker), style: styleSpec})
		spec := string(s.Spec)
		for c := 1; spec != ""; c++ {
			n := min(len(spec), specChunk)
			for n < len(spec) && !utf8.RuneStart(spec[n]) {
				n--
			}
			l.cells = append(l.cells, placed{row: r, col: c, cell: report.TextCell(spec[:n]), style: styleSpec})
			spec = spec[n:]
		}
		r++
	}
	l.rows = r
	l.resolveFormulas()
	l.breaks = l.pageBreaks()
	return l
}

// spillsBelow reports a heading over the last text of the rows below it,
// which spills into the empty cells to its right.
func spillsBelow(rows [][]report.Cell, i, c int) bool {
	if c != len(rows[i])-1 {
		return false
	}
	for _, below := range rows[i+1:] {
		if len(below) > 0 {
			return c == len(below)-1 && below[c].Kind == report.Text
		}
	}
	return false
}

// numericBelow reports a heading whose column holds numbers in the row
// below it, so that it is aligned with them.
func numericBelow(rows [][]report.Cell, i, c int) bool {
	for _, below := range rows[i+1:] {
		if c < len(below) {
			return IsNumeric(below[c].Kind)
		}
		if len(below) > 0 {
			return false
		}
	}
	return false
}

// resolveFormulas writes each formula's references to grid cells as the
// sheet's cell names; a formula whose cells are not in the sheet is
// dropped, and the cell keeps its value.
func (l *layout) resolveFormulas() {
	// The cells formulas refer to, and which of them hold numbers.
	at := map[[2]int]bool{}
	for _, p := range l.cells {
		for _, ref := range p.cell.Refs {
			if rows := l.refs[ref.Block]; ref.Row >= 0 && ref.Row < len(rows) {
				at[[2]int{rows[ref.Row], ref.Col}] = false
			}
		}
	}
	for _, p := range l.cells {
		if _, ok := at[[2]int{p.row, p.col}]; ok {
			at[[2]int{p.row, p.col}] = IsNumeric(p.cell.Kind)
		}
	}
	for i, p := range l.cells {
		c := p.cell
		if c.Formula == "" {
			continue
		}
		f := c.Formula
		ok := c.Kind == report.Number
		for n, ref := range c.Refs {
			rows := l.refs[ref.Block]
			if ref.Row < 0 || ref.Row >= len(rows) || !at[[2]int{rows[ref.Row], ref.Col}] {
				ok = false
				break
			}
			f = strings.ReplaceAll(f, "{"+strconv.Itoa(n)+"}", cellName(rows[ref.Row], ref.Col))
		}
		if !ok || strings.Contains(f, "{") {
			f = ""
		}
		l.cells[i].cell.Formula, l.cells[i].cell.Refs = f, nil
	}
}

// Style slots, filled with excelize style ids by newStyles.
const (
	styleNone = iota
	styleTitle
	styleHeading
	styleText
	styleParagraph
	stylePercent
	stylePValue
	styleSpec
	styleSheetTitle
	styleColumnHeading
	styleNumberHeading
	styleLabel
	styleWrapped
	styleTitleWrapped
	numStyles
)

// HasFormulas reports whether the laid-out sheet holds formula cells.
func (l *layout) HasFormulas() bool {
	for _, p := range l.cells {
		if p.cell.Formula != "" {
			return true
		}
	}
	return false
}
