package estimate

import (
	"context"
	"errors"
	"math"
	"reflect"
	"strings"
	"testing"
)

// TestFitScreen checks a screen against fitting each moderator alone: the
// same fits, and the adjusted p-values equal Holm's and Benjamini–
// Hochberg's over the heterogeneity p-values of all the moderators tried
// (METHODS §6).
func TestFitScreen(t *testing.T) {
	d := synth(400, 31)
	base := groupSpec()
	mods := []Moderator{{Column: "g", Kind: ModeratorCategorical}, {Column: "m", Kind: ModeratorContinuous}, {Column: "region", Kind: ModeratorBinary}}
	var calls int
	sc, err := FitScreen(context.Background(), d, base, mods, func(done, total int) {
		calls++
		if done != calls || total != 3 {
			t.Errorf("progress %d of %d at call %d", done, total, calls)
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	var p []float64
	for i, m := range mods {
		s := base
		s.Moderator = m
		alone, err := Fit(d, s)
		if err != nil {
			t.Fatal(err)
		}
		row := sc.Rows[i]
		if row.Moderator != m.Column || !row.Tested || row.P != alone.Heterogeneity.P || sc.Results[i].Coefficients[3].Estimate != alone.Coefficients[3].Estimate {
			t.Errorf("%s: screen row %+v differs from the fit alone (p %g)", m.Column, row, alone.Heterogeneity.P)
		}
		if row.MDD != alone.KeyDifference().MDD || !reflect.DeepEqual(row.Largest, alone.LargestDifference()) {
			t.Errorf("%s: MDD %g, largest %+v", m.Column, row.MDD, row.Largest)
		}
		p = append(p, row.P)
	}
	holm, bh := AdjustHolm(p), AdjustBH(p)
	for i, row := range sc.Rows {
		if row.PHolm != holm[i] || row.QBH != bh[i] || row.PHolm < row.P || row.QBH < row.P {
			t.Errorf("%s: Holm %g (want %g), BH %g (want %g), raw %g", row.Moderator, row.PHolm, holm[i], row.QBH, bh[i], row.P)
		}
	}
	// The categorical moderator's largest difference is the biggest gap
	// of its three pairs; the continuous one's is its outer probes.
	g := sc.Results[0]
	for _, dd := range g.Differences {
		if math.Abs(dd.Estimate) > math.Abs(sc.Rows[0].Largest.Estimate) {
			t.Errorf("largest difference %g, but %s vs %s is %g", sc.Rows[0].Largest.Estimate, dd.To, dd.From, dd.Estimate)
		}
	}
	if l := sc.Rows[1].Largest; l.PerUnit || l.From != "p10" || l.To != "p90" {
		t.Errorf("continuous moderator: largest difference %+v, want p90 vs p10", l)
	}
}

// TestFitScreenBootstrap checks that with few clusters the adjusted
// p-values are those of the wild cluster bootstrap.
func TestFitScreenBootstrap(t *testing.T) {
	d := synth(300, 5)
	base := groupSpec()
	base.Cluster = "site"
	base.Bootstrap.Draws = 499
	sc, err := FitScreen(context.Background(), d, base, []Moderator{{Column: "g", Kind: ModeratorCategorical}, {Column: "region", Kind: ModeratorBinary}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, row := range sc.Rows {
		h := sc.Results[i].Heterogeneity
		if h.PBoot == nil || row.P != *h.PBoot {
			t.Errorf("%s: p %g, bootstrap p %v", row.Moderator, row.P, h.PBoot)
		}
	}
}

// TestFitScreenErrors checks that a moderator that cannot be fitted stops
// the screen with a plain message naming it, and that duplicates and an
// empty list are refused.
func TestFitScreenErrors(t *testing.T) {
	d := synth(200, 2)
	base := groupSpec()
	base.Controls = []string{"x1"}
	for _, c := range []struct {
		name string
		mods []Moderator
		want []string
	}{
		{"none", nil, []string{"No moderators are chosen"}},
		{"twice", []Moderator{{Column: "g", Kind: ModeratorCategorical}, {Column: "g", Kind: ModeratorCategorical}}, []string{`"g" is listed twice`}},
		{"a control", []Moderator{{Column: "g", Kind: ModeratorCategorical}, {Column: "x1", Kind: ModeratorContinuous}}, []string{`Moderator "x1":`, "both moderator and a control"}},
		{"not there", []Moderator{{Column: "g", Kind: ModeratorCategorical}, {Column: "town", Kind: ModeratorCategorical}}, []string{`Moderator "town":`, "not in the data"}},
	} {
		_, err := FitScreen(context.Background(), d, base, c.mods, nil)
		var e *Error
		if !errors.As(err, &e) || !errors.Is(err, ErrSpec) {
			t.Errorf("%s: %v, want a spec error", c.name, err)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(e.Message, w) {
				t.Errorf("%s: %q does not say %q", c.name, e.Message, w)
			}
		}
	}
}

// TestFitScreenUntested checks that a moderator whose test cannot be
// computed (more interaction terms than clusters allow) counts with p = 1.
func TestFitScreenUntested(t *testing.T) {
	d := synth(300, 9)
	ten := make([]string, 300)
	for i := range ten {
		ten[i] = string(rune('a' + (i/2)%10))
	}
	d.Columns = append(d.Columns, Column{Name: "ten", Text: ten})
	site := d.col("site")
	for i := range site.Num {
		site.Num[i] = float64(i % 5)
	}
	base := groupSpec()
	base.Cluster = "site"
	base.Bootstrap.Off = true
	sc, err := FitScreen(context.Background(), d, base, []Moderator{{Column: "ten", Kind: ModeratorCategorical}, {Column: "region", Kind: ModeratorBinary}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r := sc.Rows[0]; r.Tested || r.P != 1 || r.PHolm != 1 {
		t.Errorf("untested moderator: %+v", r)
	}
	if r := sc.Rows[1]; !r.Tested || r.PHolm != math.Min(1, 2*r.P) {
		t.Errorf("the other moderator's Holm p %g, want 2 × %g", r.PHolm, r.P)
	}
}
