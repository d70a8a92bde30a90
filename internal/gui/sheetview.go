package gui

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"slopewise/internal/report"
)

// sheetView shows a results sheet block by block, the same grid the
// workbook receives, so the screen and the file never disagree. With keys,
// only the blocks of those keys, in the sheet's order; without, all blocks
// and the settings.
func sheetView(s *report.Sheet, keys ...string) fyne.CanvasObject {
	blocks := s.Blocks
	if len(keys) > 0 {
		blocks = nil
		for _, k := range keys {
			for _, b := range s.Blocks {
				if b.Key == k {
					blocks = append(blocks, b)
				}
			}
		}
	}
	box := container.NewVBox()
	for _, b := range blocks {
		if b.Title != "" {
			box.Add(subheading(b.Title))
		}
		if grid := blockGrid(b.Rows); grid != nil {
			box.Add(grid)
		}
		if b.Image != nil && len(b.Image.PNG) > 0 {
			img := canvas.NewImageFromReader(bytes.NewReader(b.Image.PNG), "chart.png")
			img.FillMode = canvas.ImageFillContain
			// As tall as the picture drawn 820 pixels wide; narrower
			// windows show it smaller (contained), so the page never
			// needs to be wider than the window.
			w := float32(min(b.Image.Width, 820))
			box.Add(container.New(fixedHeight(w*float32(b.Image.Height)/float32(max(b.Image.Width, 1))), img))
		}
	}
	if len(s.Settings) > 0 && len(keys) == 0 {
		box.Add(subheading("Settings of this run"))
		var rows [][]report.Cell
		for _, st := range s.Settings {
			rows = append(rows, []report.Cell{report.HeadingCell(st.Label), report.TextCell(st.Value)})
		}
		box.Add(blockGrid(rows))
	}
	page := container.NewVScroll(box)
	givePage(box, page)
	return page
}

// sideScroll slides a table wider than the page sideways, and gives the
// page the wheel's turns up and down: over a table the page scrolls on,
// and the table slides only when scrolled sideways (a trackpad, a tilting
// wheel, or Shift with the wheel where the system sends that sideways).
// Fyne's own sideways scroller turns the wheel's vertical turns into
// sideways ones, so the page stuck over every wide table.
type sideScroll struct {
	container.Scroll
	page *container.Scroll
}

func newSideScroll(content fyne.CanvasObject) *sideScroll {
	s := &sideScroll{}
	s.Direction = container.ScrollHorizontalOnly
	s.Content = content
	s.ExtendBaseWidget(s)
	return s
}

func (s *sideScroll) Scrolled(ev *fyne.ScrollEvent) {
	if ev.Scrolled.DX == 0 && s.page != nil {
		s.page.Scrolled(ev)
		return
	}
	s.Scroll.Scrolled(&fyne.ScrollEvent{PointEvent: ev.PointEvent, Scrolled: fyne.Delta{DX: ev.Scrolled.DX}})
}

// givePage tells every sideways scroller under o which page it is on.
func givePage(o fyne.CanvasObject, page *container.Scroll) {
	switch v := o.(type) {
	case *sideScroll:
		v.page = page
	case *fyne.Container:
		for _, c := range v.Objects {
			givePage(c, page)
		}
	}
}

// blockGrid lays out a block's rows: paragraphs across the width, label
// and value pairs as a form, wider rows as an aligned grid.
func blockGrid(rows [][]report.Cell) fyne.CanvasObject {
	if len(rows) == 0 {
		return nil
	}
	width := 0
	for _, r := range rows {
		if len(r) == 1 && r[0].Kind == report.Paragraph {
			continue
		}
		width = max(width, len(r))
	}
	if width <= 2 {
		return pairs(rows)
	}
	if len(rows) > lazyRows {
		return lazyGrid(rows, width)
	}
	// Runs of table rows between paragraphs: each run's first column (the
	// labels) stays in place while the other columns slide sideways, so a
	// row's label is in sight however far a wide table is slid.
	out := container.NewVBox()
	var run [][]report.Cell
	flush := func() {
		if len(run) > 0 {
			out.Add(tableRun(run, width))
			run = nil
		}
	}
	for _, r := range rows {
		if len(r) == 1 && r[0].Kind == report.Paragraph {
			flush()
			out.Add(paragraph(r[0].Text))
			continue
		}
		run = append(run, r)
	}
	flush()
	return out
}

