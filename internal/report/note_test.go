package report

import (
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"slopewise/internal/estimate"
)

var update = flag.Bool("update", false, "rewrite the golden notes in testdata/report/notes/")

// scenario is an invented study generated with a known truth: an outcome
// that responds to a treatment by a different amount in each moderator
// group (or along a continuous moderator).
type scenario struct {
	n          int
	seed       uint64
	groups     []string  // moderator groups; nil for a continuous moderator
	effects    []float64 // true effect per group; for continuous: [at 0, per unit]
	noise      float64
	dose       bool // continuous treatment
	binaryY    bool // 0/1 outcome
	labels     bool // treatment as two labels
	clusters   int
	missing    int // rows with a blank outcome
	modMean    float64
	modSD      float64
	randomized bool
	planned    bool
	tried      int
	probes     []float64
	// noBootstrap turns the wild cluster bootstrap off.
	noBootstrap bool
	// bend adds a hump to a continuous moderator's effect:
	// bend·(1 − ((m − modMean)/(1.5·modSD))²).
	bend float64
	// margin is the smallest difference that matters.
	margin float64
}

func (s scenario) data() *estimate.Data {
	rng := rand.New(rand.NewPCG(s.seed, 99))
	var y, t, m, age, site []float64
	var g, arm []string
	for i := 0; i < s.n; i++ {
		ti := float64(i % 2)
		if s.dose {
			ti = float64(rng.IntN(5))
		}
		a := 20 + 40*rng.Float64()
		var eff float64
		if s.groups != nil {
			gi := (i / 2) % len(s.groups)
			g = append(g, s.groups[gi])
			eff = s.effects[gi]
		} else {
			mi := s.modMean + s.modSD*rng.NormFloat64()
			m = append(m, mi)
			z := (mi - s.modMean) / (1.5 * s.modSD)
			eff = s.effects[0] + s.effects[1]*mi + s.bend*(1-z*z)
		}
		yi := 10 + eff*ti + 0.05*a + s.noise*rng.NormFloat64()
		if s.binaryY {
			p := 0.3 + eff*ti
			yi = 0
			if rng.Float64() < p {
				yi = 1
			}
		}
		if i < s.missing {
			yi = math.NaN()
		}
		y = append(y, yi)
		t = append(t, ti)
		arm = append(arm, map[bool]string{true: "coached", false: "waitlist"}[ti == 1])
		age = append(age, a)
		site = append(site, float64(i%max(s.clusters, 1)))
	}
	d := &estimate.Data{Columns: []estimate.Column{
		{Name: "earnings", Num: y}, {Name: "coached", Num: t}, {Name: "arm", Text: arm},
		{Name: "age", Num: age}, {Name: "site", Num: site},
	}}
	if s.groups != nil {
		d.Columns = append(d.Columns, estimate.Column{Name: "region", Text: g})
	} else {
		d.Columns = append(d.Columns, estimate.Column{Name: "baseline", Num: m})
	}
	return d
}

func (s scenario) run() Run {
	spec := estimate.Spec{Outcome: "earnings", Treatment: estimate.Treatment{Column: "coached"}, Controls: []string{"age"}}
	if s.dose {
		spec.Treatment.Kind = estimate.TreatmentContinuous
	}
	if s.labels {
		spec.Treatment = estimate.Treatment{Column: "arm", Kind: estimate.TreatmentLabels, Treated: "coached"}
	}
	switch {
	case s.groups == nil:
		spec.Moderator = estimate.Moderator{Column: "baseline", Kind: estimate.ModeratorContinuous, Probes: s.probes}
	case len(s.groups) == 2:
		spec.Moderator = estimate.Moderator{Column: "region", Kind: estimate.ModeratorBinary}
	default:
		spec.Moderator = estimate.Moderator{Column: "region", Kind: estimate.ModeratorCategorical}
	}
	if s.clusters > 0 {
		spec.Cluster = "site"
	}
	spec.Bootstrap.Off = s.noBootstrap
	spec.EquivalenceMargin = s.margin
	r := Run{File: "coaching.xlsx", Sheet: "Participants", Spec: spec, Randomized: s.randomized,
		Planned: s.planned, ModeratorsTried: s.tried, Version: "test",
		Time: time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)}
	if s.tried > 1 {
		r.AdjustedP = 0.21
	}
	return r
}

