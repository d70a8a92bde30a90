package report

// Drawing helpers the charts share: grid and zero lines, dots, swatches
// for the legends, ticks, ranges and wrapped text.

import (
	"image/color"
	"math"
	"strconv"
	"strings"

	"golang.org/x/text/language"
	"golang.org/x/text/message"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// gridLines draws light lines at the ticks of x (vertical) and y
// (horizontal); either may be nil.
type gridLines struct{ x, y plot.Ticker }

func (g gridLines) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	sty := draw.LineStyle{Color: gridColor, Width: 0.8}
	if g.x != nil {
		for _, t := range g.x.Ticks(p.X.Min, p.X.Max) {
			if x := tx(t.Value); c.ContainsX(x) {
				c.StrokeLine2(sty, x, c.Min.Y, x, c.Max.Y)
			}
		}
	}
	if g.y != nil {
		for _, t := range g.y.Ticks(p.Y.Min, p.Y.Max) {
			if y := ty(t.Value); c.ContainsY(y) {
				c.StrokeLine2(sty, c.Min.X, y, c.Max.X, y)
			}
		}
	}
}

// zeroLine draws the line of no effect, darker than the grid.
type zeroLine struct{ vertical bool }

func (z zeroLine) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	sty := draw.LineStyle{Color: zeroColor, Width: 1.6}
	if z.vertical {
		if x := tx(0); c.ContainsX(x) {
			c.StrokeLine2(sty, x, c.Min.Y, x, c.Max.Y)
		}
		return
	}
	if y := ty(0); c.ContainsY(y) {
		c.StrokeLine2(sty, c.Min.X, y, c.Max.X, y)
	}
}

// dot draws an estimate: a filled dot with a white rim, or, hollow, a
// white dot with a coloured rim.
func dot(c *draw.Canvas, at vg.Point, r vg.Length, hollow bool) {
	if !c.Contains(at) {
		return
	}
	circle := func(r vg.Length) vg.Path {
		var path vg.Path
		path.Move(vg.Point{X: at.X + r, Y: at.Y})
		path.Arc(at, r, 0, 2*math.Pi)
		path.Close()
		return path
	}
	if hollow {
		c.SetColor(hollowColor)
		c.Fill(circle(r))
		c.SetLineStyle(draw.LineStyle{Color: effectColor, Width: 2})
		c.Stroke(circle(r - 1))
		return
	}
	c.SetColor(color.White)
	c.Fill(circle(r + 1.5))
	c.SetColor(effectColor)
	c.Fill(circle(r))
}