// tableRun lays out table rows: the labels in a column of their own, the
// other columns beside them in a sideways scroller (sideScroll); each row
// as tall as the taller of its two halves (rowPair).
func tableRun(rows [][]report.Cell, width int) fyne.CanvasObject {
	pairs := &rowPairs{}
	// Columns at least as wide as the longest word of a heading, so that
	// no heading breaks inside a word ("Holm-adju / sted").
	unit := float32(minColumn)
	for _, r := range rows {
		for c := 1; c < len(r); c++ {
			if r[c].Kind == report.Heading {
				for _, word := range strings.Fields(r[c].Text) {
					unit = max(unit, fyne.MeasureText(word, theme.TextSize(), fyne.TextStyle{Bold: true}).Width+2*theme.InnerPadding())
				}
			}
		}
	}
	cols := &columns{n: width - 1, first: 1, unit: unit}
	labelWidth := float32(2 * minColumn)
	for _, r := range rows {
		var first report.Cell
		if len(r) > 0 {
			first = r[0]
		}
		label := cellWidget(first, false)
		style := fyne.TextStyle{Bold: first.Kind == report.Heading}
		labelWidth = max(labelWidth, min(fyne.MeasureText(cellString(first), theme.TextSize(), style).Width+2*theme.InnerPadding(), maxLabel))
		rest := container.New(cols)
		for c := 1; c < width; c++ {
			var cell report.Cell
			if c < len(r) {
				cell = r[c]
			}
			w := cellWidget(cell, false)
			if l, ok := w.(*widget.Label); ok && cell.Kind == report.Heading && numericColumn(rows, c) {
				l.Alignment = fyne.TextAlignTrailing // over its numbers
			}
			rest.Add(w)
		}
		pairs.left = append(pairs.left, label)
		pairs.right = append(pairs.right, rest)
	}
	left := container.New(&rowPair{p: pairs, left: true, width: labelWidth}, pairs.left...)
	right := container.New(&rowPair{p: pairs}, pairs.right...)
	return container.NewBorder(nil, nil, left, nil, newSideScroll(right))
}

// numericColumn reports a column of mostly numbers (p-values and
// percentages too), whose heading stands right-aligned over them.
func numericColumn(rows [][]report.Cell, c int) bool {
	nums, cells := 0, 0
	for _, r := range rows {
		if c >= len(r) || r[c].Kind == report.Heading || (r[c].Kind == report.Text && r[c].Text == "") {
			continue
		}
		cells++
		switch r[c].Kind {
		case report.Number, report.Percent, report.PValue:
			nums++
		}
	}
	return cells > 0 && 2*nums > cells
}

// maxLabel is the widest the labels' column gets, in pixels.
const maxLabel = 320

// rowPairs are a table run's rows, split into their labels and the rest.
type rowPairs struct{ left, right []fyne.CanvasObject }

// height is row i's height: the taller of its two halves.
func (p *rowPairs) height(i int) float32 {
	return max(p.left[i].MinSize().Height, p.right[i].MinSize().Height)
}

// rowPair lays out one half of a table run, row under row, each row as
// tall as the pair needs; the labels' half at its fixed width.
type rowPair struct {
	p     *rowPairs
	left  bool
	width float32
}

func (l *rowPair) MinSize(objects []fyne.CanvasObject) fyne.Size {
	w, h := l.width, float32(0)
	for i, o := range objects {
		if !l.left {
			w = max(w, o.MinSize().Width)
		}
		h += l.p.height(i)
		if i > 0 {
			h += theme.Padding()
		}
	}
	return fyne.NewSize(w, h)
}