func (s scenario) fit(t *testing.T) (Run, *estimate.Result) {
	t.Helper()
	run := s.run()
	res, err := estimate.Fit(s.data(), run.Spec)
	if err != nil {
		t.Fatal(err)
	}
	return run, res
}

// noteScenarios are the situations the note must read right in: binary,
// categorical and continuous moderators; binary and continuous treatments;
// randomised or not; a clear difference, an unclear one, and an unclear
// one the data could not have detected; a 0/1 outcome; few clusters, with
// the wild cluster bootstrap on and off; many moderators tried.
var noteScenarios = map[string]scenario{
	"binary-clear-randomized":         {n: 800, seed: 1, groups: []string{"rural", "urban"}, effects: []float64{1, 4}, noise: 3, randomized: true, planned: true},
	"binary-unclear-precise":          {n: 20000, seed: 2, groups: []string{"rural", "urban"}, effects: []float64{2, 2.05}, noise: 3, randomized: true, planned: true},
	"binary-unclear-imprecise":        {n: 120, seed: 3, groups: []string{"rural", "urban"}, effects: []float64{1, 2}, noise: 6, randomized: true, planned: true},
	"binary-observational":            {n: 800, seed: 4, groups: []string{"rural", "urban"}, effects: []float64{1, 4}, noise: 3, planned: true},
	"binary-dropped-rows":             {n: 400, seed: 5, groups: []string{"rural", "urban"}, effects: []float64{1, 3}, noise: 3, missing: 60, randomized: true, planned: true},
	"categorical-clear":               {n: 1200, seed: 6, groups: []string{"coast", "hills", "plains", "valley"}, effects: []float64{1, 3, 1.5, 5}, noise: 3, randomized: true, planned: true},
	"categorical-unclear-exploratory": {n: 300, seed: 7, groups: []string{"coast", "hills", "plains"}, effects: []float64{2, 2.2, 1.9}, noise: 4, randomized: true},
	"continuous-clear-partial-jn":     {n: 1000, seed: 8, effects: []float64{-1, 0.5}, noise: 3, modMean: 5, modSD: 3, randomized: true, planned: true},
	"continuous-unclear":              {n: 150, seed: 9, effects: []float64{2, 0.05}, noise: 5, modMean: 5, modSD: 2, randomized: true, planned: true},
	"continuous-extrapolated-probes":  {n: 600, seed: 10, effects: []float64{0, 0.4}, noise: 3, modMean: 5, modSD: 2, randomized: true, planned: true, probes: []float64{2, 5, 30}},
	"dose-treatment":                  {n: 900, seed: 11, groups: []string{"rural", "urban"}, effects: []float64{0.5, 1.5}, noise: 3, dose: true, randomized: true, planned: true},
	"binary-outcome-points":           {n: 3000, seed: 12, groups: []string{"rural", "urban"}, effects: []float64{0.05, 0.15}, binaryY: true, randomized: true, planned: true},
	"few-clusters-labels":             {n: 600, seed: 13, groups: []string{"rural", "urban"}, effects: []float64{1, 3}, noise: 3, clusters: 8, labels: true, randomized: true, planned: true},
	"many-moderators-tried":           {n: 800, seed: 14, groups: []string{"rural", "urban"}, effects: []float64{1, 2.5}, noise: 3, randomized: true, tried: 6},
	"few-clusters-no-bootstrap":       {n: 600, seed: 13, groups: []string{"rural", "urban"}, effects: []float64{1, 3}, noise: 3, clusters: 8, labels: true, randomized: true, planned: true, noBootstrap: true},
	"binary-equivalent":               {n: 20000, seed: 2, groups: []string{"rural", "urban"}, effects: []float64{2, 2.05}, noise: 3, randomized: true, planned: true, margin: 0.5},
	"binary-not-shown-equivalent":     {n: 120, seed: 3, groups: []string{"rural", "urban"}, effects: []float64{1, 2}, noise: 6, randomized: true, planned: true, margin: 0.5},
	"categorical-equivalence-mixed":   {n: 3000, seed: 6, groups: []string{"coast", "hills", "plains"}, effects: []float64{2, 2.1, 3.5}, noise: 3, randomized: true, planned: true, margin: 0.8},
	"continuous-equivalence":          {n: 4000, seed: 17, effects: []float64{2, 0.02}, noise: 3, modMean: 5, modSD: 2, randomized: true, planned: true, margin: 1},
	"few-clusters-equivalence":        {n: 600, seed: 13, groups: []string{"rural", "urban"}, effects: []float64{2, 2.1}, noise: 3, clusters: 8, randomized: true, planned: true, margin: 1.5},
	"continuous-curved":               {n: 2000, seed: 16, effects: []float64{0.5, 0.2}, noise: 3, modMean: 5, modSD: 2, bend: 2.5, randomized: true, planned: true},
	"continuous-few-clusters":         {n: 700, seed: 15, effects: []float64{0.5, 0.3}, noise: 4, modMean: 5, modSD: 2, clusters: 13, randomized: true, planned: true},
	"continuous-six-clusters":         {n: 300, seed: 18, effects: []float64{0.5, 0.3}, noise: 4, modMean: 5, modSD: 2, clusters: 6, randomized: true, planned: true},
	"categorical-five-clusters":       {n: 600, seed: 19, groups: []string{"coast", "delta", "hills", "lakes", "plains", "valley"}, effects: []float64{1, 2, 1.5, 2, 3, 1}, noise: 3, clusters: 5, randomized: true, planned: true},
}

