package report

import (
	"bytes"
	"errors"
	"fmt"
	"image/color"
	"math"

	xfont "golang.org/x/image/font"
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
	return renderPNG(w, h, chartWidth, chartHeight, func(dc draw.Canvas, lk look) error {
		switch res.Moderator.Kind {
		case estimate.ModeratorBinary, estimate.ModeratorCategorical:
			return drawGroups(dc, res, opt, lk)
		case estimate.ModeratorContinuous:
			return drawCurve(dc, res, opt, lk)
		}
		return fmt.Errorf("drawing the chart: %w: unknown moderator kind %q", ErrNothingToDraw, res.Moderator.Kind)
	})
}

// renderPNG draws a picture of w × h pixels laid out in points for a
// picture of baseW × baseH pixels at 96 dots an inch; another size changes
// the dots an inch, so the drawing scales.
func renderPNG(w, h, baseW, baseH int, paint func(draw.Canvas, look) error) ([]byte, error) {
	s := math.Max(0.5, math.Min(4, math.Min(float64(w)/float64(baseW), float64(h)/float64(baseH))))
	dpi := int(math.Round(96 * s))
	cv := vgimg.NewWith(
		vgimg.UseWH(vg.Length(w)*vg.Inch/vg.Length(dpi), vg.Length(h)*vg.Inch/vg.Length(dpi)),
		vgimg.UseDPI(dpi),
		vgimg.UseBackgroundColor(color.White),
	)
	if err := paint(draw.New(cv), newLook()); err != nil {
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
	if res.Spec.Cluster != "" {
		// Say which intervals are drawn: the note may give the
		// bootstrap's, the chart draws the cluster-robust ones.
		w.interval = "cluster-robust " + w.interval
	}
	w.axis += ", with " + w.interval
	if res.Bootstrap != nil {
		w.axis += " (the bootstrap's are in the tables)"
	}
	return w
}
