package estimate

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// synth is a small generated dataset with a known structure: outcome y,
// binary treatment t, a three-group moderator g, a continuous moderator m,
// controls x1 and region (text), clusters site and weights w.
func synth(n int, seed uint64) *Data {
	rng := rand.New(rand.NewPCG(seed, 1))
	groups := []string{"north", "south", "west"}
	regions := []string{"hill", "coast"}
	var y, t, m, x1, w, site []float64
	var g, region []string
	for i := 0; i < n; i++ {
		ti := float64(i % 2)
		gi := groups[(i/2)%3]
		mi := 10 + 5*rng.NormFloat64()
		xi := rng.NormFloat64()
		effect := 1.0
		if gi == "south" {
			effect = 2.5
		}
		y = append(y, 3+effect*ti+0.2*mi+0.1*ti*mi+0.5*xi+rng.NormFloat64())
		t = append(t, ti)
		g = append(g, gi)
		m = append(m, mi)
		x1 = append(x1, xi)
		w = append(w, 0.5+rng.Float64())
		site = append(site, float64(i%20))
		region = append(region, regions[rng.IntN(2)])
	}
	return &Data{Columns: []Column{
		{Name: "y", Num: y}, {Name: "t", Num: t}, {Name: "g", Text: g},
		{Name: "m", Num: m}, {Name: "x1", Num: x1}, {Name: "w", Num: w},
		{Name: "site", Num: site}, {Name: "region", Text: region},
	}}
}

func (d *Data) col(name string) *Column {
	c, err := d.column(name, "test")
	if err != nil {
		panic(err)
	}
	return c
}

func groupSpec() Spec {
	return Spec{Outcome: "y", Treatment: Treatment{Column: "t"},
		Moderator: Moderator{Column: "g", Kind: ModeratorCategorical}, Controls: []string{"x1"}}
}

func contSpec() Spec {
	return Spec{Outcome: "y", Treatment: Treatment{Column: "t"},
		Moderator: Moderator{Column: "m", Kind: ModeratorContinuous}, Controls: []string{"x1"}}
}

