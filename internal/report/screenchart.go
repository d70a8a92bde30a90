package report

import (
	"fmt"

	"gonum.org/v1/plot/vg/draw"

	"slopewise/internal/estimate"
)

// ScreenChart draws every group of every moderator of a screen on one
// shared axis as a PNG picture: for each moderator a line with its name,
// whether it was named beforehand or is exploratory, and its test that
// the effect is the same in all its groups adjusted for the moderators
// tried (Holm); below it one row a group (or a chosen value of a number
// moderator) with the effect as a dot on its confidence interval. The
// labels follow Chart's wording (METHODS §9).
func ScreenChart(sr ScreenRun, sc *estimate.Screen, opt ChartOptions) ([]byte, error) {
	if sc == nil || len(sc.Results) == 0 {
		return nil, fmt.Errorf("drawing the chart: %w: the screen has no results", ErrNothingToDraw)
	}
	words := wordsFor(sc.Results[0], opt)
	rows, span := screenRows(sr, sc, words)
	if len(span) == 1 {
		return nil, fmt.Errorf("drawing the chart: %w: no group has an effect that is a number", ErrNothingToDraw)
	}
	w, h := screenChartSize(len(rows))
	items := []legendItem{{words.noun + ", with its " + words.interval, swatchWhisker(false)},
		{"reference group", swatchWhisker(true)}}
	return renderPNG(w, h, chartWidth, chartHeight, func(dc draw.Canvas, lk look) error {
		drawGroupRows(dc, rows, span, words, opt.Title, "Every group of every moderator tried", items, lk)
		return nil
	})
}

// screenChartSize gives the combined chart room for its rows: the size of
// the single chart up to ten rows, then 30 pixels more a row.
func screenChartSize(rows int) (w, h int) {
	return chartWidth, min(chartMaxSide, max(chartHeight, 160+30*rows))
}

// screenRows are the combined chart's rows: a title row a moderator, then
// its groups; span collects the values the axis must show (zero first).
func screenRows(sr ScreenRun, sc *estimate.Screen, words chartWords) (rows []groupRow, span []float64) {
	span = []float64{0}
	for i, res := range sc.Results {
		row := sc.Rows[i]
		kind := "exploratory"
		if sr.Candidates[i].Planned {
			kind = "named beforehand"
		}
		test := "test not computable"
		if row.Tested {
			test = "adjusted " + pText(row.PHolm)
		}
		rows = append(rows, groupRow{label: fmt.Sprintf("%s (%s): %s", shorten(row.Moderator, 28), kind, test)})
		for _, e := range res.Effects {
			r := groupRow{label: "      " + screenGroupLabel(res, e), reference: e.Reference,
				est: words.scale * e.Estimate, lo: words.scale * e.CILow, hi: words.scale * e.CIHigh}
			r.ok = finite(r.est)
			if r.ok {
				span = append(span, r.est)
				if finite(r.lo) && finite(r.hi) {
					span = append(span, r.lo, r.hi)
				}
			}
			rows = append(rows, r)
		}
	}
	return rows, span
}

// screenGroupLabel names a group under its moderator: the group and its
// rows, or a chosen value of a number moderator.
func screenGroupLabel(res *estimate.Result, e estimate.GroupEffect) string {
	if res.Moderator.Kind == estimate.ModeratorContinuous {
		return "at " + probeLabel(e)
	}
	return fmt.Sprintf("%s (n=%s)", shorten(e.Group, 30), count(e.Rows))
}

// screenChart adds the combined chart of a screen to its sheet.
func (b *sheetBuilder) screenChart(sr ScreenRun, sc *estimate.Screen) error {
	png, err := ScreenChart(sr, sc, ChartOptions{Randomized: sr.Base.Randomized})
	if err != nil {
		return err
	}
	w, h := screenChartSize(len(sc.Results) + countGroups(sc))
	b.sheet.Blocks = append(b.sheet.Blocks, Block{Key: "chart", Image: &Image{
		Title: fmt.Sprintf("%s in every group of the %d moderators tried, with %s confidence intervals and each moderator's adjusted test",
			capitalise(subjectWords(sr.RunFor(sc, 0), sc.Results[0])), len(sc.Results), level(sc.Results[0].Model.Alpha)),
		PNG: png, Width: w, Height: h,
	}})
	return nil
}

func countGroups(sc *estimate.Screen) int {
	n := 0
	for _, res := range sc.Results {
		n += len(res.Effects)
	}
	return n
}
