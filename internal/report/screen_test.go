package report

import (
	"bytes"
	"context"
	"fmt"
	"image/png"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"slopewise/internal/estimate"
)

// screenScenario is an invented study with several candidate moderators:
// region (four groups), first_time (yes/no), baseline (a number) and age
// (a number with no part in the effect). The effect of coaching differs
// by region by regionGap between the first and last region, and by nothing
// else.
type screenScenario struct {
	n          int
	seed       uint64
	regionGap  float64
	clusters   int
	planned    []string
	randomized bool
}

func (s screenScenario) data() *estimate.Data {
	rng := rand.New(rand.NewPCG(s.seed, 61))
	regions := []string{"coast", "hills", "plains", "valley"}
	var y, t, base, age, site []float64
	var region, first []string
	for i := range s.n {
		ti := float64(i % 2)
		r := (i / 2) % 4
		b := 50 + 10*rng.NormFloat64()
		a := 20 + 40*rng.Float64()
		effect := 2 + s.regionGap*float64(r)/3
		y = append(y, 10+effect*ti+0.05*b+3*rng.NormFloat64())
		t = append(t, ti)
		region = append(region, regions[r])
		first = append(first, map[bool]string{true: "yes", false: "no"}[rng.IntN(2) == 0])
		base = append(base, b)
		age = append(age, a)
		site = append(site, float64(i%max(s.clusters, 1)))
	}
	return &estimate.Data{Columns: []estimate.Column{
		{Name: "earnings", Num: y}, {Name: "coached", Num: t}, {Name: "region", Text: region},
		{Name: "first_time", Text: first}, {Name: "baseline", Num: base}, {Name: "age", Num: age}, {Name: "site", Num: site},
	}}
}

func (s screenScenario) fit(t *testing.T) (ScreenRun, *estimate.Screen) {
	t.Helper()
	spec := estimate.Spec{Outcome: "earnings", Treatment: estimate.Treatment{Column: "coached"}}
	if s.clusters > 0 {
		spec.Cluster = "site"
	}
	sr := ScreenRun{Base: Run{File: "coaching.xlsx", Sheet: "Participants", Spec: spec, Randomized: s.randomized,
		Version: "test", Time: time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)}}
	planned := map[string]bool{}
	for _, p := range s.planned {
		planned[p] = true
	}
	for _, m := range []estimate.Moderator{{Column: "region", Kind: estimate.ModeratorCategorical}, {Column: "first_time", Kind: estimate.ModeratorBinary},
		{Column: "baseline", Kind: estimate.ModeratorContinuous}, {Column: "age", Kind: estimate.ModeratorContinuous}} {
		sr.Candidates = append(sr.Candidates, Candidate{Moderator: m, Planned: planned[m.Column]})
	}
	sc, err := estimate.FitScreen(context.Background(), s.data(), spec, sr.Moderators(), nil)
	if err != nil {
		t.Fatal(err)
	}
	return sr, sc
}

// screenScenarios are the screens the note must read right in: a planned
// moderator with a clear difference among exploratory ones; nothing clear
// and none planned, with few clusters (the bootstrap's p-values); a clear
// exploratory one; every moderator planned, not randomised.
var screenScenarios = map[string]screenScenario{
	"screen-planned-clear":             {n: 1600, seed: 1, regionGap: 3, planned: []string{"region"}, randomized: true},
	"screen-exploratory-few-clusters":  {n: 600, seed: 2, regionGap: 3, clusters: 10, randomized: true},
	"screen-all-planned-observational": {n: 1200, seed: 3, regionGap: 2, planned: []string{"region", "first_time", "baseline", "age"}},
	"screen-exploratory-clear":         {n: 2000, seed: 5, regionGap: 2.5, randomized: true},
}

// screenGolden is the text compared with testdata/report/notes/<name>.txt.
func screenGolden(sr ScreenRun, sc *estimate.Screen) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s\n\nCautions:\n", wrap(ScreenNote(sr, sc), 78))
	for _, c := range ScreenCautions(sr, sc) {
		fmt.Fprintf(&b, "- %s\n", wrap(c, 76))
	}
	return b.String()
}