// TestDegenerate checks that each kind of degenerate data gives a typed
// error with a plain message naming the problem, never a panic or a NaN.
func TestDegenerate(t *testing.T) {
	cases := []struct {
		name   string
		data   func() *Data
		spec   func() Spec
		cause  error
		column string
		words  string // must appear in the message
		rows   []int
	}{
		{"outcome too large to compute with", func() *Data {
			d := synth(60, 41)
			d.col("y").Num[7] = 3e300
			return d
		}, contSpec, ErrValues, "y", "reaches 3e+300 (row 8), too large a number to compute with. Rescale the column", nil},
		{"constant moderator", func() *Data {
			d := synth(60, 1)
			for i := range d.col("m").Num {
				d.col("m").Num[i] = 4
			}
			return d
		}, contSpec, ErrConstant, "m", "is 4 in every row used", nil},
		{"moderator constant among treated rows", func() *Data {
			d := synth(60, 2)
			for i, tv := range d.col("t").Num {
				if tv == 1 {
					d.col("m").Num[i] = 7
				}
			}
			return d
		}, contSpec, ErrNoContrast, "m", "never varies among treated rows", nil},
		{"group entirely treated", func() *Data {
			d := synth(60, 3)
			for i, g := range d.col("g").Text {
				if g == "west" {
					d.col("t").Num[i] = 1
				}
			}
			return d
		}, groupSpec, ErrNoContrast, "g", `in group "west" all 20 rows are treated`, nil},
		{"fewer rows than terms", func() *Data {
			d := synth(6, 4)
			return d
		}, func() Spec { s := groupSpec(); s.Controls = nil; return s }, ErrTooFewRows, "", "6 terms but only 6 rows", nil},
		{"group with one row", func() *Data {
			d := synth(60, 5)
			d.col("g").Text[7] = "east"
			return d
		}, groupSpec, ErrNoContrast, "g", `group "east" has only 1 row (row 8)`, []int{8}},
		{"all weights zero", func() *Data {
			d := synth(60, 6)
			for i := range d.col("w").Num {
				d.col("w").Num[i] = 0
			}
			return d
		}, func() Spec { s := groupSpec(); s.Weights = "w"; return s }, ErrNoRows, "w", `60 with a weight of 0 or less ("w")`, nil},
		{"one cluster", func() *Data {
			d := synth(60, 7)
			for i := range d.col("site").Num {
				d.col("site").Num[i] = 3
			}
			return d
		}, func() Spec { s := groupSpec(); s.Cluster = "site"; return s }, ErrFewClusters, "site", "one cluster", nil},
		{"leverage 1 under HC3", func() *Data {
			d := synth(60, 8)
			d.col("region").Text[11] = "island"
			return d
		}, func() Spec { s := groupSpec(); s.Controls = []string{"x1", "region"}; return s }, ErrLeverage, "", "row 12 has leverage 1", []int{12}},
		{"perfectly collinear controls", func() *Data {
			d := synth(60, 9)
			x2 := make([]float64, 60)
			for i, v := range d.col("x1").Num {
				x2[i] = 3*v - 1
			}
			d.Columns = append(d.Columns, Column{Name: "x2", Num: x2})
			return d
		}, func() Spec { s := groupSpec(); s.Controls = []string{"x1", "x2"}; return s }, ErrAliased, "", `is a combination of`, nil},
		{"constant outcome", func() *Data {
			d := synth(60, 10)
			for i := range d.col("y").Num {
				d.col("y").Num[i] = 5
			}
			return d
		}, groupSpec, ErrConstant, "y", "is 5 in every row used", nil},
		{"outcome computed from the model's columns", func() *Data {
			d := synth(60, 11)
			for i := range d.col("y").Num {
				d.col("y").Num[i] = 2 + d.col("t").Num[i] + 0.5*d.col("x1").Num[i]
			}
			return d
		}, groupSpec, ErrExactFit, "", "reproduces the outcome exactly", nil},
		{"treatment value outside 0/1", func() *Data {
			d := synth(60, 12)
			d.col("t").Num[4] = 2
			return d
		}, groupSpec, ErrValues, "t", "row 5 holds 2", []int{5}},
		{"treatment constant", func() *Data {
			d := synth(60, 13)
			for i := range d.col("t").Num {
				d.col("t").Num[i] = 1
			}
			return d
		}, groupSpec, ErrConstant, "t", "same value in every row", nil},
		{"unknown column", func() *Data { return synth(60, 14) },
			func() Spec { s := groupSpec(); s.Outcome = "score"; return s }, ErrSpec, "score", `"score" is not in the data`, nil},
		{"text outcome column", func() *Data { return synth(60, 15) },
			func() Spec { s := groupSpec(); s.Outcome = "region"; return s }, ErrSpec, "region", "holds text, not numbers", nil},
		{"binary moderator with three values", func() *Data { return synth(60, 16) },
			func() Spec { s := groupSpec(); s.Moderator.Kind = ModeratorBinary; return s }, ErrValues, "g", "has 3 different values", nil},
		{"moderator with one group", func() *Data {
			d := synth(60, 17)
			for i := range d.col("g").Text {
				d.col("g").Text[i] = "north"
			}
			return d
		}, groupSpec, ErrConstant, "g", "only one group", nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res, err := Fit(c.data(), c.spec())
			if res != nil {
				t.Fatalf("got a result, want an error")
			}
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("error %v (%T) is not an *Error", err, err)
			}
			if !errors.Is(err, c.cause) {
				t.Errorf("cause %v, want %v", e.Err, c.cause)
			}
			if !strings.Contains(e.Message, c.words) {
				t.Errorf("message %q does not say %q", e.Message, c.words)
			}
			if c.column != "" && e.Column != c.column {
				t.Errorf("column %q, want %q", e.Column, c.column)
			}
			if c.rows != nil && joinInts(e.Rows) != joinInts(c.rows) {
				t.Errorf("rows %v, want %v", e.Rows, c.rows)
			}
		})
	}
}

// TestCollinearControlNamed checks that the aliased-term report names the
// control and what it duplicates.
func TestCollinearControlNamed(t *testing.T) {
	d := synth(60, 9)
	x2 := make([]float64, 60)
	for i, v := range d.col("x1").Num {
		x2[i] = 3*v - 1
	}
	d.Columns = append(d.Columns, Column{Name: "x2", Num: x2})
	s := groupSpec()
	s.Controls = []string{"x1", "x2"}
	_, err := Fit(d, s)
	var e *Error
	if !errors.As(err, &e) || len(e.Aliased) != 1 {
		t.Fatalf("want one aliased term, got %v", err)
	}
	a := e.Aliased[0]
	names := map[string]bool{a.Term: true}
	for _, w := range a.With {
		names[w] = true
	}
	if !names["x1"] || !names["x2"] || !strings.Contains(a.Reason, "the control") {
		t.Errorf("aliased term %+v should involve the controls x1 and x2", a)
	}
}

// TestLeverageFallback checks that the person can agree to HC1 when HC3 is
// undefined, and that the result says so.
func TestLeverageFallback(t *testing.T) {
	d := synth(60, 8)
	d.col("region").Text[11] = "island"
	s := groupSpec()
	s.Controls = []string{"x1", "region"}
	s.LeverageFallback = HC1
	res, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	if res.Model.Variance != HC1 || len(res.Notes) == 0 || !strings.Contains(res.Notes[0], "row 12") {
		t.Errorf("variance %s, notes %q: want HC1 and a note naming row 12", res.Model.Variance, res.Notes)
	}
	s.LeverageFallback = ""
	s.Variance = HC1
	want, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	if res.Effects[1].SE != want.Effects[1].SE {
		t.Errorf("fallback SE %g differs from HC1's %g", res.Effects[1].SE, want.Effects[1].SE)
	}
}

