package report

import (
	"bytes"
	"errors"
	"fmt"
	"image/color"
	"math"
	"strconv"
	"strings"

	xfont "golang.org/x/image/font"
	"golang.org/x/text/language"
	"golang.org/x/text/message"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"slopewise/internal/estimate"
)

// ChartOptions says how Chart draws the picture.
type ChartOptions struct {
	// Width and Height are the picture's size in pixels, each between 200
	// and 8000. Zero for both means 900 × 520; zero for one keeps that
	// shape. Text and lines grow with the picture, so a larger picture
	// looks the same, only sharper.
	Width, Height int
	// Title is drawn above the chart; empty means no title.
	Title string
	// OutcomeLabel names the outcome in the effect axis label, for example
	// "Earnings (dollars)"; empty means the outcome column's name.
	OutcomeLabel string
	// Randomized says the treatment was randomly assigned. Only then do
	// the labels speak of an effect; otherwise of the difference in the
	// outcome associated with the treatment, as the note does (METHODS §9).
	Randomized bool
}

// ErrNothingToDraw is the cause of the errors Chart returns when the result
// holds nothing it can draw.
var ErrNothingToDraw = errors.New("nothing to draw")

// Picture sizes, in pixels.
const (
	chartWidth, chartHeight = 900, 520
	chartMinSide            = 200
	chartMaxSide            = 8000
)

// curveSamples is the number of moderator values at which the effect of a
// continuous moderator is computed for its line and band.
const curveSamples = 200

// Chart draws the effects in res as a PNG picture.
//
// For a binary or categorical moderator it draws one row a group: the
// effect as a dot with its confidence interval as a bar, the reference
// group as a hollow dot, against a marked line at zero. For a continuous
// moderator it draws the effect across the observed range of the moderator
// as a line in a band (the confidence interval), shades the stretches where
// the Johnson–Neyman analysis finds the effect distinguishable from zero,
// marks the probe values (hollow when outside the observed range), and
// below it a histogram of the moderator on the same horizontal scale.
//
// The labels speak of an effect only when opt.Randomized is set, and show
// the effects on a 0/1 outcome in percentage points, as the note does.
// The same result and options give the same bytes. Values that are not
// finite are left out of the picture; a result with no effect left to draw
// is an error wrapping ErrNothingToDraw.
func Chart(res *estimate.Result, opt ChartOptions) ([]byte, error) {
	if res == nil {
		return nil, fmt.Errorf("drawing the chart: %w: there is no result", ErrNothingToDraw)
	}
	if len(res.Effects) == 0 {
		return nil, fmt.Errorf("drawing the chart: %w: the result has no effects", ErrNothingToDraw)
	}
	w, h, err := opt.size()
	if err != nil {
		return nil, err
	}
	// Everything is laid out in points for a 900 × 520 picture at 96 dots
	// an inch; another size changes the dots an inch, so the drawing scales.
	s := math.Max(0.5, math.Min(4, math.Min(float64(w)/chartWidth, float64(h)/chartHeight)))
	dpi := int(math.Round(96 * s))
	cv := vgimg.NewWith(
		vgimg.UseWH(vg.Length(w)*vg.Inch/vg.Length(dpi), vg.Length(h)*vg.Inch/vg.Length(dpi)),
		vgimg.UseDPI(dpi),
		vgimg.UseBackgroundColor(color.White),
	)
	dc := draw.New(cv)
	lk := newLook()
	switch res.Moderator.Kind {
	case estimate.ModeratorBinary, estimate.ModeratorCategorical:
		err = drawGroups(dc, res, opt, lk)
	case estimate.ModeratorContinuous:
		err = drawCurve(dc, res, opt, lk)
	default:
		err = fmt.Errorf("drawing the chart: %w: unknown moderator kind %q", ErrNothingToDraw, res.Moderator.Kind)
	}
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: cv}).WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("encoding the chart: %w", err)
	}
	return buf.Bytes(), nil
}

// size returns the picture's size in pixels with the defaults filled in.
func (o ChartOptions) size() (w, h int, err error) {
	w, h = o.Width, o.Height
	switch {
	case w == 0 && h == 0:
		w, h = chartWidth, chartHeight
	case w == 0:
		w = int(math.Round(float64(h) * chartWidth / chartHeight))
	case h == 0:
		h = int(math.Round(float64(w) * chartHeight / chartWidth))
	}
	if w < chartMinSide || h < chartMinSide || w > chartMaxSide || h > chartMaxSide {
		return 0, 0, fmt.Errorf("drawing the chart: a picture of %d × %d pixels is not possible; each side must be between %d and %d", w, h, chartMinSide, chartMaxSide)
	}
	return w, h, nil
}

// Our palette: a deep blue for what was estimated and a warm sand for where
// it is distinguishable from zero — a pair that stays apart for colour-blind
// readers — on white, with greys for everything that only helps reading.
// Each differs in lightness too, so a greyscale print keeps them apart.
var (
	inkColor      = color.RGBA{0x22, 0x22, 0x22, 0xff}
	tickColor     = color.RGBA{0x4a, 0x4a, 0x4a, 0xff}
	mutedColor    = color.RGBA{0x6e, 0x6e, 0x6e, 0xff}
	gridColor     = color.RGBA{0xe4, 0xe4, 0xe4, 0xff}
	rowColor      = color.RGBA{0xf5, 0xf6, 0xf8, 0xff}
	zeroColor     = color.RGBA{0x2b, 0x2b, 0x2b, 0xff}
	effectColor   = color.RGBA{0x1d, 0x4e, 0x7a, 0xff}
	bandColor     = color.RGBA{0xb9, 0xcd, 0xe0, 0xff}
	regionColor   = color.RGBA{0xf8, 0xe8, 0xc6, 0xff}
	boundColor    = color.RGBA{0x9a, 0x62, 0x18, 0xff}
	barColor      = color.RGBA{0xa7, 0xb6, 0xc4, 0xff}
	hollowColor   = color.White
	chartTypeface = font.Font{Typeface: "Liberation", Variant: "Sans"}
)

