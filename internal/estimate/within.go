package estimate

import "fmt"

// Unit fixed effects by the within transformation (METHODS §10).
//
// Fitting y on X and one indicator per unit gives, for X's coefficients,
// the same estimates and residuals as fitting the within-unit deviations
// y − ȳ_g on X − X̄_g (Frisch–Waugh–Lovell; with weights, the weighted
// means and then √w as usual), so no indicator column is ever formed and
// the cost is one sum per unit and column. A column that is the same in
// every row of each unit (the treated group, a moderator that belongs to
// the unit, the intercept) is absorbed by the unit effects: its deviations
// are zero, and it is left out and named. Whether a column varies within
// a unit is decided on its values, exactly, not on its deviations, which
// rounding may leave a hair from zero.
//
// The covariance of X's coefficients from the deviations equals the
// corresponding block of the covariance with the indicators for every
// estimator here (the sandwich's rows for X are the same), once the
// degrees of freedom count the G_u unit effects: s² = e'e/(N − K − G_u),
// HC1's N/(N − K − G_u), and for HC2/HC3 the leverage of the full model,
// h̃ᵢ + wᵢ/Σ_{j∈g} wⱼ (the indicators' projection adds the row's share of
// its unit's weight). For CR1 the factor G/(G − 1)·(N − 1)/(N − K) counts
// the unit effects in K only when some unit lies in more than one cluster:
// when units are nested in clusters (clustering by unit, the default) the
// unit effects are not counted, since each is estimated from its own
// cluster and does not use up the clusters' degrees of freedom (Cameron &
// Miller 2015, J. Human Resources 50(2), their discussion of fixed effects
// nested in clusters, from memory of the section; counting them would
// inflate CR1 by about √2 in a two-period panel). The t and F degrees of
// freedom stay G − 1.
type within struct {
	k      int       // columns of the model before absorption
	sw     []float64 // per unit: the sum of the weights (rows, unweighted)
	sums   []float64 // per unit: Σ w·x for the k columns, then Σ w·y
	first  []float64 // per unit: its first row
	seen   []bool    // per unit
	varies []bool    // per column: it changes within some unit
	// clusterOf is each unit's cluster, −1 before its first row; nested
	// turns false at a unit met in a second cluster.
	clusterOf []int
	nested    bool

	keep  []int     // the columns kept, in order
	means []float64 // per unit: the means of the k columns and y
}

func newWithin(units, k int) *within {
	w := &within{k: k, sw: make([]float64, units), sums: make([]float64, units*(k+1)),
		first: make([]float64, units*k), seen: make([]bool, units), varies: make([]bool, k),
		clusterOf: make([]int, units), nested: true}
	for g := range w.clusterOf {
		w.clusterOf[g] = -1
	}
	return w
}

// add takes one row of unit g: its model row x (unweighted), outcome y,
// weight wt (1 without weights) and cluster (−1 without clusters).
func (w *within) add(g int, x []float64, y, wt float64, cluster int) {
	k := w.k
	w.sw[g] += wt
	s := w.sums[g*(k+1) : (g+1)*(k+1)]
	for j, v := range x {
		s[j] += wt * v
	}
	s[k] += wt * y
	first := w.first[g*k : (g+1)*k]
	if !w.seen[g] {
		w.seen[g] = true
		copy(first, x)
	} else {
		for j, v := range x {
			if v != first[j] {
				w.varies[j] = true
			}
		}
	}
	if cluster >= 0 {
		if c := w.clusterOf[g]; c < 0 {
			w.clusterOf[g] = cluster
		} else if c != cluster {
			w.nested = false
		}
	}
}

// finish turns the sums into means and decides the columns kept.
func (w *within) finish() {
	k := w.k
	w.means = w.sums
	for g, sw := range w.sw {
		m := w.means[g*(k+1) : (g+1)*(k+1)]
		for j := range m {
			m[j] /= sw
		}
	}
	w.sums, w.first = nil, nil
	w.keep = w.keep[:0]
	for j, v := range w.varies {
		if v {
			w.keep = append(w.keep, j)
		}
	}
}

// apply writes the deviations of row x of unit g, kept columns only, into
// out and returns the outcome's deviation.
func (w *within) apply(g int, x []float64, y float64, out []float64) float64 {
	k := w.k
	m := w.means[g*(k+1) : (g+1)*(k+1)]
	for c, j := range w.keep {
		out[c] = x[j] - m[j]
	}
	return y - m[k]
}

// leverage is the share of its unit's weight a row of unit g with weight
// wt carries: the diagonal of the unit indicators' projection, added to
// the leverage of the deviations.
func (w *within) leverage(g int, wt float64) float64 { return wt / w.sw[g] }

// absorbedDF is the number of unit effects the residual degrees of
// freedom count (0 without unit effects).
func (ds *design) absorbedDF() int {
	if ds.within == nil {
		return 0
	}
	return len(ds.unitLabels)
}

