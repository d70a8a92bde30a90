package report

import (
	"bytes"
	"errors"
	"image"
	"image/color"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"slopewise/internal/estimate"
)

// programme is an invented evaluation: an offer of job training (trained,
// 0/1) and earnings a year later, with the area (urban or rural), one of
// four regions and the months out of work before the offer. Training helps
// more in rural areas and in the south, and less the longer someone was out
// of work — past about a year and a half it goes with lower earnings.
// employed (0/1) says whether earnings passed 24,000.
func programme(n int, seed uint64) *estimate.Data {
	rng := rand.New(rand.NewPCG(seed, 7))
	regions := []string{"north", "south", "east", "west"}
	var earnings, employed, trained, months, age []float64
	var area, region []string
	for i := range n {
		t := float64(i % 2)
		a := "urban"
		if rng.Float64() < 0.4 {
			a = "rural"
		}
		r := regions[rng.IntN(4)]
		mo := 36 * rng.Float64()
		effect := 2600 - 150*mo
		if a == "rural" {
			effect += 1200
		}
		if r == "south" {
			effect += 1500
		}
		ag := 20 + 40*rng.Float64()
		e := 21000 - 90*mo + 60*ag + effect*t + 2500*rng.NormFloat64()
		earnings = append(earnings, e)
		job := 0.0
		if e > 24000 {
			job = 1
		}
		employed = append(employed, job)
		trained = append(trained, t)
		area = append(area, a)
		region = append(region, r)
		months = append(months, mo)
		age = append(age, ag)
	}
	return &estimate.Data{Columns: []estimate.Column{
		{Name: "earnings", Num: earnings}, {Name: "employed", Num: employed}, {Name: "trained", Num: trained},
		{Name: "area", Text: area}, {Name: "region", Text: region},
		{Name: "months_out_of_work", Num: months}, {Name: "age", Num: age},
	}}
}

func programmeSpec(moderator string, kind estimate.ModeratorKind) estimate.Spec {
	return estimate.Spec{Outcome: "earnings", Treatment: estimate.Treatment{Column: "trained"},
		Moderator: estimate.Moderator{Column: moderator, Kind: kind}, Controls: []string{"age"}}
}

func fitProgramme(t *testing.T, moderator string, kind estimate.ModeratorKind) *estimate.Result {
	t.Helper()
	res, err := estimate.Fit(programme(800, 11), programmeSpec(moderator, kind))
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// decodeChart checks that b is a PNG of the given size and returns it.
func decodeChart(t *testing.T, b []byte, w, h int) image.Image {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("not a PNG: %v", err)
	}
	if got := img.Bounds().Size(); got.X != w || got.Y != h {
		t.Fatalf("size %d×%d, want %d×%d", got.X, got.Y, w, h)
	}
	return img
}

// keepChart writes a chart into $SLOPEWISE_CHART_DIR when it is set, so a
// person can look at it.
func keepChart(t *testing.T, name string, b []byte) {
	dir := os.Getenv("SLOPEWISE_CHART_DIR")
	if dir == "" {
		return
	}
	if err := os.WriteFile(filepath.Join(dir, name+".png"), b, 0o644); err != nil {
		t.Fatal(err)
	}
}

func sameRGB(c color.Color, want color.RGBA) bool {
	r, g, b, _ := c.RGBA()
	return r>>8 == uint32(want.R) && g>>8 == uint32(want.G) && b>>8 == uint32(want.B)
}

// mostInLine returns the largest number of pixels of colour want in one
// row (horizontal) or one column of the picture.
func mostInLine(img image.Image, want color.RGBA, horizontal bool) int {
	b := img.Bounds()
	outer, inner := b.Dy(), b.Dx()
	if !horizontal {
		outer, inner = inner, outer
	}
	best := 0
	for o := range outer {
		n := 0
		for i := range inner {
			x, y := b.Min.X+i, b.Min.Y+o
			if !horizontal {
				x, y = b.Min.X+o, b.Min.Y+i
			}
			if sameRGB(img.At(x, y), want) {
				n++
			}
		}
		best = max(best, n)
	}
	return best
}

func countColour(img image.Image, want color.RGBA) int {
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			if sameRGB(img.At(x, y), want) {
				n++
			}
		}
	}
	return n
}

func distinctColours(img image.Image) int {
	seen := map[color.Color]bool{}
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			seen[img.At(x, y)] = true
		}
	}
	return len(seen)
}

