package report

// The chart of a moderator of groups (drawGroups): one row per group, its
// effect and interval, on a shared axis.

import (
	"fmt"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"slopewise/internal/estimate"
)

// groupRow is one group of a binary or categorical moderator as drawn.
type groupRow struct {
	label         string
	est, lo, hi   float64
	reference, ok bool
}

// drawGroups draws one row a group, top to bottom in the result's order.
func drawGroups(dc draw.Canvas, res *estimate.Result, opt ChartOptions, lk look) error {
	words := wordsFor(res, opt)
	rows := make([]groupRow, len(res.Effects))
	span := []float64{0}
	anyRef, anyOK := false, false
	for i, e := range res.Effects {
		r := groupRow{label: groupLabel(res, e), reference: e.Reference,
			est: words.scale * e.Estimate, lo: words.scale * e.CILow, hi: words.scale * e.CIHigh}
		r.ok = finite(r.est)
		if r.ok {
			anyOK = true
			span = append(span, r.est)
			if finite(r.lo) && finite(r.hi) {
				span = append(span, r.lo, r.hi)
			}
		}
		anyRef = anyRef || e.Reference
		rows[i] = r
	}
	if !anyOK {
		return fmt.Errorf("drawing the chart: %w: no group has an effect that is a number", ErrNothingToDraw)
	}

	items := []legendItem{{words.noun + ", with its " + words.interval, swatchWhisker(false)}}
	if anyRef {
		items = append(items, legendItem{"reference group (differences are measured from it)", swatchWhisker(true)})
	}
	drawGroupRows(dc, rows, span, words, opt.Title, res.Moderator.Column, items, lk)
	return nil
}

// drawGroupRows draws rows of groups, one a row top to bottom, each
// effect as a dot on its interval bar against a marked line at zero, on
// one axis spanning span.
func drawGroupRows(dc draw.Canvas, rows []groupRow, span []float64, words chartWords, title, headline string, items []legendItem, lk look) {
	area := lk.header(dc, title, items)
	area = lk.headline(area, lk.heading, headline)

	p := lk.newPlot()
	n := len(rows)
	ticks := make([]plot.Tick, n)
	for i, r := range rows {
		ticks[i] = plot.Tick{Value: float64(n - 1 - i), Label: r.label}
	}
	p.Y.Tick.Marker = plot.ConstantTicks(ticks)
	p.Y.Min, p.Y.Max = -0.5, float64(n)-0.5
	p.Y.Padding = 0
	// Names shrink when there are many groups, so that rows never overlap.
	perRow := (area.Max.Y - area.Min.Y - 60) / vg.Length(n)
	p.Y.Tick.Label.Font.Size = max(7, min(lk.tick.Font.Size+1, perRow*0.6))
	p.Y.Tick.Label.Color = inkColor

	width := area.Max.X - area.Min.X
	p.X.Min, p.X.Max = paddedRange(span, 0.08)
	p.X.Tick.Marker = axisTicks{n: int(width/85) + 1, zero: words.zero, style: p.X.Tick.Label, room: 0.6 * width}
	p.X.Label.Text = wrapText(lk.label, words.axis, width)
	p.Add(gridLines{x: p.X.Tick.Marker}, zeroLine{vertical: true}, groupMarks(rows))

	// Every other row is shaded from its name to the right edge, to lead
	// the eye from a group's name to its dot.
	da := p.DataCanvas(area)
	_, ty := p.Transforms(&da)
	for i := 1; i < n; i += 2 {
		v := float64(n - 1 - i)
		fillRect(&area, rowColor, area.Min.X, ty(v-0.5), da.Max.X, ty(v+0.5))
	}
	p.Draw(area)
}

// groupLabel names a group with its row count: "rural (n=412)". A number
// as a level reads better with its column: "female = 1 (n=230)".
func groupLabel(res *estimate.Result, e estimate.GroupEffect) string {
	name := shorten(e.Group, 36)
	if _, err := strconv.ParseFloat(e.Group, 64); err == nil {
		name = shorten(res.Moderator.Column, 24) + " = " + name
	}
	name = armPrefix(e.Arm) + name
	label := fmt.Sprintf("%s (n=%s)", name, count(e.Rows))
	if e.Reference {
		label += ", reference"
	}
	if !finite(e.Estimate) {
		label += ", not estimable"
	}
	return label
}

// groupMarks draws each group's effect as a dot on its interval bar.
type groupMarks []groupRow

func (g groupMarks) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	n := len(g)
	// Marks shrink with the rows when there are many groups.
	rowH := ty(1) - ty(0)
	radius, half := max(2.5, min(6, 0.28*rowH)), max(2.5, min(6, 0.3*rowH))
	bar := draw.LineStyle{Color: effectColor, Width: max(1, min(2.5, 0.12*rowH))}
	capSty := draw.LineStyle{Color: effectColor, Width: max(0.8, min(1.5, 0.08*rowH))}
	for i, r := range g {
		if !r.ok {
			continue
		}
		y := ty(float64(n - 1 - i))
		if finite(r.lo) && finite(r.hi) {
			x0, x1 := tx(r.lo), tx(r.hi)
			c.StrokeLine2(bar, x0, y, x1, y)
			c.StrokeLine2(capSty, x0, y-half, x0, y+half)
			c.StrokeLine2(capSty, x1, y-half, x1, y+half)
		}
		dot(&c, vg.Point{X: tx(r.est), Y: y}, radius, r.reference)
	}
}