// TestNoteGolden compares each note and its cautions with the reviewed text
// in testdata/report/notes/<situation>.txt. Run with -update to rewrite
// them after reading the differences.
func TestNoteGolden(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "report", "notes")
	if *update {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	for name, s := range noteScenarios {
		t.Run(name, func(t *testing.T) {
			run, res := s.fit(t)
			note := Note(run, res)
			var b strings.Builder
			fmt.Fprintf(&b, "%s\n\nCautions:\n", wrap(note, 78))
			for _, c := range Cautions(run, res) {
				fmt.Fprintf(&b, "- %s\n", wrap(c, 76))
			}
			compareGolden(t, filepath.Join(dir, name+".txt"), b.String())
		})
	}
	for name, s := range screenScenarios {
		t.Run(name, func(t *testing.T) {
			sr, sc := s.fit(t)
			compareGolden(t, filepath.Join(dir, name+".txt"), screenGolden(sr, sc))
		})
	}
}

// compareGolden compares got with the reviewed text at path, or rewrites
// it with -update.
func compareGolden(t *testing.T, path, got string) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./internal/report -run TestNoteGolden -update, then review the files)", err)
	}
	if got != string(want) {
		t.Errorf("note differs from %s:\n--- got\n%s\n--- want\n%s", path, got, want)
	}
}

// TestNoteWordingRules checks the rules of METHODS §9 in every situation.
func TestNoteWordingRules(t *testing.T) {
	for name, s := range noteScenarios {
		run, res := s.fit(t)
		note := Note(run, res)
		lower := strings.ToLower(note)
		for _, banned := range []string{"no difference", "significant", "no effect", "proves", "caused by"} {
			if strings.Contains(lower, banned) {
				t.Errorf("%s: the note says %q:\n%s", name, banned, note)
			}
		}
		if !run.Randomized && strings.Contains(lower, " effect") {
			t.Errorf("%s: 'effect' in a note on a treatment not randomly assigned:\n%s", name, note)
		}
		if !strings.Contains(note, "CI") {
			t.Errorf("%s: no interval in the note", name)
		}
		if !strings.Contains(note, "rows") || !strings.Contains(note, "Standard errors") || !strings.Contains(note, "detected reliably") {
			t.Errorf("%s: the note must give rows used, the standard-error type and the minimum detectable difference:\n%s", name, note)
		}
		if run.tried() > 1 && !strings.Contains(note, "adjusted p") {
			t.Errorf("%s: an exploratory moderator among several without its adjusted p:\n%s", name, note)
		}
	}
}

// wrap breaks text into lines of at most width characters, for review.
func wrap(s string, width int) string {
	var b strings.Builder
	line := 0
	for i, word := range strings.Fields(s) {
		if i > 0 {
			if line+1+len(word) > width {
				b.WriteString("\n  ")
				line = 2
			} else {
				b.WriteByte(' ')
				line++
			}
		}
		b.WriteString(word)
		line += len(word)
	}
	return b.String()
}