// TestChart draws the three kinds of chart and checks what can be checked
// without a person: a PNG of the size asked for, the same bytes every time,
// a real drawing, the line of no effect across the data area, dots in the
// effect colour and the Johnson–Neyman shading only where it belongs.
func TestChart(t *testing.T) {
	cases := []struct {
		name      string
		moderator string
		kind      estimate.ModeratorKind
		opt       ChartOptions
		w, h      int
		// The line of no effect runs across at least zeroShare of the
		// picture's width (horizontal) or height.
		zeroHorizontal bool
		zeroShare      float64
	}{
		{"binary", "area", estimate.ModeratorBinary,
			ChartOptions{OutcomeLabel: "Earnings (dollars)", Randomized: true}, 900, 520, false, 0.4},
		{"categorical", "region", estimate.ModeratorCategorical,
			ChartOptions{Title: "Training and earnings, by region"}, 900, 520, false, 0.4},
		{"continuous", "months_out_of_work", estimate.ModeratorContinuous,
			ChartOptions{Title: "Training and earnings, by months out of work", OutcomeLabel: "Earnings (dollars)", Randomized: true, Width: 1200}, 1200, 693, true, 0.5},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res := fitProgramme(t, c.moderator, c.kind)
			b, err := Chart(res, c.opt)
			if err != nil {
				t.Fatal(err)
			}
			keepChart(t, "chart-"+c.name, b)
			img := decodeChart(t, b, c.w, c.h)
			again, err := Chart(res, c.opt)
			if err != nil || !bytes.Equal(b, again) {
				t.Errorf("a second drawing differs (err %v)", err)
			}
			if n := distinctColours(img); n < 20 {
				t.Errorf("%d distinct colours; want a real drawing", n)
			}
			length := c.h
			if c.zeroHorizontal {
				length = c.w
			}
			if most := mostInLine(img, zeroColor, c.zeroHorizontal); float64(most) < c.zeroShare*float64(length) {
				t.Errorf("at most %d pixels of the zero line's colour in a line, want at least %.0f", most, c.zeroShare*float64(length))
			}
			if n := countColour(img, effectColor); n < 100 {
				t.Errorf("%d pixels in the effect colour, want the dots and bars", n)
			}
		})
	}
}

