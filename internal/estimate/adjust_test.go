package estimate

import (
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"testing"
)

// TestAdjustAgainstR checks Holm and Benjamini–Hochberg adjusted p-values on
// the fifteen p-values of the worked example in Benjamini & Hochberg (1995),
// against R 4.2.2 p.adjust(p, "holm") and p.adjust(p, "BH")
// (testdata/r/reference.txt, case bh1995).
func TestAdjustAgainstR(t *testing.T) {
	ref := readReference(t, filepath.Join(rDir, "reference.txt"))["bh1995"]["-"]
	get := func(key string) float64 {
		v, err := strconv.ParseFloat(ref[key], 64)
		if err != nil {
			t.Fatalf("bh1995 %s: %v", key, err)
		}
		return v
	}
	var p []float64
	for i := 1; i <= 15; i++ {
		p = append(p, get(fmt.Sprintf("p[%d]", i)))
	}
	holm, bh := AdjustHolm(p), AdjustBH(p)
	for i := range p {
		for _, c := range []struct {
			name string
			got  float64
		}{{"holm", holm[i]}, {"bh", bh[i]}} {
			want := get(fmt.Sprintf("%s[%d]", c.name, i+1))
			if math.Abs(c.got-want) > 1e-12*math.Max(want, 1e-300) {
				t.Errorf("%s[%d] = %.17g, R p.adjust gives %.17g", c.name, i+1, c.got, want)
			}
		}
	}
	// Benjamini & Hochberg (1995) §4: at q = 0.05 the procedure rejects the
	// four smallest; Bonferroni (from the same paper) the three smallest.
	rejBH, rejBonf := 0, 0
	for i := range p {
		if bh[i] <= 0.05 {
			rejBH++
		}
		if math.Min(1, 15*p[i]) <= 0.05 {
			rejBonf++
		}
	}
	if rejBH != 4 || rejBonf != 3 {
		t.Errorf("BH rejects %d (paper: 4), Bonferroni %d (paper: 3)", rejBH, rejBonf)
	}
}

// TestAdjustOrderAndTies checks that results come back in the input order
// and that tied p-values get equal adjusted values (common practice; R's
// p.adjust behaves the same, from memory).
func TestAdjustOrderAndTies(t *testing.T) {
	p := []float64{0.04, 0.01, 0.04, 0.5}
	holm := AdjustHolm(p)
	want := []float64{0.12, 0.04, 0.12, 0.5}
	for i := range p {
		if math.Abs(holm[i]-want[i]) > 1e-15 {
			t.Errorf("holm[%d] = %g, want %g", i, holm[i], want[i])
		}
	}
	bh := AdjustBH(p)
	wantBH := []float64{0.16 / 3, 0.04, 0.16 / 3, 0.5}
	for i := range p {
		if math.Abs(bh[i]-wantBH[i]) > 1e-15 {
			t.Errorf("bh[%d] = %g, want %g", i, bh[i], wantBH[i])
		}
	}
}
