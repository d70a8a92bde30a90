package report

// The chart of a number moderator (drawCurve): the effect along the
// moderator with its band, the probes, the thirds, the region where it is
// distinguishable from zero, and the histogram of the moderator beneath.

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"slopewise/internal/estimate"
)

// drawCurve draws the effect across a continuous moderator's observed
// range with the histogram of the moderator below it.
func drawCurve(dc draw.Canvas, res *estimate.Result, opt ChartOptions, lk look) error {
	lo, hi := res.Moderator.Min, res.Moderator.Max
	if !finite(lo) || !finite(hi) || hi < lo {
		return fmt.Errorf("drawing the chart: %w: the moderator's observed range %g to %g is not a range", ErrNothingToDraw, lo, hi)
	}
	if !covarianceComplete(res) {
		return fmt.Errorf("drawing the chart: %w: the result has no complete covariance of its coefficients", ErrNothingToDraw)
	}
	words := wordsFor(res, opt)
	at := func(m float64) (curvePoint, error) {
		inf, ok := res.EffectAt(m)
		if !ok {
			return curvePoint{}, fmt.Errorf("drawing the chart: %w: the result has no treatment or interaction coefficient", ErrNothingToDraw)
		}
		return curvePoint{m: m, est: words.scale * inf.Estimate, lo: words.scale * inf.CILow, hi: words.scale * inf.CIHigh}, nil
	}
	var curve []curvePoint
	for i := range curveSamples {
		cp, err := at(lo + (hi-lo)*float64(i)/(curveSamples-1))
		if err != nil {
			return err
		}
		if cp.ok() {
			curve = append(curve, cp)
		}
	}
	var probes []curvePoint
	var beyond [][2]curvePoint
	for _, e := range res.Effects {
		cp := curvePoint{m: e.Value, est: words.scale * e.Estimate, lo: words.scale * e.CILow, hi: words.scale * e.CIHigh, extrapolated: e.Extrapolated}
		if !finite(cp.m) || !finite(cp.est) {
			continue
		}
		probes = append(probes, cp)
		if cp.extrapolated {
			// A dashed line continues the effect from the nearer end of
			// the observed range out to the probe.
			edge, err := at(math.Max(lo, math.Min(hi, cp.m)))
			if err != nil {
				return err
			}
			if finite(edge.est) {
				beyond = append(beyond, [2]curvePoint{edge, cp})
			}
		}
	}
	if len(curve) == 0 && len(probes) == 0 {
		return fmt.Errorf("drawing the chart: %w: the effect is not a number anywhere in the observed range", ErrNothingToDraw)
	}

	xs := []float64{lo, hi}
	ys := []float64{0}
	for _, cp := range curve {
		ys = append(ys, cp.lo, cp.hi)
	}
	for _, cp := range probes {
		xs = append(xs, cp.m)
		ys = append(ys, cp.est)
		if finite(cp.lo) && finite(cp.hi) {
			ys = append(ys, cp.lo, cp.hi)
		}
	}
	var thirds []curvePoint
	if l := res.Linearity; l != nil {
		for _, th := range l.Thirds {
			cp := curvePoint{m: th.Median, est: words.scale * th.Effect.Estimate, lo: words.scale * th.Effect.CILow, hi: words.scale * th.Effect.CIHigh}
			if cp.ok() {
				thirds = append(thirds, cp)
				ys = append(ys, cp.lo, cp.hi)
			}
		}
	}
	var sig [][2]float64
	if jn := res.JohnsonNeyman; jn != nil {
		for _, r := range jn.Regions {
			if r.Significant && finite(r.From) && finite(r.To) && r.To >= r.From {
				sig = append(sig, [2]float64{r.From, r.To})
			}
		}
	}

	items := []legendItem{{words.noun + ", with its " + words.interval, swatchBand}}
	switch {
	case len(sig) > 0:
		items = append(items, legendItem{words.noun + " distinguishable from zero", swatchRegion})
	case res.JohnsonNeyman != nil:
		items = append(items, legendItem{words.noun + " not distinguishable from zero anywhere in the observed range", swatchNone})
	}
	items = append(items, legendItem{words.noun + " at the values in the table", swatchDot(false)})
	if len(thirds) > 0 {
		items = append(items, legendItem{words.noun + " within each third of " + res.Moderator.Column + ", with its interval", swatchThird})
	}
	if len(beyond) > 0 {
		items = append(items, legendItem{"outside the observed range (extrapolated)", swatchDot(true)})
	}
	area := lk.header(dc, opt.Title, items)
	area = lk.headline(area, lk.heading, words.axis)

	// The histogram, with its caption, ticks and the moderator's name,
	// takes the lower third, and never less than it needs to be read.
	histH := max((area.Max.Y-area.Min.Y)*0.33, 95)
	top := draw.Crop(area, 0, 0, histH, 0)
	bottom := draw.Crop(area, 0, 0, 0, -(area.Max.Y - area.Min.Y - histH))
	bottom = lk.headline(draw.Crop(bottom, 0, 0, 0, -lk.gap/2), lk.caption, "Rows of data at each value of "+res.Moderator.Column)

	xlo, xhi := paddedRange(xs, 0.02)
	width := area.Max.X - area.Min.X

	pe := lk.newPlot()
	pe.X.Padding = 2
	pe.X.Min, pe.X.Max = xlo, xhi
	// The top plot's only horizontal labels are the Johnson–Neyman bounds,
	// written under their dashed lines.
	pe.X.Tick.Marker = boundTicks(sig, lo, hi)
	pe.X.Tick.Label.Color = boundColor
	xticks := axisTicks{n: int(width/75) + 1, style: pe.X.Tick.Label, room: 0.85 * width}
	pe.Y.Min, pe.Y.Max = paddedRange(ys, 0.06)
	pe.Y.Tick.Marker = axisTicks{n: int((top.Max.Y-top.Min.Y)/55) + 1, zero: words.zero}
	pe.Add(regionShade(sig), gridLines{x: xticks, y: pe.Y.Tick.Marker}, bandFill(curve), zeroLine{},
		boundaries{spans: sig, lo: lo, hi: hi}, effectLine{curve: curve, beyond: beyond}, thirdMarks(thirds), probeMarks(probes))

	ph := lk.newPlot()
	ph.X.Min, ph.X.Max = xlo, xhi
	ph.X.Tick.Marker = xticks
	ph.X.Label.Text = res.Moderator.Column
	var most float64
	for _, b := range res.Moderator.Histogram {
		most = math.Max(most, float64(b.Rows))
	}
	ph.Y.Min, ph.Y.Max = 0, math.Max(most, 1)*1.08
	ph.Y.Tick.Marker = axisTicks{n: 2}
	ph.Add(gridLines{x: xticks, y: ph.Y.Tick.Marker}, histogramBars(res.Moderator.Histogram))

	top, bottom = alignDataX(pe, ph, top, bottom)
	pe.Draw(top)
	ph.Draw(bottom)
	return nil
}

