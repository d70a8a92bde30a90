package estimate

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Fit fits the model of METHODS §1 to the data and returns the effects by
// group, their differences and tests. Bad data returns an *Error.
func Fit(d *Data, s Spec) (*Result, error) {
	return FitContext(context.Background(), d, s, nil)
}

// FitContext is Fit for long work: the wild cluster bootstrap (METHODS §8)
// stops when ctx is done, returning ctx's error, and progress, when not
// nil, is called after each quantity it has finished, with how many are
// done of how many in all.
func FitContext(ctx context.Context, d *Data, s Spec, progress func(done, total int)) (*Result, error) {
	s, err := s.withDefaults()
	if err != nil {
		return nil, err
	}
	ds, err := buildDesign(d, s)
	if err != nil {
		return nil, err
	}
	if err := ds.check(d, s); err != nil {
		return nil, err
	}
	if s.UnitEffects {
		if err := ds.absorbUnits(s); err != nil {
			return nil, err
		}
		if ds.n <= ds.k+ds.absorbedDF() {
			return nil, fail(ErrTooFewRows, s.Unit, fmt.Sprintf("With unit effects the model has %d terms and %d unit levels but only %d rows are used; it needs more rows than that. Use fewer controls, or more rows per unit.", ds.k, ds.absorbedDF(), ds.n))
		}
	}
	ds.startHash()
	defer ds.hash.stopHash()
	x, y := ds.x, ds.y
	if ds.w != nil {
		x, y = weighted(ds.x, ds.y, ds.w, ds.k)
	}
	f, aliased := fitLS(x, y, ds.n, ds.k)
	if aliased != nil {
		return nil, ds.aliasError(aliased)
	}
	if err := ds.checkExact(f); err != nil {
		return nil, err
	}
	v, used, df, notes, err := ds.variance(d, f, s)
	if err != nil {
		return nil, err
	}
	res := ds.result(s, f, v, used, df, notes)
	if ds.modValue != nil && (ds.period != nil || ds.within != nil) {
		res.Notes = append(res.Notes, fmt.Sprintf("The check that the effect follows a straight line in %s is not made for a before-and-after design or with unit effects.", s.Moderator.Column))
	} else if ds.modValue != nil {
		lin, note := ds.linearity(d, s, f, v, df)
		res.Linearity = lin
		if note != "" {
			res.Notes = append(res.Notes, note)
		}
	}
	if used == CR1 && !s.Bootstrap.Off && len(ds.clusterLabels) < BootstrapClusters {
		if err := ds.bootstrap(ctx, f, s, res, progress); err != nil {
			return nil, err
		}
	}
	return res, nil
}

// weighted returns √w·X and √w·y (METHODS §2).
func weighted(x, y, w []float64, k int) ([]float64, []float64) {
	xw := make([]float64, len(x))
	yw := make([]float64, len(y))
	forRows(len(w), blockRows, func(_, from, to int) {
		for i := from; i < to; i++ {
			r := math.Sqrt(w[i])
			yw[i] = r * y[i]
			for j := 0; j < k; j++ {
				xw[i*k+j] = r * x[i*k+j]
			}
		}
	})
	return xw, yw
}