// look holds the text styles and spacing of a chart, in points.
type look struct {
	title, heading, label, tick, legend, caption text.Style
	margin, gap                                  vg.Length
}

func newLook() look {
	style := func(size vg.Length, weight xfont.Weight, c color.Color) text.Style {
		f := chartTypeface
		f.Weight = weight
		return text.Style{Color: c, Font: font.From(f, size), XAlign: draw.XLeft, YAlign: draw.YTop, Handler: plot.DefaultTextHandler}
	}
	return look{
		title:   style(15, xfont.WeightBold, inkColor),
		heading: style(12, xfont.WeightBold, inkColor),
		label:   style(12, xfont.WeightNormal, inkColor),
		tick:    style(11, xfont.WeightNormal, tickColor),
		legend:  style(11, xfont.WeightNormal, inkColor),
		caption: style(10.5, xfont.WeightNormal, mutedColor),
		margin:  12,
		gap:     8,
	}
}

// newPlot returns a plot in our look: no frame, no tick marks, text in
// our fonts; the plotters draw their own grid.
func (lk look) newPlot() *plot.Plot {
	p := plot.New()
	p.BackgroundColor = nil
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Width = 0
		a.Tick.Length = 0
		a.Padding = 4
		a.Label.Padding = 6
		a.Label.TextStyle = lk.label
		a.Label.TextStyle.XAlign = draw.XCenter
		a.Label.TextStyle.YAlign = draw.YBottom
		a.Tick.Label.Font = lk.tick.Font
		a.Tick.Label.Color = lk.tick.Color
	}
	return p
}

// legendItem is one entry of a chart's legend: a small drawing and words.
type legendItem struct {
	words  string
	swatch func(c *draw.Canvas, r vg.Rectangle)
}

// header draws the title and the legend across the top of dc, left to
// right and wrapping, and returns the canvas left below them inside the
// margins.
func (lk look) header(dc draw.Canvas, title string, items []legendItem) draw.Canvas {
	x0, x1 := dc.Min.X+lk.margin, dc.Max.X-lk.margin
	y := dc.Max.Y - lk.margin
	if title != "" {
		t := wrapText(lk.title, title, x1-x0)
		dc.FillText(lk.title, vg.Point{X: x0, Y: y}, t)
		y -= lk.title.Height(t) + lk.gap
	}
	const swatchW, space, between = 22, 5, 18
	lineH := lk.legend.Height("Mg")
	x := x0
	for i, it := range items {
		w := swatchW + space + lk.legend.Width(it.words)
		if i > 0 && x+w > x1 {
			x = x0
			y -= lineH + 4
		}
		it.swatch(&dc, vg.Rectangle{Min: vg.Point{X: x, Y: y - lineH}, Max: vg.Point{X: x + swatchW, Y: y}})
		dc.FillText(lk.legend, vg.Point{X: x + swatchW + space, Y: y}, it.words)
		x += w + between
	}
	if len(items) > 0 {
		y -= lineH + lk.gap
	}
	return draw.Crop(dc, lk.margin, -lk.margin, lk.margin, y-dc.Max.Y)
}

// headline draws words at the top left of c and returns the canvas below.
func (lk look) headline(c draw.Canvas, sty text.Style, words string) draw.Canvas {
	t := wrapText(sty, words, c.Max.X-c.Min.X)
	c.FillText(sty, vg.Point{X: c.Min.X, Y: c.Max.Y}, t)
	return draw.Crop(c, 0, 0, 0, -(sty.Height(t) + lk.gap/2))
}

// chartWords are the words and the scale of a chart's effect axis.
type chartWords struct {
	// noun is what a mark shows, "effect" or "association".
	noun string
	// axis says what the effect axis measures.
	axis string
	// interval names the confidence interval, "95% confidence interval".
	interval string
	// zero labels the line at zero.
	zero string
	// scale multiplies every estimate: 100 for a 0/1 outcome, whose
	// effects are shown in percentage points as in the note.
	scale float64
}

func wordsFor(res *estimate.Result, opt ChartOptions) chartWords {
	w := chartWords{noun: "association", interval: "confidence interval", zero: "0 (no difference)", scale: 1}
	if a := res.Model.Alpha; a > 0 && a < 1 {
		w.interval = level(a) + " confidence interval"
	}
	outcome := opt.OutcomeLabel
	if outcome == "" {
		outcome = res.Spec.Outcome
	}
	treatment := treatmentName(res.Spec.Treatment)
	if res.Spec.Treatment.Kind == estimate.TreatmentContinuous {
		treatment = "each unit of " + treatment
	}
	w.axis = "Difference in " + outcome + " associated with " + treatment
	if opt.Randomized {
		w.noun, w.zero = "effect", "0 (no effect)"
		w.axis = "Effect of " + treatment + " on " + outcome
	}
	if res.Model.OutcomeBinary {
		w.scale = 100
		w.axis += ", in percentage points"
	}
	w.axis += ", with " + w.interval
	return w
}

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
	area := lk.header(dc, opt.Title, items)
	area = lk.headline(area, lk.heading, res.Moderator.Column)

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
	return nil
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
