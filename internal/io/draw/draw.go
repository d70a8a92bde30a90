package draw

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/report"

	"slopewise/internal/io/table"
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
}

type placedImage struct {
	row int
	img *report.Image
}

// Character widths of the columns: at least minWidth, at most maxWidth
// (in the spreadsheet's unit, the width of a digit). Text that ends its
// row spills into the empty cells to its right, so it widens its column
// only up to spillWidth.
const (
	minWidth   = 9
	maxWidth   = 60
	spillWidth = 24
	lineHight  = 15 // points per line of 11-point text
	rowPixels  = 20 // pixels a default row takes on screen
)

// LayOut places the blocks top to bottom, a blank row between blocks,
// then the settings block and the spec row.
func LayOut(s *report.Sheet) *layout {
	l := &layout{heights: map[int]float64{}}
	r := 0
	widen := func(col int, w float64) {
		for len(l.widths) <= col {
			l.widths = append(l.widths, minWidth)
		}
		l.widths[col] = math.Min(maxWidth, math.Max(l.widths[col], w))
	}
	var paragraphs []placed
	for bi, b := range s.Blocks {
		if bi > 0 {
			r++
		}
		if b.Title != "" {
			l.cells = append(l.cells, placed{row: r, col: 0, cell: report.Cell{Kind: report.Heading, Text: b.Title}, style: styleTitle})
			r++
		}
		for _, cells := range b.Rows {
			for c, cell := range cells {
				p := placed{row: r, col: c, cell: cell}
				switch cell.Kind {
				case report.Paragraph:
					span := max(cell.Span, 1)
					if span > 1 {
						l.merges = append(l.merges, [4]int{r, c, r, c + span - 1})
					}
					paragraphs = append(paragraphs, p)
				case report.Text, report.Heading:
					w := float64(utf8.RuneCountInString(cell.Text)) + 2
					if c == len(cells)-1 {
						w = math.Min(w, spillWidth)
					}
					widen(c, w)
				case report.Number, report.Percent, report.PValue:
					widen(c, 12)
				}
				l.cells = append(l.cells, p)
			}
			r++
		}
		if b.Image != nil && len(b.Image.PNG) > 0 {
			l.images = append(l.images, placedImage{row: r, img: b.Image})
			r += (b.Image.Height+rowPixels-1)/rowPixels + 1
		}
	}
	if len(s.Settings) > 0 {
		if len(s.Blocks) > 0 {
			r++
		}
		l.cells = append(l.cells, placed{row: r, col: 0, cell: report.Cell{Kind: report.Heading, Text: "Settings of this run"}, style: styleTitle})
		r++
		for _, st := range s.Settings {
			l.cells = append(l.cells,
				placed{row: r, col: 0, cell: report.HeadingCell(st.Label)},
				placed{row: r, col: 1, cell: report.TextCell(st.Value)})
			widen(0, float64(utf8.RuneCountInString(st.Label))+2)
			widen(1, math.Min(spillWidth, float64(utf8.RuneCountInString(st.Value))+2))
			r++
		}
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
	if len(l.widths) == 0 {
		l.widths = []float64{minWidth}
	}
	// A paragraph's row grows to show its lines in the merged width.
	for _, p := range paragraphs {
		width := 0.0
		for c := p.col; c < p.col+max(p.cell.Span, 1); c++ {
			if c < len(l.widths) {
				width += l.widths[c]
			} else {
				width += minWidth
			}
		}
		lines := 0
		for _, line := range strings.Split(p.cell.Text, "\n") {
			lines += max(1, int(math.Ceil(float64(utf8.RuneCountInString(line))/math.Max(width*1.1, 1))))
		}
		l.heights[p.row] = math.Min(409, math.Max(l.heights[p.row], float64(lines)*lineHight+4))
	}
	return l
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
	numStyles
)

// pValueFormat shows three decimals, and "<0.001" below one in a
// thousand, while the cell keeps the exact value (a conditional number
// format, ECMA-376 Part 1, section 18.8.31).
const pValueFormat = `[<0.001]"<0.001";0.000`

type styles struct {
	f       *excelize.File
	ids     [numStyles]int
	numbers map[string]int
	percent map[int]int
}

func newStyles(f *excelize.File) (*styles, error) {
	s := &styles{f: f, numbers: map[string]int{}, percent: map[int]int{}}
	defs := map[int]*excelize.Style{
		styleTitle:     {Font: &excelize.Font{Bold: true, Size: 13}},
		styleHeading:   {Font: &excelize.Font{Bold: true}},
		styleText:      {Alignment: &excelize.Alignment{Vertical: "top"}},
		styleParagraph: {Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}},
		stylePValue:    {CustomNumFmt: ptr(pValueFormat)},
		styleSpec:      {Font: &excelize.Font{Size: 8, Color: "808080"}},
	}
	for slot, def := range defs {
		id, err := f.NewStyle(def)
		if err != nil {
			return nil, err
		}
		s.ids[slot] = id
	}
	return s, nil
}

func ptr[T any](v T) *T { return &v }