func fillRect(c *draw.Canvas, col color.Color, x0, y0, x1, y1 vg.Length) {
	c.FillPolygon(col, []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
}

// Legend swatches.

func swatchWhisker(hollow bool) func(*draw.Canvas, vg.Rectangle) {
	return func(c *draw.Canvas, r vg.Rectangle) {
		mid := vg.Point{X: (r.Min.X + r.Max.X) / 2, Y: (r.Min.Y + r.Max.Y) / 2}
		if !hollow {
			c.StrokeLine2(draw.LineStyle{Color: effectColor, Width: 2.5}, r.Min.X, mid.Y, r.Max.X, mid.Y)
		}
		dot(c, mid, 5, hollow)
	}
}

func swatchBand(c *draw.Canvas, r vg.Rectangle) {
	fillRect(c, bandColor, r.Min.X, r.Min.Y, r.Max.X, r.Max.Y)
	mid := (r.Min.Y + r.Max.Y) / 2
	c.StrokeLine2(draw.LineStyle{Color: effectColor, Width: 2.5}, r.Min.X, mid, r.Max.X, mid)
}

func swatchRegion(c *draw.Canvas, r vg.Rectangle) {
	fillRect(c, regionColor, r.Min.X, r.Min.Y, r.Max.X, r.Max.Y)
	sty := draw.LineStyle{Color: boundColor, Width: 1.2, Dashes: []vg.Length{3, 2}}
	c.StrokeLine2(sty, r.Min.X, r.Min.Y, r.Min.X, r.Max.Y)
	c.StrokeLine2(sty, r.Max.X, r.Min.Y, r.Max.X, r.Max.Y)
}

// swatchNone is an empty box: no stretch is shaded.
func swatchNone(c *draw.Canvas, r vg.Rectangle) {
	c.SetLineStyle(draw.LineStyle{Color: mutedColor, Width: 0.8})
	var box vg.Path
	box.Move(r.Min)
	box.Line(vg.Point{X: r.Max.X, Y: r.Min.Y})
	box.Line(r.Max)
	box.Line(vg.Point{X: r.Min.X, Y: r.Max.Y})
	box.Close()
	c.Stroke(box)
}

func swatchDot(hollow bool) func(*draw.Canvas, vg.Rectangle) {
	return func(c *draw.Canvas, r vg.Rectangle) {
		dot(c, vg.Point{X: (r.Min.X + r.Max.X) / 2, Y: (r.Min.Y + r.Max.Y) / 2}, 5, hollow)
	}
}

// axisTicks places labelled ticks at round numbers, about n of them, and
// writes the tick at zero as zero says when it is not empty. When room is
// set, it takes fewer ticks until their labels, written in style, fit side
// by side in that width.
type axisTicks struct {
	n     int
	zero  string
	style text.Style
	room  vg.Length
}

func (t axisTicks) Ticks(lo, hi float64) []plot.Tick {
	for n := t.n; ; n-- {
		vals, step := roundSteps(lo, hi, n)
		ticks := make([]plot.Tick, len(vals))
		var used vg.Length
		for i, v := range vals {
			ticks[i] = plot.Tick{Value: v, Label: tickNumber(v, step, vals)}
			if v == 0 && t.zero != "" {
				ticks[i].Label = t.zero
			}
			if t.room > 0 {
				used += t.style.Width(ticks[i].Label) + 12
			}
		}
		if used <= t.room || n <= 2 {
			return ticks
		}
	}
}

// roundSteps returns the multiples of a round step (1, 2, 2.5 or 5 times a
// power of ten) inside [lo, hi], about n of them. Zero is among them
// whenever it lies inside.
func roundSteps(lo, hi float64, n int) (vals []float64, step float64) {
	if !(hi > lo) || !finite(hi-lo) || n < 1 {
		return nil, 0
	}
	raw := (hi - lo) / float64(n)
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step = 10 * mag
	for _, f := range []float64{1, 2, 2.5, 5} {
		if f*mag >= raw {
			step = f * mag
			break
		}
	}
	first, last := math.Ceil(lo/step), math.Floor(hi/step)
	if !(last >= first) || last-first > 4*float64(n)+4 {
		return nil, 0
	}
	for k := first; k <= last; k++ {
		v := k * step
		if k == 0 {
			v = 0 // never −0
		}
		vals = append(vals, v)
	}
	return vals, step
}

// tickNumber writes a tick value with as many decimals as the step needs,
// thousands grouped and a true minus sign; from a million on, in millions,
// billions or trillions; far from 1 it falls back to scientific notation.
// all are the values labelled together, which share one unit.
func tickNumber(v, step float64, all []float64) string {
	largest := 0.0
	for _, a := range all {
		largest = math.Max(largest, math.Abs(a))
	}
	unit, word := 1.0, ""
	for _, u := range []struct {
		size float64
		word string
	}{{1e12, " trillion"}, {1e9, " billion"}, {1e6, " million"}} {
		if largest >= u.size {
			unit, word = u.size, u.word
			break
		}
	}
	decimals := -1
	for d := 0; d <= 8; d++ {
		s := step / unit * math.Pow10(d)
		if r := math.Round(s); r >= 1 && math.Abs(s-r) < 1e-6*s {
			decimals = d
			break
		}
	}
	var s string
	switch {
	case decimals < 0 || largest >= 1e15:
		s = strconv.FormatFloat(v, 'g', 3, 64)
	case v == 0:
		s = "0"
	default:
		s = message.NewPrinter(language.English).Sprintf("%.*f", decimals, v/unit) + word
	}
	if rest, ok := strings.CutPrefix(s, "-"); ok {
		return "\u2212" + rest
	}
	return s
}

// paddedRange returns the smallest and largest finite value of xs, widened
// by share of their distance on each side, or by one each side when they
// are equal.
func paddedRange(xs []float64, share float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range xs {
		if finite(x) {
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	switch {
	case lo > hi:
		return -1, 1
	case hi-lo <= 1e-12*math.Max(math.Abs(lo), math.Abs(hi)):
		d := math.Max(math.Abs(lo)*0.05, 1)
		return lo - d, hi + d
	}
	d := (hi - lo) * share
	return lo - d, hi + d
}

// wrapText breaks s into lines no wider than width where it can.
func wrapText(sty text.Style, s string, width vg.Length) string {
	var lines []string
	cur := ""
	for _, w := range strings.Fields(s) {
		try := w
		if cur != "" {
			try = cur + " " + w
		}
		if cur != "" && sty.Width(try) > width {
			lines = append(lines, cur)
			try = w
		}
		cur = try
	}
	if cur != "" {
		lines = append(lines, cur)
	}
	return strings.Join(lines, "\n")
}

// shorten cuts s to at most n characters, ending in an ellipsis when cut.
func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