// TestChartThirds checks that the effects within the thirds of a
// continuous moderator (the linearity check) are drawn over the line as
// squares with whiskers in their own colour, and only when the result has
// them.
func TestChartThirds(t *testing.T) {
	res := fitProgramme(t, "months_out_of_work", estimate.ModeratorContinuous)
	if res.Linearity == nil || len(res.Linearity.Thirds) != 3 {
		t.Fatalf("linearity %+v", res.Linearity)
	}
	with, err := Chart(res, ChartOptions{})
	if err != nil {
		t.Fatal(err)
	}
	keepChart(t, "thirds", with)
	without := *res
	without.Linearity = nil
	plain, err := Chart(&without, ChartOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// Three squares of 9 × 9 points and their whiskers, and the legend's.
	a, b := countColour(decodeChart(t, with, 900, 520), boundColor), countColour(decodeChart(t, plain, 900, 520), boundColor)
	if a-b < 4*80 {
		t.Errorf("%d pixels in the thirds' colour with them, %d without; want the four marks", a, b)
	}
}

// TestChartRegions checks that the shading of the Johnson–Neyman regions
// follows the analysis: present when a stretch is distinguishable from
// zero, absent when none is.
func TestChartRegions(t *testing.T) {
	res := fitProgramme(t, "months_out_of_work", estimate.ModeratorContinuous)
	if res.JohnsonNeyman == nil || len(res.JohnsonNeyman.Regions) < 2 {
		t.Fatalf("the invented data should give several regions, got %+v", res.JohnsonNeyman)
	}
	b, err := Chart(res, ChartOptions{})
	if err != nil {
		t.Fatal(err)
	}
	img := decodeChart(t, b, 900, 520)
	if n := countColour(img, regionColor); n < 2000 {
		t.Errorf("%d pixels of shading, want the regions shaded", n)
	}

	none := *res
	jn := *res.JohnsonNeyman
	jn.Regions = []estimate.Region{{From: jn.Min, To: jn.Max, Significant: false, Sign: 1}}
	none.JohnsonNeyman = &jn
	b, err = Chart(&none, ChartOptions{})
	if err != nil {
		t.Fatal(err)
	}
	keepChart(t, "regions-none", b)
	if n := countColour(decodeChart(t, b, 900, 520), regionColor); n != 0 {
		t.Errorf("%d pixels of shading with no region distinguishable from zero", n)
	}
}

// TestChartOddResults draws results at the edges of what a fit can give;
// each must come back as a picture, never a panic.
func TestChartOddResults(t *testing.T) {
	scale := func(res *estimate.Result, f float64) {
		for i := range res.Effects {
			e := &res.Effects[i]
			e.Estimate, e.CILow, e.CIHigh = f*e.Estimate, f*e.CILow, f*e.CIHigh
		}
		for i := range res.Coefficients {
			res.Coefficients[i].Estimate *= f
		}
		for i := range res.Covariance {
			for j := range res.Covariance[i] {
				res.Covariance[i][j] *= f * f
			}
		}
	}
	cases := []struct {
		name      string
		moderator string
		kind      estimate.ModeratorKind
		spec      func(*estimate.Spec)
		change    func(*estimate.Result)
		opt       ChartOptions
	}{
		{"one group left", "region", estimate.ModeratorCategorical, nil,
			func(r *estimate.Result) { r.Effects = r.Effects[:1] }, ChartOptions{}},
		{"one group not a number", "region", estimate.ModeratorCategorical, nil,
			func(r *estimate.Result) { r.Effects[2].Estimate = math.NaN() }, ChartOptions{}},
		{"intervals not numbers", "area", estimate.ModeratorBinary, nil,
			func(r *estimate.Result) {
				r.Effects[0].CILow, r.Effects[1].CIHigh = math.Inf(-1), math.NaN()
			}, ChartOptions{}},
		{"huge effects", "region", estimate.ModeratorCategorical, nil,
			func(r *estimate.Result) { scale(r, 1e9) }, ChartOptions{}},
		{"tiny effects", "months_out_of_work", estimate.ModeratorContinuous, nil,
			func(r *estimate.Result) { scale(r, 1e-9) }, ChartOptions{}},
		{"all intervals above zero", "area", estimate.ModeratorBinary, nil,
			func(r *estimate.Result) {
				for i := range r.Effects {
					r.Effects[i].Estimate += 1e5
					r.Effects[i].CILow += 1e5
					r.Effects[i].CIHigh += 1e5
				}
			}, ChartOptions{}},
		{"every effect zero", "area", estimate.ModeratorBinary, nil,
			func(r *estimate.Result) {
				for i := range r.Effects {
					r.Effects[i].Inference = estimate.Inference{}
				}
			}, ChartOptions{}},
		{"many groups with long names", "region", estimate.ModeratorCategorical, nil,
			func(r *estimate.Result) {
				for range 30 {
					e := r.Effects[1]
					e.Group = "a region whose name goes on for far longer than any label can show"
					r.Effects = append(r.Effects, e)
				}
			}, ChartOptions{Title: "A title that is much too long to fit on one line of the picture, so it has to wrap onto a second line"}},
		{"no Johnson–Neyman analysis", "months_out_of_work", estimate.ModeratorContinuous, nil,
			func(r *estimate.Result) { r.JohnsonNeyman = nil }, ChartOptions{}},
		{"three regions, one empty", "months_out_of_work", estimate.ModeratorContinuous, nil,
			func(r *estimate.Result) {
				lo, hi := r.Moderator.Min, r.Moderator.Max
				r.JohnsonNeyman.Regions = []estimate.Region{
					{From: lo, To: lo + 5, Significant: true}, {From: lo + 5, To: lo + 5, Significant: true},
					{From: lo + 5, To: hi - 5}, {From: hi - 5, To: hi, Significant: true}}
			}, ChartOptions{}},
		{"observed range a single value", "months_out_of_work", estimate.ModeratorContinuous, nil,
			func(r *estimate.Result) {
				r.Moderator.Max = r.Moderator.Min
				r.Moderator.Histogram = r.Moderator.Histogram[:1]
				r.JohnsonNeyman.Regions = []estimate.Region{{From: r.Moderator.Min, To: r.Moderator.Min, Significant: true}}
			}, ChartOptions{}},
		{"probes outside the observed range", "months_out_of_work", estimate.ModeratorContinuous,
			func(s *estimate.Spec) { s.Moderator.Probes = []float64{-6, 12, 48} }, nil, ChartOptions{}},
		{"outcome of 0 and 1, in percentage points", "region", estimate.ModeratorCategorical,
			func(s *estimate.Spec) { s.Outcome = "employed" }, nil, ChartOptions{Randomized: true}},
		{"small picture", "months_out_of_work", estimate.ModeratorContinuous, nil, nil,
			ChartOptions{Width: 200, Height: 200}},
		{"large picture", "region", estimate.ModeratorCategorical, nil, nil,
			ChartOptions{Width: 2400, Height: 1400}},
		{"continuous treatment, alpha 0.1", "months_out_of_work", estimate.ModeratorContinuous,
			func(s *estimate.Spec) {
				s.Treatment.Kind = estimate.TreatmentContinuous
				s.Alpha = 0.1
			}, nil, ChartOptions{}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			spec := programmeSpec(c.moderator, c.kind)
			if c.spec != nil {
				c.spec(&spec)
			}
			res, err := estimate.Fit(programme(400, 5), spec)
			if err != nil {
				t.Fatal(err)
			}
			if c.change != nil {
				c.change(res)
			}
			b, err := Chart(res, c.opt)
			if err != nil {
				t.Fatal(err)
			}
			keepChart(t, "odd-"+c.name, b)
			w, h, _ := c.opt.size()
			decodeChart(t, b, w, h)
		})
	}
}

