package estimate

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"
)

// The before-and-after design (METHODS §10) against R 4.2 lm +
// sandwich::vcovHC/vcovCL, on invented data: testdata/r/make_did.R writes
// did_panel.csv and did.txt (the grammar of reference.txt), and states
// every model, including the small-sample factor of CR1 with unit effects.

// didCases are make_did.R's cases, as specs.
func didCases() []rCase {
	bin := Moderator{Column: "high", Kind: ModeratorBinary}
	return []rCase{
		{"did_bin", "did_panel.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "coached"},
			Period: "post", Moderator: bin, Controls: []string{"age"}, Unit: "person"}},
		{"did_cat", "did_panel.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "programme", Kind: TreatmentLabels, Treated: "coached"},
			Period: "year", After: "2024", Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Cluster: "site", Unit: "person"}},
		{"did_cont", "did_panel.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "coached"},
			Period: "post", Moderator: Moderator{Column: "score", Kind: ModeratorContinuous}, Controls: []string{"age"}, Weights: "weight", Unit: "person"}},
		{"did_fe", "did_panel.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "coached"},
			Period: "post", Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Controls: []string{"age"}, Unit: "person", UnitEffects: true}},
		{"did_leads", "did_leads.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "coached"}, Period: "year", After: "2023",
			Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Controls: []string{"hours"}, Unit: "person"}},
		{"did_leads_fe", "did_leads.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "coached"}, Period: "year", After: "2023",
			Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Controls: []string{"hours"}, Unit: "person", UnitEffects: true}},
		{"did_fe_w", "did_panel.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "coached"},
			Period: "post", Moderator: bin, Weights: "weight", Cluster: "site", Unit: "person", UnitEffects: true}},
	}
}

// TestDiDAgainstR compares every reported number with the committed R
// values (R 4.2.2 lm + sandwich 3.0.2, make_did.R) at relative 1e-8.
func TestDiDAgainstR(t *testing.T) { compareDiDWithR(t, rDir) }

// TestDiDAgainstRLive reruns make_did.R and compares with what R computes
// now; in CI (CI=true) a missing R fails.
func TestDiDAgainstRLive(t *testing.T) { compareDiDWithR(t, runRScript(t, "make_did.R")) }

func compareDiDWithR(t *testing.T, dir string) {
	ref := readReference(t, filepath.Join(dir, "did.txt"))
	checked := compareCases(t, ref, dir, didCases(), func(s *Spec, vt string) {
		if vt != "CR1" {
			s.Cluster = ""
		}
		s.Bootstrap.Off = true
	})
	if checked < 5000 {
		t.Errorf("only %d reference values compared", checked)
	}
	t.Logf("%d reference values compared with R", checked)
}

// panel is invented before-and-after data with a known truth: units
// people in sites of 10, each measured once before (post 0) and once
// after (post 1); half the units get the programme (t), a region (text,
// the unit's own) changes its effect: north 1, south 3, west 2. Each unit
// has its own level, so unit effects matter.
func panel(units int, seed uint64) *Data { return panelYears(units, 2, seed) }

// panelYears is panel with each unit measured in years periods, the
// second half of them after the start.
func panelYears(units, years int, seed uint64) *Data {
	rng := rand.New(rand.NewPCG(seed, 2))
	regions := []string{"north", "south", "west"}
	effect := map[string]float64{"north": 1, "south": 3, "west": 2}
	n := units * years
	y, t, post, unit, site, age := make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n)
	region := make([]string, 0, n)
	for u := 0; u < units; u++ {
		level := 2 * rng.NormFloat64()
		ti := float64(rng.IntN(2))
		reg := regions[rng.IntN(3)]
		for yr := 0; yr < years; yr++ {
			p := 0.0
			if yr >= years/2 {
				p = 1
			}
			a := 30 + 10*rng.Float64()
			y = append(y, 10+level+0.5*ti+1.5*p+effect[reg]*ti*p+0.1*a+rng.NormFloat64())
			t = append(t, ti)
			post = append(post, p)
			unit = append(unit, float64(u))
			site = append(site, float64(u/10))
			age = append(age, a)
			region = append(region, reg)
		}
	}
	return &Data{Columns: []Column{
		{Name: "y", Num: y}, {Name: "t", Num: t}, {Name: "post", Num: post},
		{Name: "unit", Num: unit}, {Name: "site", Num: site}, {Name: "age", Num: age},
		{Name: "region", Text: region},
	}}
}

func panelSpec() Spec {
	return Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Period: "post",
		Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Controls: []string{"age"}, Unit: "unit"}
}