// check catches, before fitting, the degenerate data whose cause can be
// named precisely.
func (ds *design) check(d *Data, s Spec) error {
	label := func(r int) int { return d.label(ds.used[r]) }
	if constant(ds.y) {
		return fail(ErrConstant, s.Outcome, fmt.Sprintf("The outcome %q is %s in every row used, so there is nothing to explain. Check that the right column is chosen.", s.Outcome, formatNumber(ds.y[0])))
	}
	if constant(ds.treat) {
		return fail(ErrConstant, s.Treatment.Column, fmt.Sprintf("The treatment %q has the same value in every row used, so its effect cannot be estimated. Both treated and untreated rows are needed.", s.Treatment.Column))
	}
	if ds.period != nil && constant(ds.period) {
		words := "before"
		if ds.period[0] == 1 {
			words = "after"
		}
		return fail(ErrConstant, s.Period, fmt.Sprintf("Every row used is from %s the start (column %q), so there is nothing to compare before and after. A before-and-after design needs rows from both periods.", words, s.Period))
	}
	if ds.period != nil {
		var all groupStats
		for r, t := range ds.treat {
			all.cell(t, ds.period[r])
		}
		if missing := all.missingCells(); missing != nil {
			return fail(ErrNoContrast, s.Period, fmt.Sprintf("The programme's effect cannot be estimated: there are no rows of %s. A difference in differences needs rows of both groups of units before and after the start.", strings.Join(missing, ", nor of ")))
		}
	}
	binaryT := s.Treatment.Kind != TreatmentContinuous
	mcol := s.Moderator.Column
	if ds.modValue != nil {
		if constant(ds.modValue) {
			return fail(ErrConstant, mcol, fmt.Sprintf("The moderator %q is %s in every row used, so there is nothing to compare. Pick a moderator that varies.", mcol, formatNumber(ds.modValue[0])))
		}
		if binaryT {
			// Both arms have rows: the treatment is 0/1 and not constant.
			var first [2]float64
			var seen, varies [2]bool
			for r, t := range ds.treat {
				arm, m := int(t), ds.modValue[r]
				if !seen[arm] {
					seen[arm], first[arm] = true, m
				} else if m != first[arm] {
					varies[arm] = true
				}
			}
			for arm, name := range []string{"untreated", "treated"} {
				if !varies[arm] {
					return fail(ErrNoContrast, mcol, fmt.Sprintf("The moderator %q never varies among %s rows (it is always %s), so the interaction cannot be estimated. The moderator must take several values in both arms.", mcol, name, formatNumber(first[arm])))
				}
			}
		}
	} else {
		if len(ds.levels) < 2 {
			return fail(ErrConstant, mcol, fmt.Sprintf("The moderator %q has only one group (%q) among the rows used, so there is nothing to compare. Pick a moderator with at least two groups.", mcol, ds.levels[0]))
		}
		// One pass gathers each group's rows, treated rows and whether
		// its treatment varies; the rows of a group with a problem are
		// listed only then.
		groups := make([]groupStats, len(ds.levels))
		for r, lev := range ds.modLevel {
			groups[lev].add(ds.treat[r])
			if ds.period != nil {
				groups[lev].cell(ds.treat[r], ds.period[r])
			}
		}
		members := func(j int) []int {
			var m []int
			for r, lev := range ds.modLevel {
				if lev == j {
					m = append(m, label(r))
				}
			}
			return m
		}
		var problems []string
		var rows []int
		for j, l := range ds.levels {
			g := groups[j]
			n, treated := g.n, g.treated
			switch {
			case n == 1:
				problems = append(problems, fmt.Sprintf("group %q has only 1 row (row %d)", ShortLabel(l), members(j)[0]))
			case ds.period != nil && g.missingCells() != nil:
				problems = append(problems, fmt.Sprintf("in group %q there are no rows of %s", ShortLabel(l), strings.Join(g.missingCells(), ", nor of ")))
			case binaryT && treated == n:
				problems = append(problems, fmt.Sprintf("in group %q all %d rows are treated", ShortLabel(l), n))
			case binaryT && treated == 0:
				problems = append(problems, fmt.Sprintf("in group %q none of the %d rows is treated", ShortLabel(l), n))
			case !binaryT && !g.tVaries:
				problems = append(problems, fmt.Sprintf("in group %q the treatment is %s in all %d rows", ShortLabel(l), formatNumber(g.firstT), n))
			default:
				continue
			}
			rows = append(rows, members(j)...)
		}
		if problems != nil && ds.period != nil {
			return fail(ErrNoContrast, mcol, fmt.Sprintf("The programme's effect cannot be estimated in every group of %q: %s. Each group needs rows of both groups of units, before and after the start; merge small groups with a neighbour or leave them out.", mcol, strings.Join(problems, "; ")), rows...)
		}
		if problems != nil {
			return fail(ErrNoContrast, mcol, fmt.Sprintf("The treatment's effect cannot be estimated in every group of %q: %s. Each group needs both treated and untreated rows; merge small groups with a neighbour or leave them out.", mcol, strings.Join(problems, "; ")), rows...)
		}
	}
	if err := ds.checkArms(d, s); err != nil {
		return err
	}
	if ds.n <= ds.k {
		return fail(ErrTooFewRows, "", fmt.Sprintf("The model has %d terms but only %d rows are used; it needs more rows than terms. Use fewer controls or groups, or more data.", ds.k, ds.n))
	}
	if s.Cluster != "" && len(ds.clusterLabels) < 2 {
		return fail(ErrFewClusters, s.Cluster, fmt.Sprintf("All rows used are in one cluster (%q of column %q); cluster-robust errors need at least two, and are only reliable with many more (about 40). Remove the cluster column and choose HC3, or check the column.", ds.clusterLabels[0], s.Cluster))
	}
	return nil
}

func constant(x []float64) bool {
	for _, v := range x {
		if v != x[0] {
			return false
		}
	}
	return true
}

// aliasError names every term that could not be estimated, with a reason.
func (ds *design) aliasError(aliased []alias) *Error {
	e := &Error{Err: ErrAliased}
	var parts []string
	for _, a := range aliased {
		term := ds.names[a.col]
		var with []string
		for _, p := range a.partners {
			with = append(with, ds.names[p])
		}
		var reason string
		switch {
		case len(with) == 0:
			reason = fmt.Sprintf("%q is zero in every row used", term)
		case len(with) == 1 && with[0] == "(intercept)":
			reason = fmt.Sprintf("%q has the same value in every row used", term)
		case ds.roles[a.col] == roleControl:
			reason = fmt.Sprintf("the control %q is a combination of %s, so it adds nothing they do not already say; remove one of them", term, termList(with))
		default:
			reason = fmt.Sprintf("%q is a combination of %s, so it cannot be estimated separately", term, termList(with))
		}
		e.Aliased = append(e.Aliased, AliasedTerm{Term: term, With: with, Reason: reason})
		parts = append(parts, reason)
		if e.Column == "" {
			e.Column = term
		}
	}
	e.Message = "Some terms of the model cannot be told apart: " + strings.Join(parts, "; ") + "."
	return e
}

