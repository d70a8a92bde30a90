package estimate

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestResidualsOrthogonal checks the normal equations Xᵀe = 0 on random
// data (common practice: the defining property of least squares), for the
// raw fit and for a weighted fit through Fit.
func TestResidualsOrthogonal(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	n, k := 300, 9
	x := make([]float64, n*k)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		x[i*k] = 1
		for j := 1; j < k; j++ {
			x[i*k+j] = rng.NormFloat64() * math.Pow(10, float64(j%4))
		}
		y[i] = rng.NormFloat64()*5 + x[i*k+1]
	}
	f, aliased := fitLS(x, y, n, k)
	if aliased != nil {
		t.Fatal(aliased)
	}
	for j := 0; j < k; j++ {
		var dot, scale float64
		for i := 0; i < n; i++ {
			dot += x[i*k+j] * f.resid[i]
			scale += math.Abs(x[i*k+j] * f.resid[i])
		}
		if math.Abs(dot) > 1e-13*scale {
			t.Errorf("column %d: Xᵀe = %g (scale %g)", j, dot, scale)
		}
	}
}

// TestCR1OneRowPerClusterIsHC1 checks that cluster-robust errors with one
// row per cluster equal HC1: the corrections G/(G−1)·(N−1)/(N−K) and
// N/(N−K) coincide when G = N (Cameron & Miller 2015, J. Human Resources
// 50(2), §IV). The two are computed by different summations, so equality is
// to rounding (1e-12 relative).
func TestCR1OneRowPerClusterIsHC1(t *testing.T) {
	d := synth(90, 30)
	ids := make([]float64, 90)
	for i := range ids {
		ids[i] = float64(1000 + i)
	}
	d.Columns = append(d.Columns, Column{Name: "id", Num: ids})
	for _, base := range []Spec{groupSpec(), contSpec()} {
		hc1 := base
		hc1.Variance = HC1
		cr1 := base
		cr1.Cluster = "id"
		a, err := Fit(d, hc1)
		if err != nil {
			t.Fatal(err)
		}
		b, err := Fit(d, cr1)
		if err != nil {
			t.Fatal(err)
		}
		if b.Model.Clusters != 90 {
			t.Fatalf("%d clusters, want 90", b.Model.Clusters)
		}
		for i := range a.Covariance {
			for j := range a.Covariance[i] {
				floor := math.Sqrt(a.Covariance[i][i] * a.Covariance[j][j])
				if !closeRel(b.Covariance[i][j], a.Covariance[i][j], 1e-12, floor) {
					t.Errorf("V[%d,%d]: CR1 %.17g, HC1 %.17g", i, j, b.Covariance[i][j], a.Covariance[i][j])
				}
			}
		}
	}
}

// TestPermutationInvariance checks that shuffling the rows (their labels
// travelling with them) changes no estimate, covariance or test (common
// practice), up to summation order.
func TestPermutationInvariance(t *testing.T) {
	d := synth(120, 31)
	d.col("y").Num[4] = math.NaN()
	d.col("w").Num[17] = 0
	rng := rand.New(rand.NewPCG(3, 3))
	perm := rng.Perm(120)
	p := &Data{RowLabels: make([]int, 120)}
	for i, src := range perm {
		p.RowLabels[i] = src + 1
	}
	for _, c := range d.Columns {
		pc := Column{Name: c.Name}
		for _, src := range perm {
			if c.Num != nil {
				pc.Num = append(pc.Num, c.Num[src])
			} else {
				pc.Text = append(pc.Text, c.Text[src])
			}
		}
		p.Columns = append(p.Columns, pc)
	}
	for _, vt := range VarianceTypes {
		for _, base := range []Spec{groupSpec(), contSpec()} {
			s := base
			s.Variance, s.Weights = vt, "w"
			if vt == CR1 {
				s.Cluster = "site"
			}
			a, err := Fit(d, s)
			if err != nil {
				t.Fatal(err)
			}
			b, err := Fit(p, s)
			if err != nil {
				t.Fatal(err)
			}
			same := func(what string, x, y float64) {
				if !closeRel(x, y, 1e-10, 1e-12) {
					t.Errorf("%s %s %s: %.17g vs %.17g after permuting", vt, base.Moderator.Kind, what, x, y)
				}
			}
			for i := range a.Coefficients {
				same(a.Coefficients[i].Term, a.Coefficients[i].Estimate, b.Coefficients[i].Estimate)
				for j := range a.Covariance[i] {
					floor := math.Sqrt(a.Covariance[i][i] * a.Covariance[j][j])
					if !closeRel(a.Covariance[i][j], b.Covariance[i][j], 1e-10, floor) {
						t.Errorf("%s V[%d,%d] changed after permuting", vt, i, j)
					}
				}
			}
			for i := range a.Effects {
				same("effect "+a.Effects[i].Group, a.Effects[i].Estimate, b.Effects[i].Estimate)
				same("SE "+a.Effects[i].Group, a.Effects[i].SE, b.Effects[i].SE)
			}
			same("F", a.Heterogeneity.F, b.Heterogeneity.F)
			if a.Model.DataSHA256 == b.Model.DataSHA256 {
				t.Errorf("the data hash should see the row order: both %s", a.Model.DataSHA256)
			}
			var ra, rb []int
			for _, r := range a.Rows.List {
				ra = append(ra, r.Row)
			}
			for _, r := range b.Rows.List {
				rb = append(rb, r.Row)
			}
			slices.Sort(rb)
			if !slices.Equal(ra, rb) || len(ra) != 2 {
				t.Errorf("dropped rows %v vs %v", ra, rb)
			}
		}
	}
}

// TestDataHash checks that the hash of the values used is stable for the
// same data, changes when one used value changes, and ignores dropped rows.
func TestDataHash(t *testing.T) {
	fit := func(d *Data) string {
		res, err := Fit(d, groupSpec())
		if err != nil {
			t.Fatal(err)
		}
		return res.Model.DataSHA256
	}
	d := synth(60, 50)
	d.col("y").Num[3] = math.NaN()
	base := fit(d)
	if len(base) != 64 || fit(synth(60, 50)) == base || fit(d) != base {
		t.Fatalf("hash %q not stable or not sensitive to a dropped row", base)
	}
	d.col("x1").Num[3] = 1e6 // a dropped row: not used, so the hash stays
	if fit(d) != base {
		t.Error("a value in a dropped row changed the hash")
	}
	d.col("x1").Num[4] += 1e-9
	if fit(d) == base {
		t.Error("a changed used value kept the hash")
	}
}