func (l *rowPair) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	y := float32(0)
	for i, o := range objects {
		h := l.p.height(i)
		o.Move(fyne.NewPos(0, y))
		o.Resize(fyne.NewSize(size.Width, h))
		y += h + theme.Padding()
	}
}

// minColumn is the narrowest a table column gets, in pixels: room for a
// word such as "Untreated" in bold.
const minColumn = 92

// lazyRows is the most rows a table is laid out with a widget a cell; a
// longer one (the differences of a moderator with many groups: 11,175
// pairs for 150 groups) is a table widget that makes only the cells in
// sight, so the window's work does not grow with the data.
const lazyRows = 60

// lazyGrid shows a long table in a region of its own, about twenty rows
// high: its first row (the headings) and first column (the labels) stay
// in place as it scrolls, and only the cells in sight are made.
func lazyGrid(rows [][]report.Cell, width int) fyne.CanvasObject {
	// Paragraph rows (notes between tables) have no cells: shown as the
	// text in the first column.
	cell := func(r, c int) report.Cell {
		if c < len(rows[r]) {
			return rows[r][c]
		}
		return report.Cell{}
	}
	t := widget.NewTable(
		func() (int, int) { return len(rows), width },
		func() fyne.CanvasObject {
			l := widget.NewLabel("")
			l.Truncation = fyne.TextTruncateEllipsis
			return l
		},
		func(id widget.TableCellID, o fyne.CanvasObject) {
			l := o.(*widget.Label)
			c := cell(id.Row, id.Col)
			l.Text = cellString(c)
			l.TextStyle.Bold = c.Kind == report.Heading || id.Row == 0
			l.Alignment = fyne.TextAlignLeading
			switch c.Kind {
			case report.Number, report.Percent, report.PValue:
				l.Alignment = fyne.TextAlignTrailing
			}
			l.Refresh()
		})
	t.StickyRowCount, t.StickyColumnCount = 1, 1
	t.SetColumnWidth(0, 2*minColumn+60)
	for c := 1; c < width; c++ {
		t.SetColumnWidth(c, minColumn+28)
	}
	note := widget.NewLabel(fmt.Sprintf("%s rows: the table scrolls on its own, its headings and first column staying in place.", thousands(len(rows)-1)))
	note.Importance = widget.LowImportance
	return container.NewBorder(note, nil, nil, nil, container.New(fixedHeight(20*38), t))
}

// fixedHeight lays out one object at the width it is given and a height
// of its own; it asks for little width, so a wide table scrolls sideways
// within the page instead of widening it.
type fixedHeight float32

func (h fixedHeight) MinSize([]fyne.CanvasObject) fyne.Size {
	return fyne.NewSize(3*minColumn, float32(h))
}

func (h fixedHeight) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	for _, o := range objects {
		o.Move(fyne.NewPos(0, 0))
		o.Resize(size)
	}
}

// thousands writes n as the notes write counts (report.Count).
func thousands(n int) string { return report.Count(n) }

// count writes n things: "1 row", "2 rows", "500,000 rows".
func count(n int, thing string) string {
	if n == 1 {
		return "1 " + thing
	}
	return thousands(n) + " " + thing + "s"
}

// columns lays out one table row: the first column `first` times as wide
// as the others, every row of a table sharing the same proportions so the
// columns line up, and each row only as tall as its own cells.
type columns struct {
	n     int
	first float32
	// unit is the narrowest a column gets; minColumn when zero.
	unit float32
}

func (c *columns) widths(total float32) []float32 {
	unit := total / (c.first + float32(c.n-1))
	w := make([]float32, c.n)
	for i := range w {
		w[i] = unit
	}
	w[0] = unit * c.first
	return w
}