// TestDroppedRowsExplained checks listwise deletion: each dropped row is
// listed with its reason in words, and counted by reason.
func TestDroppedRowsExplained(t *testing.T) {
	d := synth(60, 20)
	d.col("y").Num[2] = math.NaN()
	d.col("t").Num[5] = math.NaN()
	d.col("t").Text = make([]string, 60)
	d.col("t").Text[5] = "yes"
	d.col("w").Num[9] = -1
	d.col("w").Num[10] = 0
	d.col("g").Text[13] = ""
	d.col("x1").Num[20] = math.NaN()
	d.col("x1").Why = make([]string, 60)
	d.col("x1").Why[20] = "a spreadsheet error value"
	s := groupSpec()
	s.Weights = "w"
	res, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	want := []DroppedRow{
		{3, "y", `missing outcome ("y")`},
		{6, "t", `text "yes" in the treatment ("t"), which needs a number`},
		{10, "w", `a weight of 0 or less ("w" is -1)`},
		{11, "w", `a weight of 0 or less ("w" is 0)`},
		{14, "g", `missing moderator ("g")`},
		{21, "x1", `a spreadsheet error value in the control ("x1")`},
	}
	if len(res.Rows.List) != len(want) {
		t.Fatalf("dropped %v, want %v", res.Rows.List, want)
	}
	for i := range want {
		if res.Rows.List[i] != want[i] {
			t.Errorf("dropped[%d] = %+v, want %+v", i, res.Rows.List[i], want[i])
		}
	}
	if res.Rows.Used != 54 || res.Rows.Read != 60 || res.Rows.Dropped != 6 {
		t.Errorf("rows %+v", res.Rows)
	}
	if len(res.Rows.Reasons) != 5 || res.Rows.Reasons[2].Rows != 2 {
		t.Errorf("reasons %+v: want 5 reasons, the weight one counting 2 rows", res.Rows.Reasons)
	}
}

// TestResultsAreFinite fits many random datasets under every variance type
// and moderator kind; every number in the result must be finite (the JSON
// encoder refuses NaN and ±Inf).
func TestResultsAreFinite(t *testing.T) {
	for seed := uint64(0); seed < 20; seed++ {
		d := synth(80+int(seed), seed)
		for _, vt := range VarianceTypes {
			for _, s := range []Spec{groupSpec(), contSpec()} {
				s.Variance = vt
				if vt == CR1 {
					s.Cluster = "site"
				}
				res, err := Fit(d, s)
				if err != nil {
					t.Fatalf("seed %d %s: %v", seed, vt, err)
				}
				if _, err := json.Marshal(res); err != nil {
					t.Fatalf("seed %d %s: %v", seed, vt, err)
				}
			}
		}
	}
}

// TestControlListedTwice: a control named twice gets the message that says
// so, not the one for a column in two roles.
func TestControlListedTwice(t *testing.T) {
	s := contSpec()
	s.Controls = []string{"x1", "x1"}
	_, err := Fit(synth(60, 5), s)
	if err == nil || !strings.Contains(err.Error(), `Column "x1" is listed twice as a control.`) {
		t.Errorf("got %v", err)
	}
}

// TestReferenceByValue: a reference group typed as a number matches the
// level written otherwise (".5" is the level "0.5").
func TestReferenceByValue(t *testing.T) {
	d := synth(60, 6)
	levels := []string{"0.5", "1.5", "2.5"}
	for i := range d.col("g").Text {
		d.col("g").Text[i] = levels[i/2%3]
	}
	s := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical, Reference: ".5"}}
	res, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range res.Effects {
		if e.Reference != (e.Group == "0.5") {
			t.Errorf("group %q reference %v", e.Group, e.Reference)
		}
	}
}

// TestProbesInOrder: moderator values typed out of order are reported in
// increasing order, so that the last-minus-first difference is the
// highest minus the lowest.
func TestProbesInOrder(t *testing.T) {
	s := contSpec()
	s.Moderator.Probes = []float64{15, 5, 12, 8}
	res, err := Fit(synth(80, 7), s)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, e := range res.Effects {
		got = append(got, e.Group)
	}
	if strings.Join(got, ",") != "5,8,12,15" {
		t.Errorf("probes in the order %v", got)
	}
	last := res.Effects[len(res.Effects)-1].Estimate - res.Effects[0].Estimate
	found := false
	for _, d := range res.Differences {
		if math.Abs(d.Estimate-last) < 1e-12 {
			found = true
		}
	}
	if !found {
		t.Errorf("no difference equals the highest probe's effect minus the lowest's (%v)", last)
	}
}