// termList writes model terms for a sentence: quoted names, the intercept
// in words, the last joined with "and".
func termList(terms []string) string {
	var q []string
	for _, t := range terms {
		if t == "(intercept)" {
			q = append(q, "the intercept")
		} else {
			q = append(q, strconv.Quote(t))
		}
	}
	if len(q) < 2 {
		return strings.Join(q, "")
	}
	return strings.Join(q[:len(q)-1], ", ") + " and " + q[len(q)-1]
}

// checkExact refuses a fit with no residual variation: standard errors
// would be zero and every test meaningless.
func (ds *design) checkExact(f *lsFit) error {
	var mean, tss float64
	for _, v := range f.y {
		mean += v
	}
	mean /= float64(len(f.y))
	for _, v := range f.y {
		tss += (v - mean) * (v - mean)
	}
	if f.rss <= 1e-26*tss {
		return fail(ErrExactFit, "", "The model reproduces the outcome exactly, with no error left over, so no standard error or test can be computed. This usually means the outcome was calculated from the other columns; check the outcome column.")
	}
	return nil
}

// variance returns the covariance of the coefficients for the spec's
// estimator (METHODS §3), the estimator actually used (the fallback, if HC2
// or HC3 was undefined and the spec allows one), its degrees of freedom and
// notes.
func (ds *design) variance(d *Data, f *lsFit, s Spec) ([]float64, VarianceType, int, []string, error) {
	n, k := ds.n, ds.k
	dfRes := n - k - ds.absorbedDF()
	vt := s.Variance
	var notes []string
	if vt == HC2 || vt == HC3 {
		h := f.leverage()
		if ds.within != nil {
			for r := range h {
				wt := 1.0
				if ds.w != nil {
					wt = ds.w[r]
				}
				h[r] += ds.within.leverage(ds.unit[r], wt)
			}
		}
		var rows []int
		for r, hr := range h {
			if 1-hr <= 1e-10 {
				rows = append(rows, d.label(ds.used[r]))
			}
		}
		if rows != nil {
			if s.LeverageFallback == "" && ds.within != nil {
				which := "row " + joinInts(rows) + " has"
				if len(rows) > 1 {
					which = "rows " + joinInts(rows) + " have"
				}
				return nil, "", 0, nil, fail(ErrLeverage, s.Unit, fmt.Sprintf("%s cannot be computed: %s leverage 1 (with unit effects, the only row of a unit is fitted perfectly whatever its outcome, and tells nothing about the effect). Leave out the units seen only once, choose CR1, or agree to fall back to HC1.", vt, which), rows...)
			}
			if s.LeverageFallback == "" {
				return nil, "", 0, nil, fail(ErrLeverage, "", fmt.Sprintf("%s cannot be computed: row %s has leverage 1 (the model fits it perfectly whatever its outcome, usually because it is the only row in some group or control category). Merge or remove that category, or agree to fall back to HC1.", vt, joinInts(rows)), rows...)
			}
			notes = append(notes, fmt.Sprintf("%s was replaced by %s because row %s has leverage 1.", vt, s.LeverageFallback, joinInts(rows)))
			vt = s.LeverageFallback
		} else {
			return hcVariance(f, vt, h, dfRes), vt, dfRes, notes, nil
		}
	}
	switch vt {
	case Classical:
		s2 := f.rss / float64(dfRes)
		v := make([]float64, k*k)
		for i, b := range f.bread {
			v[i] = s2 * b
		}
		return v, vt, dfRes, notes, nil
	case CR1:
		g := len(ds.clusterLabels)
		c := float64(g) / float64(g-1) * float64(n-1) / float64(n-k-ds.cr1AbsorbedDF())
		v := f.clusterSandwich(ds.cluster, g)
		for i := range v {
			v[i] *= c
		}
		return v, vt, g - 1, notes, nil
	}
	return hcVariance(f, vt, nil, dfRes), vt, dfRes, notes, nil
}

// hcVariance is the heteroskedasticity-consistent estimator of the given
// type (White 1980; MacKinnon & White 1985). h is needed for HC2 and HC3;
// dfRes is N − K (less the unit effects, within.go), for HC1.
func hcVariance(f *lsFit, vt VarianceType, h []float64, dfRes int) []float64 {
	omega := make([]float64, f.n)
	forRows(f.n, blockRows, func(_, from, to int) {
		for i := from; i < to; i++ {
			e2 := f.resid[i] * f.resid[i]
			switch vt {
			case HC2:
				e2 /= 1 - h[i]
			case HC3:
				e2 /= (1 - h[i]) * (1 - h[i])
			}
			omega[i] = e2
		}
	})
	v := f.sandwich(omega)
	if vt == HC1 {
		c := float64(f.n) / float64(dfRes)
		for i := range v {
			v[i] *= c
		}
	}
	return v
}

func joinInts(xs []int) string {
	const show = 10
	var b strings.Builder
	for i, x := range xs {
		if i == show {
			fmt.Fprintf(&b, " and %d more", len(xs)-show)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprint(&b, x)
	}
	return b.String()
}