func (c *columns) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	x := float32(0)
	for i, o := range objects {
		w := c.widths(size.Width)[i]
		o.Move(fyne.NewPos(x, 0))
		o.Resize(fyne.NewSize(w, size.Height))
		x += w
	}
}

func (c *columns) MinSize(objects []fyne.CanvasObject) fyne.Size {
	h := float32(0)
	for _, o := range objects {
		h = max(h, o.MinSize().Height)
	}
	unit := c.unit
	if unit == 0 {
		unit = minColumn
	}
	return fyne.NewSize((c.first+float32(c.n-1))*unit, h)
}

// pairs shows label and value rows as a form: the labels in a column of
// their own width, the values wrapping beside them.
func pairs(rows [][]report.Cell) fyne.CanvasObject {
	f := widget.NewForm()
	out := container.NewVBox()
	for _, r := range rows {
		if len(r) == 1 && r[0].Kind == report.Paragraph {
			out.Add(paragraph(r[0].Text))
			continue
		}
		label, value := "", report.Cell{}
		if len(r) > 0 {
			label = cellString(r[0])
		}
		if len(r) > 1 {
			value = r[1]
		}
		v := widget.NewLabel(cellString(value))
		v.Wrapping = fyne.TextWrapWord
		if value.Kind == report.Number {
			v.Wrapping = fyne.TextWrapOff
		}
		f.Append(label, v)
	}
	if len(f.Items) > 0 {
		out.Objects = append([]fyne.CanvasObject{f}, out.Objects...)
	}
	return out
}

// paragraph is wrapped text across the width.
func paragraph(text string) *widget.Label {
	l := widget.NewLabel(text)
	l.Wrapping = fyne.TextWrapWord
	return l
}

// cellWidget shows one cell as its display format says.
func cellWidget(c report.Cell, last bool) fyne.CanvasObject {
	l := widget.NewLabel(cellString(c))
	switch c.Kind {
	case report.Heading:
		l.TextStyle.Bold = true
		l.Wrapping = fyne.TextWrapWord
	case report.Number, report.Percent, report.PValue:
		l.Alignment = fyne.TextAlignTrailing
	default:
		if last {
			l.Wrapping = fyne.TextWrapWord
		} else {
			l.Truncation = fyne.TextTruncateEllipsis
		}
	}
	return l
}

// cellString writes a cell the way its spreadsheet display format shows it.
func cellString(c report.Cell) string {
	switch c.Kind {
	case report.Text, report.Heading, report.Paragraph:
		return c.Text
	case report.PValue:
		if c.Value < 0.001 {
			return "<0.001"
		}
		return strconv.FormatFloat(c.Value, 'f', 3, 64)
	case report.Percent:
		return strconv.FormatFloat(100*c.Value, 'f', c.Decimals, 64) + "%"
	case report.Number:
		return formatNumber(c.Value, c.Format)
	}
	return ""
}

// formatNumber applies the spreadsheet formats the report uses: "0",
// "0.000", "#,##0", "#,##0.00", "0.000E+00"; anything else is general.
func formatNumber(v float64, format string) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	if strings.Contains(format, "E+") {
		return strconv.FormatFloat(v, 'E', strings.Count(format, "0")-3, 64)
	}
	if format == "" {
		return strconv.FormatFloat(v, 'g', 10, 64)
	}
	decimals := 0
	if i := strings.IndexByte(format, '.'); i >= 0 {
		decimals = strings.Count(format[i:], "0")
	}
	s := strconv.FormatFloat(v, 'f', decimals, 64)
	if !strings.Contains(format, ",") {
		return s
	}
	sign := ""
	if strings.HasPrefix(s, "-") {
		sign, s = "-", s[1:]
	}
	intPart, frac, _ := strings.Cut(s, ".")
	var b strings.Builder
	for i, ch := range intPart {
		if i > 0 && (len(intPart)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(ch)
	}
	if frac != "" {
		return sign + b.String() + "." + frac
	}
	return sign + b.String()
}