// boundTicks labels each Johnson–Neyman bound inside the observed range
// with its value, written as the note writes it.
func boundTicks(spans [][2]float64, lo, hi float64) plot.ConstantTicks {
	var ticks plot.ConstantTicks
	for _, r := range spans {
		for _, v := range r {
			if v > lo && v < hi {
				ticks = append(ticks, plot.Tick{Value: v, Label: readable(v)})
			}
		}
	}
	return ticks
}

// covarianceComplete reports whether the result's covariance is square in
// the number of coefficients, as EffectAt needs.
func covarianceComplete(res *estimate.Result) bool {
	if len(res.Covariance) != len(res.Coefficients) {
		return false
	}
	for _, row := range res.Covariance {
		if len(row) != len(res.Coefficients) {
			return false
		}
	}
	return true
}

// curvePoint is the effect at one moderator value m, with its interval,
// on the chart's scale.
type curvePoint struct {
	m, est, lo, hi float64
	extrapolated   bool
}

func (cp curvePoint) ok() bool {
	return finite(cp.m) && finite(cp.est) && finite(cp.lo) && finite(cp.hi)
}

// alignDataX crops two canvases, one above the other, so that the data
// areas of their plots start and end at the same horizontal positions.
func alignDataX(a, b *plot.Plot, ca, cb draw.Canvas) (draw.Canvas, draw.Canvas) {
	// The data area depends a little on the canvas through the tick
	// labels at its edges, so a few rounds settle it.
	for range 3 {
		da, db := a.DataCanvas(ca), b.DataCanvas(cb)
		left, right := max(da.Min.X, db.Min.X), min(da.Max.X, db.Max.X)
		ca = draw.Crop(ca, left-da.Min.X, right-da.Max.X, 0, 0)
		cb = draw.Crop(cb, left-db.Min.X, right-db.Max.X, 0, 0)
	}
	return ca, cb
}

// regionShade shades the stretches of the moderator, from–to, where the
// effect is distinguishable from zero, across the whole height.
type regionShade [][2]float64

func (s regionShade) Plot(c draw.Canvas, p *plot.Plot) {
	tx, _ := p.Transforms(&c)
	for _, r := range s {
		fillRect(&c, regionColor, max(tx(r[0]), c.Min.X), c.Min.Y, min(tx(r[1]), c.Max.X), c.Max.Y)
	}
}

// boundaries marks with a dashed line each Johnson–Neyman bound that falls
// inside the observed range.
type boundaries struct {
	spans  [][2]float64
	lo, hi float64
}