// TestDiDDefaults: a unit column clusters by unit (Bertrand, Duflo &
// Mullainathan 2004); unit effects name what they absorb; the design is
// described; the true effects (1, 3, 2) lie in their intervals.
func TestDiDDefaults(t *testing.T) {
	d := panel(600, 1)
	res, err := Fit(d, panelSpec())
	if err != nil {
		t.Fatal(err)
	}
	if res.Model.Variance != CR1 || res.Model.Clusters != 600 || res.Spec.Cluster != "unit" {
		t.Errorf("variance %s with %d clusters (%q), want CR1 by unit", res.Model.Variance, res.Model.Clusters, res.Spec.Cluster)
	}
	if res.Design == nil || res.Design.Kind != BeforeAfter || res.Design.Units != 600 || res.Design.After != "1" || res.Design.Cells[3] == 0 {
		t.Errorf("design %+v", res.Design)
	}
	s := panelSpec()
	s.UnitEffects = true
	fe, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"t", "region = south", "region = west", "t × region = south", "t × region = west"}
	if strings.Join(fe.Design.Absorbed, "|") != strings.Join(want, "|") {
		t.Errorf("absorbed %q, want %q", fe.Design.Absorbed, want)
	}
	if !fe.Design.UnitsNested || !fe.Design.UnitEffects {
		t.Errorf("design %+v: units are their own clusters", fe.Design)
	}
	truth := map[string]float64{"north": 1, "south": 3, "west": 2}
	for _, r := range []*Result{res, fe} {
		for _, e := range r.Effects {
			if !(e.CILow < truth[e.Group] && truth[e.Group] < e.CIHigh) {
				t.Errorf("effect in %s: %.3f [%.3f, %.3f] misses the truth %g", e.Group, e.Estimate, e.CILow, e.CIHigh, truth[e.Group])
			}
		}
	}
	// A trial's result has no design, so that its JSON is as before.
	tr, err := Fit(synth(200, 1), groupSpec())
	if err != nil {
		t.Fatal(err)
	}
	if b, _ := json.Marshal(tr); tr.Design != nil || strings.Contains(string(b), `"design"`) || strings.Contains(string(b), `"period"`) {
		t.Errorf("a trial's result mentions a design: %+v", tr.Design)
	}
}

// TestDiDBootstrap: with few clusters (20 sites) the wild cluster
// bootstrap runs on the before-and-after model as on a trial's.
func TestDiDBootstrap(t *testing.T) {
	s := panelSpec()
	s.Cluster = "site"
	s.Bootstrap.Draws = 199
	res, err := Fit(panel(200, 3), s)
	if err != nil {
		t.Fatal(err)
	}
	if res.Bootstrap == nil || res.Heterogeneity == nil || res.Heterogeneity.PBoot == nil || res.Effects[0].Boot == nil {
		t.Fatalf("no bootstrap: %+v", res.Bootstrap)
	}
}

// TestDiDRefusals: data that cannot give a difference in differences are
// refused with a message that names the column and says what to do.
func TestDiDRefusals(t *testing.T) {
	// set changes the cells of one column of a fresh panel.
	set := func(name string, f func(d *Data, i int, c *Column)) func() *Data {
		return func() *Data {
			d := panel(300, 1)
			c := d.col(name)
			for i := 0; i < c.Len(); i++ {
				f(d, i, c)
			}
			return d
		}
	}
	cases := []struct {
		name string
		data func() *Data
		spec func(s *Spec)
		kind error
		col  string
		says string
	}{
		{"one period", set("post", func(_ *Data, i int, c *Column) { c.Num[i] = 1 }), nil, ErrConstant, "post", "Every row used is from after the start"},
		{"not 0/1", set("post", func(_ *Data, i int, c *Column) { c.Num[i] *= 2 }), nil, ErrValues, "post", "should hold only 0"},
		{"after missing", set("post", func(*Data, int, *Column) {}), func(s *Spec) { s.After = "2024" }, ErrValues, "post", `"2024", chosen as after, does not appear`},
		{"after the earliest period", set("post", func(_ *Data, i int, c *Column) {
			if i == 0 {
				c.Num[i] = 2
			}
		}), func(s *Spec) { s.After = "0" }, ErrValues, "post", "is the earliest of the period column"},
		{"south's programme units lack rows after", set("y", func(d *Data, i int, c *Column) {
			if d.col("region").Text[i] == "south" && d.col("t").Num[i] == 1 && d.col("post").Num[i] == 1 {
				c.Num[i] = math.NaN()
			}
		}), nil, ErrNoContrast, "region", `in group "south" there are no rows of the programme's units after the start`},
		{"a unit of one row, HC3", set("y", func(_ *Data, i int, c *Column) {
			if i == 11 {
				c.Num[i] = math.NaN()
			}
		}), func(s *Spec) { s.UnitEffects, s.Variance, s.Cluster = true, HC3, "" }, ErrLeverage, "unit", "row 11 has leverage 1 (with unit effects, the only row of a unit"},
		{"unit effects without unit", set("y", func(*Data, int, *Column) {}), func(s *Spec) { s.Unit, s.UnitEffects = "", true }, ErrSpec, "", "Unit effects need a unit column"},
		{"units seen once", set("y", func(*Data, int, *Column) {}), func(s *Spec) { s.Unit, s.UnitEffects, s.Controls = "age", true, nil },
			ErrNoContrast, "age", `"t × post", "t × post × region = south" and "t × post × region = west" do not change within any unit of "age"`},
	}
	for _, c := range cases {
		s := panelSpec()
		if c.spec != nil {
			c.spec(&s)
		}
		d := c.data()
		_, err := Fit(d, s)
		var e *Error
		if !errors.As(err, &e) || !errors.Is(err, c.kind) || e.Column != c.col || !strings.Contains(e.Message, c.says) {
			t.Errorf("%s: got %v", c.name, err)
		}
		// The streamed fit hands the data back, so that Fit says it; a
		// setting's problem it says itself, as Fit does.
		if _, err := FitStream(context.Background(), &sliced{d: d, size: 100}, s); !errors.Is(err, ErrNeedsMemory) && (c.kind != ErrSpec || !errors.Is(err, ErrSpec)) {
			t.Errorf("%s: the streamed fit gives %v", c.name, err)
		}
	}
}

