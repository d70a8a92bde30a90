package estimate

import (
	"context"
	"fmt"
	"math"
)

// Screen is a set of candidate moderators, each fitted in its own model
// (METHODS §1), with the test that the effect is the same in all groups
// adjusted across the set (METHODS §6).
type Screen struct {
	// Results are the fits, one a moderator, in the order asked.
	Results []*Result `json:"results"`
	// Rows summarise each moderator, in the same order.
	Rows []ScreenRow `json:"rows"`
}

// ScreenRow is one candidate moderator of a screen.
type ScreenRow struct {
	Moderator string `json:"moderator"`
	// Tested is false when the test that the effect is the same in every
	// group could not be computed for this moderator; P is then 1, which
	// keeps it in the count of moderators tried without letting it look
	// like a finding.
	Tested bool `json:"tested"`
	// P is the p-value adjusted: the heterogeneity test's, from the wild
	// cluster bootstrap when it ran (METHODS §8).
	P float64 `json:"p"`
	// PHolm is P adjusted by Holm's step-down method (family-wise error
	// rate, Holm 1979) over every moderator tried.
	PHolm float64 `json:"p_holm"`
	// QBH is P adjusted by Benjamini–Hochberg (false discovery rate,
	// Benjamini & Hochberg 1995) over every moderator tried.
	QBH float64 `json:"q_bh"`
	// MDD is the minimum detectable difference of the comparison that sums
	// up the moderator's precision (Result.KeyDifference).
	MDD float64 `json:"mdd"`
	// Largest is the difference between two groups of largest size
	// (Result.LargestDifference).
	Largest Difference `json:"largest"`
}

// FitScreen fits one model a moderator: base with its moderator replaced
// by each of moderators in turn. A moderator that cannot be fitted stops
// the screen with an *Error that names it. progress, when not nil, is
// called after each moderator with how many are done of how many in all.
func FitScreen(ctx context.Context, d *Data, base Spec, moderators []Moderator, progress func(done, total int)) (*Screen, error) {
	if len(moderators) == 0 {
		return nil, fail(ErrSpec, "", "No moderators are chosen. Pick the columns whose groups or values you want to compare.")
	}
	seen := map[string]bool{}
	for _, m := range moderators {
		if seen[m.Column] {
			return nil, fail(ErrSpec, m.Column, fmt.Sprintf("The moderator %q is listed twice. Each moderator is tried once.", m.Column))
		}
		seen[m.Column] = true
	}
	sc := &Screen{}
	p := make([]float64, len(moderators))
	for i, m := range moderators {
		s := base
		s.Moderator = m
		res, err := FitContext(ctx, d, s, nil)
		if err != nil {
			if e, ok := err.(*Error); ok {
				named := *e
				named.Message = fmt.Sprintf("Moderator %q: %s", m.Column, e.Message)
				return nil, &named
			}
			return nil, err
		}
		row := ScreenRow{Moderator: m.Column, P: 1, MDD: res.KeyDifference().MDD, Largest: res.LargestDifference()}
		if h := res.Heterogeneity; h != nil {
			row.Tested, row.P = true, h.P
			if h.PBoot != nil {
				row.P = *h.PBoot
			}
		}
		p[i] = row.P
		sc.Results = append(sc.Results, res)
		sc.Rows = append(sc.Rows, row)
		if progress != nil {
			progress(i+1, len(moderators))
		}
	}
	holm, bh := AdjustHolm(p), AdjustBH(p)
	for i := range sc.Rows {
		sc.Rows[i].PHolm, sc.Rows[i].QBH = holm[i], bh[i]
	}
	return sc, nil
}

// KeyDifference is the comparison whose minimum detectable difference
// sums up how precisely the data can compare groups: the only one; for a
// continuous moderator, the widest span of probes (the per-unit change is
// in other units); otherwise the least precise comparison with the
// reference group.
func (r *Result) KeyDifference() Difference {
	var best Difference
	for _, d := range r.Differences {
		if d.PerUnit {
			continue
		}
		if best.MDD == 0 || (d.VsReference && d.MDD > best.MDD) {
			best = d
		}
	}
	return best
}

// LargestDifference is the difference between two groups (or, for a
// continuous moderator, between its outer probes) of largest size; the
// per-unit change is left out, being in other units.
func (r *Result) LargestDifference() Difference {
	var best Difference
	found := false
	for _, d := range r.Differences {
		if d.PerUnit {
			continue
		}
		if !found || math.Abs(d.Estimate) > math.Abs(best.Estimate) {
			best, found = d, true
		}
	}
	return best
}