// forCell returns the style id a cell is drawn with.
func (s *styles) forCell(p placed) (int, error) {
	if p.style != styleNone {
		return s.ids[p.style], nil
	}
	switch p.cell.Kind {
	case report.Heading:
		return s.ids[styleHeading], nil
	case report.Paragraph:
		return s.ids[styleParagraph], nil
	case report.PValue:
		return s.ids[stylePValue], nil
	case report.Percent:
		d := min(max(p.cell.Decimals, 0), 10)
		if id, ok := s.percent[d]; ok {
			return id, nil
		}
		format := "0%"
		if d > 0 {
			format = "0." + strings.Repeat("0", d) + "%"
		}
		id, err := s.f.NewStyle(&excelize.Style{CustomNumFmt: &format})
		s.percent[d] = id
		return id, err
	case report.Number:
		if p.cell.Format == "" {
			return 0, nil
		}
		if id, ok := s.numbers[p.cell.Format]; ok {
			return id, nil
		}
		format := p.cell.Format
		id, err := s.f.NewStyle(&excelize.Style{CustomNumFmt: &format})
		s.numbers[p.cell.Format] = id
		return id, err
	}
	return s.ids[styleText], nil
}

// IsNumeric reports cells stored as numbers.
func IsNumeric(k report.Kind) bool {
	return k == report.Number || k == report.Percent || k == report.PValue
}

// notANumber is written in place of a number that is NaN or infinite,
// which a workbook cannot store.
const notANumber = "—"

// Cells writes the laid-out grid's cells into the new, empty sheet
// name of f. Text goes in as inline strings through the stream writer, so
// that the workbook's shared string table is not touched. What the stream
// writer cannot do is left to Finish, on the saved and re-opened
// file: excelize writes a flushed stream as it is and ignores later
// changes to that sheet (excelize v2.11.1 source, file.go writeToZip).
func Cells(f *excelize.File, name string, l *layout) error {
	st, err := newStyles(f)
	if err != nil {
		return err
	}
	sw, err := f.NewStreamWriter(name)
	if err != nil {
		return err
	}
	if err := sw.SetPanes(&excelize.Panes{Freeze: true, YSplit: 1, TopLeftCell: "A2", ActivePane: "bottomLeft",
		Selection: []excelize.Selection{{SQRef: "A2", ActiveCell: "A2", Pane: "bottomLeft"}}}); err != nil {
		return err
	}
	for c, w := range l.widths {
		if err := sw.SetColWidth(c+1, c+1, w); err != nil {
			return err
		}
	}
	byRow := make([][]placed, l.rows)
	for _, p := range l.cells {
		byRow[p.row] = append(byRow[p.row], p)
	}
	for r, cells := range byRow {
		if len(cells) == 0 {
			continue
		}
		width := 0
		for _, p := range cells {
			width = max(width, p.col+1)
		}
		values := make([]any, width)
		for _, p := range cells {
			style, err := st.forCell(p)
			if err != nil {
				return err
			}
			var v any = p.cell.Text
			if IsNumeric(p.cell.Kind) {
				if math.IsNaN(p.cell.Value) || math.IsInf(p.cell.Value, 0) {
					v = notANumber
				} else {
					v = p.cell.Value
				}
			}
			values[p.col] = excelize.Cell{StyleID: style, Value: v}
		}
		var opts []excelize.RowOpts
		if h, ok := l.heights[r]; ok {
			opts = append(opts, excelize.RowOpts{Height: h})
		}
		if err := sw.SetRow(cellName(r, 0), values, opts...); err != nil {
			return err
		}
	}
	for _, m := range l.merges {
		if err := sw.MergeCell(cellName(m[0], m[1]), cellName(m[2], m[3])); err != nil {
			return err
		}
	}
	return sw.Flush()
}

// Finish sets numbers with every digit (the stream writer keeps 15
// significant digits: excelize v2.11.1 source, cell.go formatCellFloat),
// adds the pictures, and sets the page to print one page wide.
func Finish(f *excelize.File, name string, l *layout) error {
	for _, p := range l.cells {
		v := p.cell.Value
		if !IsNumeric(p.cell.Kind) || math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		if err := f.SetCellFloat(name, cellName(p.row, p.col), v, decimalsOf(v), 64); err != nil {
			return err
		}
	}
	for i, im := range l.images {
		if err := f.AddPictureFromBytes(name, cellName(im.row, 0), &excelize.Picture{
			Extension: ".png",
			File:      im.img.PNG,
			Format:    &excelize.GraphicOptions{AltText: im.img.Title, Name: fmt.Sprintf("Slopewise chart %d", i+1), Positioning: "oneCell"},
		}); err != nil {
			return fmt.Errorf("adding the picture %q: %w", im.img.Title, err)
		}
	}
	lastCol := max(len(l.widths), 2) - 1
	if err := f.SetSheetProps(name, &excelize.SheetPropsOptions{FitToPage: ptr(true)}); err != nil {
		return err
	}
	if err := f.SetPageLayout(name, &excelize.PageLayoutOptions{FitToWidth: ptr(1), FitToHeight: ptr(0)}); err != nil {
		return err
	}
	printRows := l.rows
	if l.specRow > 0 {
		printRows = l.specRow // the spec row is for programs, not for paper
	}
	return f.SetDefinedName(&excelize.DefinedName{
		Name:     "_xlnm.Print_Area",
		RefersTo: fmt.Sprintf("'%s'!$A$1:$%s$%d", strings.ReplaceAll(name, "'", "''"), table.ColumnLetter(lastCol), max(printRows, 1)),
		Scope:    name,
	})
}

// decimalsOf is the number of decimals that writes v exactly in plain
// notation (the shortest form that reads back as the same float64).
func decimalsOf(v float64) int {
	s := strconv.FormatFloat(v, 'f', -1, 64)
	if i := strings.IndexByte(s, '.'); i >= 0 {
		return len(s) - i - 1
	}
	return 0
}

func cellName(row, col int) string {
	return table.ColumnLetter(col) + strconv.Itoa(row+1)
}