// TestChartErrors checks the results and options that cannot be drawn.
func TestChartErrors(t *testing.T) {
	fitted := func(moderator string, kind estimate.ModeratorKind) func() *estimate.Result {
		return func() *estimate.Result {
			res, err := estimate.Fit(programme(200, 3), programmeSpec(moderator, kind))
			if err != nil {
				panic(err)
			}
			return res
		}
	}
	groups := fitted("region", estimate.ModeratorCategorical)
	curve := fitted("months_out_of_work", estimate.ModeratorContinuous)
	cases := []struct {
		name    string
		res     func() *estimate.Result
		opt     ChartOptions
		nothing bool // the error wraps ErrNothingToDraw
	}{
		{"no result", func() *estimate.Result { return nil }, ChartOptions{}, true},
		{"no effects", func() *estimate.Result { r := groups(); r.Effects = nil; return r }, ChartOptions{}, true},
		{"no effect is a number", func() *estimate.Result {
			r := groups()
			for i := range r.Effects {
				r.Effects[i].Estimate = math.NaN()
			}
			return r
		}, ChartOptions{}, true},
		{"unknown moderator kind", func() *estimate.Result { r := groups(); r.Moderator.Kind = "ordinal"; return r }, ChartOptions{}, true},
		{"covariance missing", func() *estimate.Result { r := curve(); r.Covariance = r.Covariance[:2]; return r }, ChartOptions{}, true},
		{"no interaction coefficient", func() *estimate.Result {
			r := curve()
			for i := range r.Coefficients {
				if r.Coefficients[i].Role == "interaction" {
					r.Coefficients[i].Role = "control"
				}
			}
			return r
		}, ChartOptions{}, true},
		{"moderator range not a number", func() *estimate.Result { r := curve(); r.Moderator.Max = math.NaN(); return r }, ChartOptions{}, true},
		{"negative width", groups, ChartOptions{Width: -5, Height: 400}, false},
		{"too small", groups, ChartOptions{Width: 150}, false},
		{"too large", groups, ChartOptions{Width: 9000, Height: 5000}, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			b, err := Chart(c.res(), c.opt)
			if err == nil {
				t.Fatalf("got %d bytes, want an error", len(b))
			}
			if errors.Is(err, ErrNothingToDraw) != c.nothing {
				t.Errorf("error %q: wraps ErrNothingToDraw = %v, want %v", err, !c.nothing, c.nothing)
			}
		})
	}
}

func TestRoundSteps(t *testing.T) {
	cases := []struct {
		lo, hi float64
		n      int
		want   []float64
	}{
		{-0.3, 7.2, 4, []float64{0, 2, 4, 6}},
		{-1234, 5678, 3, []float64{-0, 2500, 5000}},
		{0.0012, 0.0049, 3, []float64{0.002, 0.004}},
		{3, 3, 4, nil},
		{0, math.Inf(1), 4, nil},
		{math.NaN(), 1, 4, nil},
	}
	for _, c := range cases {
		got, _ := roundSteps(c.lo, c.hi, c.n)
		if len(got) != len(c.want) {
			t.Errorf("roundSteps(%g, %g, %d) = %v, want %v", c.lo, c.hi, c.n, got, c.want)
			continue
		}
		for i := range got {
			if math.Abs(got[i]-c.want[i]) > 1e-12 {
				t.Errorf("roundSteps(%g, %g, %d) = %v, want %v", c.lo, c.hi, c.n, got, c.want)
				break
			}
		}
	}
	for _, c := range []struct {
		v, step float64
		want    string
	}{
		{1500000, 500000, "1.5 million"},
		{-2e12, 1e12, "\u22122 trillion"},
		{750000, 250000, "750,000"},
		{-2.5, 2.5, "\u22122.5"},
		{0.25, 0.25, "0.25"},
		{3e-9, 1e-9, "3e-09"},
		{2e15, 1e15, "2e+15"},
	} {
		if got := tickNumber(c.v, c.step, []float64{c.v}); got != c.want {
			t.Errorf("tickNumber(%g, %g) = %q, want %q", c.v, c.step, got, c.want)
		}
	}
}