// TestScreenNoteWordingRules checks the rules of METHODS §6 and §9 in
// every screen: no banned words, the number tried, and every exploratory
// moderator with its adjusted p-value.
func TestScreenNoteWordingRules(t *testing.T) {
	for name, s := range screenScenarios {
		sr, sc := s.fit(t)
		note := ScreenNote(sr, sc)
		lower := strings.ToLower(note)
		for _, banned := range []string{"no difference", "significant", "no effect", "proves", "caused by"} {
			if strings.Contains(lower, banned) {
				t.Errorf("%s: the note says %q:\n%s", name, banned, note)
			}
		}
		if !sr.Base.Randomized && strings.Contains(lower, " effect") {
			t.Errorf("%s: 'effect' in a note on a treatment not randomly assigned:\n%s", name, note)
		}
		if !strings.Contains(note, fmt.Sprintf("for the %d tried", len(sc.Rows))) {
			t.Errorf("%s: the note does not say how many were tried:\n%s", name, note)
		}
		for i, c := range sr.Candidates {
			if !c.Planned && !strings.Contains(note, fmt.Sprintf("for %s, adjusted %s", sc.Rows[i].Moderator, pText(sc.Rows[i].PHolm))) {
				t.Errorf("%s: exploratory %s without its adjusted p:\n%s", name, sc.Rows[i].Moderator, note)
			}
		}
		for i := range sc.Results {
			if d := Note(sr.RunFor(sc, i), sc.Results[i]); !sr.Candidates[i].Planned && !strings.Contains(d, "adjusted p") {
				t.Errorf("%s: the note of exploratory %s lacks its adjusted p:\n%s", name, sc.Rows[i].Moderator, d)
			}
		}
	}
}

// TestScreenSheet checks the layout of a screen's sheet: the summary of
// every moderator at the top, then each moderator's own blocks, kept apart
// by their keys, with a chart each.
func TestScreenSheet(t *testing.T) {
	sr, sc := screenScenarios["screen-exploratory-few-clusters"].fit(t)
	s, err := BuildScreen(sr, sc)
	if err != nil {
		t.Fatal(err)
	}
	var keys []string
	images := 0
	seen := map[string]bool{}
	for _, b := range s.Blocks {
		keys = append(keys, b.Key)
		if seen[b.Key] {
			t.Errorf("key %q twice", b.Key)
		}
		seen[b.Key] = true
		if b.Image != nil {
			images++
		}
	}
	if strings.Join(keys[:6], ",") != "headline,chart,screen,note,asked,data" || keys[6] != "moderator:region" || !seen["effects:age"] || !seen["chart:baseline"] {
		t.Errorf("block keys %v", keys)
	}
	if images != 5 {
		t.Errorf("%d charts, want the combined one and one a moderator", images)
	}
	summary := blockByKey(s, "screen").Rows
	if len(summary) != 1+4+1 || summary[0][6].Text != "Bootstrap p-value" || summary[0][7].Text != "Holm-adjusted p" {
		t.Errorf("summary: %d rows, heading %v", len(summary), summary[0])
	}
	for i, row := range sc.Rows {
		cells := summary[1+i]
		if cells[0].Text != row.Moderator || cells[7].Value != row.PHolm || cells[8].Value != row.QBH || cells[9].Value != row.MDD {
			t.Errorf("summary row %d: %v", i, cells)
		}
	}
	if !strings.Contains(string(s.Spec), `"candidates"`) || s.Name != "Moderators" {
		t.Errorf("sheet %q, spec %s", s.Name, s.Spec)
	}
}

// TestScreenChartHoldsEveryGroup checks that the combined chart at the top
// of a screen's sheet has a row for every group of every moderator tried,
// each with its effect and interval, under a title row a moderator that
// gives its adjusted test and says in words whether it was named
// beforehand; and that the picture has the size the sheet reserves.
func TestScreenChartHoldsEveryGroup(t *testing.T) {
	for name, s := range screenScenarios {
		sr, sc := s.fit(t)
		words := wordsFor(sc.Results[0], ChartOptions{Randomized: sr.Base.Randomized})
		rows, _ := screenRows(sr, sc, words)
		r := 0
		for i, res := range sc.Results {
			title := rows[r]
			kind := "exploratory"
			if sr.Candidates[i].Planned {
				kind = "named beforehand"
			}
			if title.ok || !strings.HasPrefix(title.label, sc.Rows[i].Moderator+" ("+kind+")") || !strings.Contains(title.label, "adjusted "+pText(sc.Rows[i].PHolm)) {
				t.Errorf("%s: title row %q for %s", name, title.label, sc.Rows[i].Moderator)
			}
			r++
			for _, e := range res.Effects {
				g := rows[r]
				if g.est != words.scale*e.Estimate || g.lo != words.scale*e.CILow || g.hi != words.scale*e.CIHigh || g.reference != e.Reference {
					t.Errorf("%s: %s %s drawn as %+v", name, sc.Rows[i].Moderator, e.Group, g)
				}
				r++
			}
		}
		if r != len(rows) {
			t.Errorf("%s: %d rows drawn, %d expected", name, len(rows), r)
		}
		sheet, err := BuildScreen(sr, sc)
		if err != nil {
			t.Fatal(err)
		}
		im := blockByKey(sheet, "chart").Image
		cfg, err := png.DecodeConfig(bytes.NewReader(im.PNG))
		if err != nil || cfg.Width != im.Width || cfg.Height != im.Height || cfg.Height < 30*len(rows) {
			t.Errorf("%s: picture %dx%d (%v), the sheet reserves %dx%d for %d rows", name, cfg.Width, cfg.Height, err, im.Width, im.Height, len(rows))
		}
	}
}
