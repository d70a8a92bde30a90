package draw

// Writing the laid-out grid into the sheet

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/report"

	"slopewise/internal/io/table"
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
		styleTitle: {Font: &excelize.Font{Bold: true, Size: 13}},
		// A block's title too long for one line.
		styleTitleWrapped: {Font: &excelize.Font{Bold: true, Size: 13}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}},
		styleHeading:      {Font: &excelize.Font{Bold: true}},
		styleText:         {Alignment: &excelize.Alignment{Vertical: "top"}},
		styleParagraph:    {Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}},
		stylePValue:       {CustomNumFmt: ptr(pValueFormat), Alignment: top},
		styleSpec:         {Font: &excelize.Font{Size: 8, Color: "808080"}},
		// The sheet's title, wrapped across the columns.
		styleSheetTitle: {Font: &excelize.Font{Bold: true, Size: 14}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}},
		// A table's column headings wrap in their column; over numbers
		// they stand right-aligned, as the numbers do.
		styleColumnHeading: {Font: &excelize.Font{Bold: true}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "bottom"}},
		styleNumberHeading: {Font: &excelize.Font{Bold: true}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "bottom", Horizontal: "right"}},
		// The label of a label–value row, and text that wraps.
		styleLabel:   {Font: &excelize.Font{Bold: true}, Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}},
		styleWrapped: {Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}},
	}
	// Bold and sized text in the workbook's own font: a font without a
	// name is drawn in whatever the reading program picks.
	family, err := f.GetDefaultFont()
	if err != nil {
		return nil, err
	}
	for slot, def := range defs {
		if def.Font != nil {
			def.Font.Family = family
		}
		id, err := f.NewStyle(def)
		if err != nil {
			return nil, err
		}
		s.ids[slot] = id
	}
	return s, nil
}

func ptr[T any](v T) *T { return &v }

// top aligns a number with the top line of the wrapped text beside it.
var top = &excelize.Alignment{Vertical: "top"}

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
		id, err := s.f.NewStyle(&excelize.Style{CustomNumFmt: &format, Alignment: top})
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
		id, err := s.f.NewStyle(&excelize.Style{CustomNumFmt: &format, Alignment: top})
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
// significant digits: excelize v2.11.1 source, cell.go formatCellFloat)
// and the formulas over them, adds the pictures, and sets up the printed
// page: portrait, one page wide, the title row on every page, breaks
// between blocks, and a footer with the workbook's name, the run's date
// and the page number.
func Finish(f *excelize.File, name string, l *layout) error {
	for _, p := range l.cells {
		v := p.cell.Value
		if !IsNumeric(p.cell.Kind) || math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		ref := cellName(p.row, p.col)
		if err := f.SetCellFloat(name, ref, v, decimalsOf(v), 64); err != nil {
			return err
		}
		if p.cell.Formula != "" {
			// The value stays as the formula's result; SetCellFormula marks
			// it as text, which save's numberFormulas undoes on the saved file.
			if err := f.SetCellFormula(name, ref, p.cell.Formula); err != nil {
				return err
			}
		}
	}
	for i, im := range l.images {
		if err := f.AddPictureFromBytes(name, cellName(im.row, 0), &excelize.Picture{
			Extension: ".png",
			File:      im.img.PNG,
			Format: &excelize.GraphicOptions{AltText: im.img.Title, Name: fmt.Sprintf("Slopewise chart %d", i+1), Positioning: "oneCell",
				ScaleX: im.scale, ScaleY: im.scale},
		}); err != nil {
			return fmt.Errorf("adding the picture %q: %w", im.img.Title, err)
		}
	}
	return pageSetup(f, name, l)
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
