package estimate

import (
	"math"
	"strings"
	"testing"
)

// TestJohnsonNeymanCases checks the case analysis of METHODS §5 (Bauer &
// Curran 2005) on hand-made coefficients and covariances whose answer can
// be worked out on paper. Coefficients: b1 at 0, b3 at 1; df large so that
// t ≈ 1.96.
func TestJohnsonNeymanCases(t *testing.T) {
	cases := []struct {
		name       string
		b1, b3     float64
		v11, v33   float64
		lo, hi     float64
		wantCase   string
		wantRegion []bool // significance of each region, low to high
	}{
		// θ(m) = m with tiny variance: significant away from 0 on both sides.
		{"outside", 0, 1, 0.01, 0.0001, -5, 5, "outside", []bool{true, false, true}},
		// Large slope variance: θ(m) = 1 + 0·m with SE growing in |m|.
		{"between", 1, 0, 0.01, 0.01, -50, 50, "between", []bool{false, true, false}},
		// A precise large effect that barely moves: the roots lie far outside
		// the observed range, so it is significant across all of it. (With a
		// positive leading coefficient θ crosses zero somewhere, where it
		// cannot be significant, so real roots always exist.)
		{"significant across the range", 10, 0.1, 0.01, 0.0001, -5, 5, "outside", []bool{true}},
		// Noisy small effect: nowhere.
		{"nowhere", 0.1, 0, 4, 1, -5, 5, "nowhere", []bool{false}},
		// Roots outside the observed range: one region only.
		{"roots beyond range", 0, 1, 0.01, 0.0001, 2, 5, "outside", []bool{true}},
	}
	for _, c := range cases {
		in := newInferencer([]float64{c.b1, c.b3}, []float64{c.v11, 0, 0, c.v33}, 100000, 0.05, 0.8)
		jn := johnsonNeyman(in, 0, 1, 0, c.lo, c.hi)
		if jn.Case != c.wantCase {
			t.Errorf("%s: case %q, want %q", c.name, jn.Case, c.wantCase)
		}
		if len(jn.Regions) != len(c.wantRegion) {
			t.Errorf("%s: regions %+v, want %d", c.name, jn.Regions, len(c.wantRegion))
			continue
		}
		for i, r := range jn.Regions {
			if r.Significant != c.wantRegion[i] {
				t.Errorf("%s: region %d %+v, want significant=%v", c.name, i, r, c.wantRegion[i])
			}
			// At a boundary inside the range, |t| equals the critical value.
			if i > 0 {
				m := r.From
				est := c.b1 + c.b3*m
				se := math.Sqrt(c.v11 + m*m*c.v33)
				if math.Abs(math.Abs(est/se)-in.tcrit) > 1e-9 {
					t.Errorf("%s: |t| at boundary %g is %g, want %g", c.name, m, est/se, in.tcrit)
				}
			}
		}
		if jn.Regions[0].From != c.lo || jn.Regions[len(jn.Regions)-1].To != c.hi {
			t.Errorf("%s: regions do not cover the observed range: %+v", c.name, jn.Regions)
		}
	}
}

// TestTypedProbes checks probe values the person types: kept in order,
// effects equal b1 + b3·(m − c), and a probe outside the observed range
// flagged with a note.
func TestTypedProbes(t *testing.T) {
	d := synth(100, 40)
	s := contSpec()
	centre := 10.0
	s.Moderator.Centre = &centre
	s.Moderator.Probes = []float64{5, 10, 15, 99}
	res, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Effects) != 4 {
		t.Fatalf("%d effects, want 4", len(res.Effects))
	}
	b1, b3 := res.Coefficients[1].Estimate, res.Coefficients[3].Estimate
	for _, e := range res.Effects {
		want := b1 + b3*(e.Value-centre)
		if math.Abs(e.Estimate-want) > 1e-12*math.Abs(want) {
			t.Errorf("effect at %g = %g, want %g", e.Value, e.Estimate, want)
		}
		if e.Extrapolated != (e.Value == 99) {
			t.Errorf("probe %g extrapolated = %v", e.Value, e.Extrapolated)
		}
	}
	if res.Effects[1].Estimate != b1 {
		t.Errorf("effect at the centre %g is not b1 = %g", res.Effects[1].Estimate, b1)
	}
	if len(res.Notes) != 1 || !strings.Contains(res.Notes[0], `"99"`) {
		t.Errorf("notes %q: want one naming the probe 99", res.Notes)
	}
	if res.Effects[1].Rows == 0 || res.Effects[3].Rows != 0 {
		t.Errorf("rows near probes: %d at the centre, %d at 99", res.Effects[1].Rows, res.Effects[3].Rows)
	}
}

// TestContinuousTreatmentMatchesBinary checks that a 0/1 treatment read as
// a continuous dose gives the same fit as the binary reading (the design
// matrix is identical; common practice).
func TestContinuousTreatmentMatchesBinary(t *testing.T) {
	d := synth(90, 41)
	a, err := Fit(d, groupSpec())
	if err != nil {
		t.Fatal(err)
	}
	s := groupSpec()
	s.Treatment.Kind = TreatmentContinuous
	b, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a.Effects {
		if a.Effects[i].Estimate != b.Effects[i].Estimate || a.Effects[i].SE != b.Effects[i].SE {
			t.Errorf("group %s: %+v vs %+v", a.Effects[i].Group, a.Effects[i].Inference, b.Effects[i].Inference)
		}
	}
	if b.Effects[0].Treated != 0 || a.Effects[0].Treated == 0 {
		t.Errorf("arm counts belong to a binary treatment only")
	}
}

// TestEffectAtMatchesProbes checks that the effect computed from the
// result alone equals the effect reported at each probe.
func TestEffectAtMatchesProbes(t *testing.T) {
	res, err := Fit(synth(100, 42), contSpec())
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range res.Effects {
		got, ok := res.EffectAt(e.Value)
		if !ok || got != e.Inference {
			t.Errorf("EffectAt(%g) = %+v, probe says %+v", e.Value, got, e.Inference)
		}
	}
	total := 0
	for _, b := range res.Moderator.Histogram {
		total += b.Rows
	}
	if total != res.Rows.Used || len(res.Moderator.Histogram) != histogramBins {
		t.Errorf("histogram counts %d rows in %d bins, want %d in %d", total, len(res.Moderator.Histogram), res.Rows.Used, histogramBins)
	}
	if _, ok := (&Result{Moderator: ModeratorInfo{Kind: ModeratorCategorical}}).EffectAt(1); ok {
		t.Error("EffectAt answered for a categorical moderator")
	}
}