func (b boundaries) Plot(c draw.Canvas, p *plot.Plot) {
	tx, _ := p.Transforms(&c)
	sty := draw.LineStyle{Color: boundColor, Width: 1.2, Dashes: []vg.Length{5, 3}}
	for _, r := range b.spans {
		for _, v := range r {
			if v > b.lo && v < b.hi {
				c.StrokeLine2(sty, tx(v), c.Min.Y, tx(v), c.Max.Y)
			}
		}
	}
}

// bandFill fills the confidence band of the effect curve.
type bandFill []curvePoint

func (b bandFill) Plot(c draw.Canvas, p *plot.Plot) {
	if len(b) < 2 {
		return
	}
	tx, ty := p.Transforms(&c)
	pts := make([]vg.Point, 0, 2*len(b))
	for _, cp := range b {
		pts = append(pts, vg.Point{X: tx(cp.m), Y: ty(cp.hi)})
	}
	for i := len(b) - 1; i >= 0; i-- {
		pts = append(pts, vg.Point{X: tx(b[i].m), Y: ty(b[i].lo)})
	}
	c.FillPolygon(bandColor, c.ClipPolygonXY(pts))
}

// effectLine draws the effect across the observed range, and dashed
// continuations beyond it, each from an end of the range to a probe.
type effectLine struct {
	curve  []curvePoint
	beyond [][2]curvePoint
}

func (e effectLine) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	line := make([]vg.Point, len(e.curve))
	for i, cp := range e.curve {
		line[i] = vg.Point{X: tx(cp.m), Y: ty(cp.est)}
	}
	if len(line) > 1 {
		c.StrokeLines(draw.LineStyle{Color: effectColor, Width: 2.5}, c.ClipLinesXY(line)...)
	}
	dashed := draw.LineStyle{Color: effectColor, Width: 1.5, Dashes: []vg.Length{4, 3}}
	for _, b := range e.beyond {
		c.StrokeLines(dashed, c.ClipLinesXY([]vg.Point{{X: tx(b[0].m), Y: ty(b[0].est)}, {X: tx(b[1].m), Y: ty(b[1].est)}})...)
	}
}

// probeMarks draws the effect at each probe value; a probe outside the
// observed range is hollow and carries its own interval bar, there being
// no band there.
type probeMarks []curvePoint

func (pm probeMarks) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	bar := draw.LineStyle{Color: effectColor, Width: 1.5}
	for _, cp := range pm {
		x := tx(cp.m)
		if cp.extrapolated && finite(cp.lo) && finite(cp.hi) {
			y0, y1 := ty(cp.lo), ty(cp.hi)
			c.StrokeLine2(bar, x, y0, x, y1)
			c.StrokeLine2(bar, x-5, y0, x+5, y0)
			c.StrokeLine2(bar, x-5, y1, x+5, y1)
		}
		dot(&c, vg.Point{X: x, Y: ty(cp.est)}, 5, cp.extrapolated)
	}
}

// thirdMarks draws the effect estimated within each third of the
// moderator (the linearity check) at the third's median: a square on its
// interval, in the colour of the Johnson–Neyman marks so that it stands
// apart from the line it is compared with.
type thirdMarks []curvePoint

func (tm thirdMarks) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	for _, cp := range tm {
		thirdMark(&c, vg.Point{X: tx(cp.m), Y: ty(cp.est)}, ty(cp.lo), ty(cp.hi))
	}
}

// thirdMark draws one: whisker from y0 to y1 with caps, square at at.
func thirdMark(c *draw.Canvas, at vg.Point, y0, y1 vg.Length) {
	sty := draw.LineStyle{Color: boundColor, Width: 1.6}
	c.StrokeLine2(sty, at.X, y0, at.X, y1)
	c.StrokeLine2(sty, at.X-4, y0, at.X+4, y0)
	c.StrokeLine2(sty, at.X-4, y1, at.X+4, y1)
	if c.Contains(at) {
		const r = 4.5
		fillRect(c, color.White, at.X-r-1.2, at.Y-r-1.2, at.X+r+1.2, at.Y+r+1.2)
		fillRect(c, boundColor, at.X-r, at.Y-r, at.X+r, at.Y+r)
	}
}

func swatchThird(c *draw.Canvas, r vg.Rectangle) {
	mid := vg.Point{X: (r.Min.X + r.Max.X) / 2, Y: (r.Min.Y + r.Max.Y) / 2}
	thirdMark(c, mid, r.Min.Y, r.Max.Y)
}

// histogramBars draws how many rows fall in each bin of the moderator.
type histogramBars []estimate.Bin

func (h histogramBars) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	for _, b := range h {
		if b.Rows <= 0 || !finite(b.From) || !finite(b.To) {
			continue
		}
		x0, x1 := tx(b.From), tx(b.To)
		if x1-x0 > 2 {
			// A hairline of white between neighbouring bars.
			x0, x1 = x0+0.5, x1-0.5
		}
		fillRect(&c, barColor, x0, ty(0), x1, ty(float64(b.Rows)))
	}
}
