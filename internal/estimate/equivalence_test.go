package estimate

import (
	"context"
	"math"
	"path/filepath"
	"strconv"
	"testing"
)

// TestEquivalenceAgainstR compares the two one-sided tests of every
// difference with R 4.2.2 base R (lm, vcov, qt, pt), testdata/r/
// make_equivalence.R, written from Schuirmann (1987): the 90% interval,
// the larger one-sided p and the verdict, classical standard errors.
func TestEquivalenceAgainstR(t *testing.T) {
	compareEquivalenceWithR(t, filepath.Join(rDir, "equivalence.txt"))
}

// TestEquivalenceAgainstRLive reruns the R script into a temporary folder.
func TestEquivalenceAgainstRLive(t *testing.T) {
	compareEquivalenceWithR(t, filepath.Join(runRScript(t, "make_equivalence.R"), "equivalence.txt"))
}

func compareEquivalenceWithR(t *testing.T, path string) {
	t.Helper()
	ref := readReference3(t, path)
	cases := map[string]rCase{}
	for _, c := range rCases() {
		cases[c.name] = c
	}
	checked, equivalent := 0, 0
	for _, name := range []string{"warp_cat", "mtcars_cont"} {
		want := ref[name]
		c := cases[name]
		spec := c.spec
		spec.Variance = Classical
		spec.EquivalenceMargin, _ = strconv.ParseFloat(want["margin"], 64)
		res, err := Fit(loadCSV(t, filepath.Join(rDir, c.file)), spec)
		if err != nil {
			t.Fatal(err)
		}
		num := func(key string) float64 {
			v, err := strconv.ParseFloat(want[key], 64)
			if err != nil {
				t.Fatalf("%s %s: %v", name, key, err)
			}
			return v
		}
		for _, d := range res.Differences {
			e := d.Equivalence
			if d.PerUnit {
				if e != nil {
					t.Errorf("%s: the per-unit change has an equivalence test", name)
				}
				continue
			}
			key := "diff[" + d.From + "|" + d.To + "]"
			if e == nil || e.Bootstrap || !e.Bounded || e.Margin != spec.EquivalenceMargin {
				t.Fatalf("%s %s: %+v", name, key, e)
			}
			for _, v := range []struct {
				what      string
				got, want float64
			}{{"lo", e.CILow, num(key + ".lo")}, {"hi", e.CIHigh, num(key + ".hi")}, {"p", e.P, num(key + ".p")}} {
				if !closeRel(v.got, v.want, 1e-8, 0) {
					t.Errorf("%s %s.%s = %.17g, R gives %.17g", name, key, v.what, v.got, v.want)
				}
			}
			if e.Equivalent != (num(key+".equivalent") == 1) {
				t.Errorf("%s %s: equivalent %v, R says %s", name, key, e.Equivalent, want[key+".equivalent"])
			}
			if e.Equivalent {
				equivalent++
			}
			checked++
		}
	}
	if checked != 4 || equivalent != 3 {
		t.Errorf("%d differences compared, %d equivalent; want 4 and 3", checked, equivalent)
	}
}

// TestEquivalenceIsTheInterval checks the identity behind the two
// one-sided tests (Schuirmann 1987): equivalent exactly when the (1 − 2α)
// interval lies inside (−Δ, Δ), for the t test over a range of margins and
// for the bootstrap's version away from the steps of its p-value.
func TestEquivalenceIsTheInterval(t *testing.T) {
	d := clusterData(600, 15, 12)
	for _, boot := range []bool{false, true} {
		s := clusterSpec()
		s.Bootstrap.Off = !boot
		s.Bootstrap.Draws = 999
		base, err := Fit(d, s)
		if err != nil {
			t.Fatal(err)
		}
		diff := base.Differences[0]
		for k := 1; k <= 30; k++ {
			s.EquivalenceMargin = math.Abs(diff.Estimate) + float64(k)*0.2*diff.SE
			res, err := Fit(d, s)
			if err != nil {
				t.Fatal(err)
			}
			e := res.Differences[0].Equivalence
			if e == nil || e.Bootstrap != boot {
				t.Fatalf("bootstrap %v, margin %g: %+v", boot, s.EquivalenceMargin, e)
			}
			inside := e.Bounded && e.CILow > -e.Margin && e.CIHigh < e.Margin
			near := math.Min(math.Abs(e.CILow+e.Margin), math.Abs(e.CIHigh-e.Margin)) < 1e-6*diff.SE
			if e.Equivalent != inside && !near {
				t.Errorf("bootstrap %v, margin %g: equivalent %v, interval %g to %g (p %g)", boot, e.Margin, e.Equivalent, e.CILow, e.CIHigh, e.P)
			}
		}
	}
}

// TestEquivalenceSpec checks that a negative or infinite margin is refused
// and that no margin means no test.
func TestEquivalenceSpec(t *testing.T) {
	d := synth(200, 3)
	for _, m := range []float64{-1, math.Inf(1), math.NaN()} {
		s := groupSpec()
		s.EquivalenceMargin = m
		if _, err := Fit(d, s); err == nil {
			t.Errorf("margin %g accepted", m)
		}
	}
	res, err := FitContext(context.Background(), d, groupSpec(), nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, diff := range res.Differences {
		if diff.Equivalence != nil {
			t.Error("an equivalence test without a margin")
		}
	}
}