// cr1AbsorbedDF is the number of unit effects CR1's factor counts in K:
// none when units are nested in clusters (see within).
func (ds *design) cr1AbsorbedDF() int {
	if ds.within == nil || ds.within.nested {
		return 0
	}
	return len(ds.unitLabels)
}

// keepColumns drops the columns the unit effects absorbed from the
// design's names, roles and term indices, and names them; it refuses a
// model whose effect or interactions are absorbed.
func (ds *design) keepColumns(s Spec, w *within) error {
	index := make([]int, ds.k)
	for j := range index {
		index[j] = -1
	}
	for c, j := range w.keep {
		index[j] = c
	}
	ds.absorbed = nil
	var lost []string
	for j, name := range ds.names {
		if index[j] >= 0 || ds.roles[j] == roleIntercept {
			continue
		}
		ds.absorbed = append(ds.absorbed, name)
		if ds.roles[j] == roleTreatment || ds.roles[j] == roleInteraction {
			lost = append(lost, name)
		}
	}
	if lost != nil {
		verb, it := "does", "it"
		if len(lost) > 1 {
			verb, it = "do", "them"
		}
		return fail(ErrNoContrast, s.Unit, fmt.Sprintf("With unit effects, %s %s not change within any unit of %q, so the unit effects absorb %s and the programme's effect cannot be estimated. Each unit needs rows both before and after the start; or turn unit effects off.", termList(lost), verb, s.Unit, it))
	}
	names, roles := make([]string, len(w.keep)), make([]string, len(w.keep))
	for c, j := range w.keep {
		names[c], roles[c] = ds.names[j], ds.roles[j]
	}
	ds.names, ds.roles = names, roles
	remap := func(cols []int) []int {
		var out []int
		for _, j := range cols {
			if index[j] >= 0 {
				out = append(out, index[j])
			}
		}
		return out
	}
	ds.tCol = index[ds.tCol]
	if ds.period != nil {
		ds.gCol = index[ds.gCol]
		if ds.pCol >= 0 {
			ds.pCol = index[ds.pCol]
		}
	}
	ds.mCols, ds.iCols = remap(ds.mCols), remap(ds.iCols)
	if ds.leadCols != nil {
		// A lead the unit effects absorb (a period with no unit of the
		// programme) leaves the check with the others.
		var levels, arms []int
		for l, j := range ds.leadCols {
			if index[j] >= 0 {
				levels = append(levels, ds.leadLevels[l])
				arms = append(arms, ds.leadArms[l])
			}
		}
		ds.leadCols, ds.leadLevels, ds.leadArms = remap(ds.leadCols), levels, arms
	}
	for a := range ds.arms {
		ds.arms[a].tCol, ds.arms[a].iCols = index[ds.arms[a].tCol], remap(ds.arms[a].iCols)
	}
	ds.k = len(w.keep)
	return nil
}

// absorbUnits applies the within transformation to the in-memory design:
// the unit means are summed in row order, as the streamed fit sums them.
func (ds *design) absorbUnits(s Spec) error {
	w := newWithin(len(ds.unitLabels), ds.k)
	k := ds.k
	for r, g := range ds.unit {
		wt, c := 1.0, -1
		if ds.w != nil {
			wt = ds.w[r]
		}
		if ds.cluster != nil {
			c = ds.cluster[r]
		}
		w.add(g, ds.x[r*k:(r+1)*k], ds.y[r], wt, c)
	}
	w.finish()
	if err := ds.keepColumns(s, w); err != nil {
		return err
	}
	kk := ds.k
	x := make([]float64, ds.n*kk)
	y := make([]float64, ds.n)
	forRows(ds.n, blockRows, func(_, from, to int) {
		for r := from; r < to; r++ {
			y[r] = w.apply(ds.unit[r], ds.x[r*k:(r+1)*k], ds.y[r], x[r*kk:(r+1)*kk])
		}
	})
	ds.yRaw, ds.x, ds.y, ds.within = ds.y, x, y, w
	return nil
}

// designInfo describes a before-and-after design or one with a unit
// column; nil for a plain trial.
func (ds *design) designInfo(s Spec, facts *rowFacts) *DesignInfo {
	if !s.DiD() && s.Unit == "" {
		return nil
	}
	info := &DesignInfo{Kind: BeforeAfter, Period: s.Period, After: s.After, Unit: s.Unit,
		Units: len(ds.unitLabels), UnitEffects: ds.within != nil, Absorbed: ds.absorbed, Cells: facts.cells}
	if !s.DiD() {
		info.Kind = RepeatedUnits
	} else if info.After == "" {
		info.After = "1"
	}
	if ds.within != nil {
		info.UnitsNested = ds.within.nested && s.Cluster != ""
	}
	return info
}