// TestFitStreamDiD: the streamed fit of a before-and-after design, with
// and without unit effects, gives Fit's results, every number to 1e-10
// relative; with unit effects the survey, the unit means, the
// factorization and the residuals are four passes.
func TestFitStreamDiD(t *testing.T) {
	d := panel(1500, 7)
	labels := panel(1500, 7)
	yr := Column{Name: "year", Text: make([]string, 3000)}
	for i, p := range labels.col("post").Num {
		yr.Text[i] = map[bool]string{true: "2024", false: "2023"}[p == 1]
	}
	labels.Columns = append(labels.Columns, yr)
	w := Column{Name: "w", Num: make([]float64, 3000)}
	for i := range w.Num {
		w.Num[i] = 0.5 + float64(i%7)/7
	}
	d.Columns = append(d.Columns, w)
	// Both rows of one unit missing; a unit of one row has leverage 1
	// with unit effects (TestDiDRefusals).
	y := d.col("y")
	y.Num[10], y.Num[11] = math.NaN(), math.NaN()
	cases := map[string]struct {
		data   *Data
		change func(*Spec)
	}{
		"CR1 by unit":               {d, func(*Spec) {}},
		"unit effects, 6 periods":   {panelYears(300, 6, 9), func(s *Spec) { s.UnitEffects = true }},
		"HC3":                       {d, func(s *Spec) { s.Variance = HC3 }},
		"labelled period, by site":  {labels, func(s *Spec) { s.Period, s.After, s.Cluster = "year", "2024", "site" }},
		"unit effects":              {d, func(s *Spec) { s.UnitEffects = true }},
		"unit effects, HC2":         {d, func(s *Spec) { s.UnitEffects, s.Variance = true, HC2 }},
		"unit effects, classical":   {d, func(s *Spec) { s.UnitEffects, s.Variance = true, Classical }},
		"unit effects, HC1 weights": {d, func(s *Spec) { s.UnitEffects, s.Variance, s.Weights = true, HC1, "w" }},
		"unit effects, by site":     {d, func(s *Spec) { s.UnitEffects, s.Cluster, s.Weights = true, "site", "w" }},
		// Clusters of one row each: units are not nested in them, so
		// CR1's factor counts the unit effects.
		"unit effects, not nested": {d, func(s *Spec) { s.UnitEffects, s.Cluster, s.Controls = true, "age", nil }},
	}
	for name, c := range cases {
		t.Run(name, func(t *testing.T) {
			s := panelSpec()
			s.Bootstrap.Off = true
			c.change(&s)
			want, err := Fit(c.data, s)
			if err != nil {
				t.Fatal(err)
			}
			src := &sliced{d: c.data, size: 777}
			got, err := FitStream(context.Background(), src, s)
			if err != nil {
				t.Fatal(err)
			}
			passes := 3
			if s.UnitEffects {
				passes = 4
			}
			if src.passes != passes {
				t.Errorf("%d passes, want %d", src.passes, passes)
			}
			compareResults(t, name, got, want)
		})
	}
}

// TestFitStreamUnitEffectsLarge: 200,000 rows of 100,000 units, unit
// effects and CR1 by unit: the streamed fit equals Fit to 1e-10.
func TestFitStreamUnitEffectsLarge(t *testing.T) {
	if testing.Short() {
		t.Skip("200,000 rows")
	}
	d := panel(100000, 11)
	s := panelSpec()
	s.UnitEffects = true
	want, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	got, err := FitStream(context.Background(), &sliced{d: d, size: 4096}, s)
	if err != nil {
		t.Fatal(err)
	}
	compareResults(t, "200,000 rows", got, want)
}

// TestLeadsHandedBack: a period column of more than two values is fitted
// in memory; the pipeline then reads the file whole.
func TestLeadsHandedBack(t *testing.T) {
	d := loadCSV(t, filepath.Join(rDir, "did_leads.csv"))
	s := Spec{Outcome: "earnings", Treatment: Treatment{Column: "coached"}, Period: "year", After: "2023",
		Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Unit: "person"}
	if _, err := FitStream(context.Background(), &sliced{d: d, size: 100}, s); !errors.Is(err, ErrNeedsMemory) {
		t.Errorf("the streamed fit gives %v", err)
	}
	res, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	if res.Leads == nil || len(res.Leads.Leads) != 2 || res.Leads.Reference != "2022" {
		t.Errorf("leads %+v", res.Leads)
	}
}
