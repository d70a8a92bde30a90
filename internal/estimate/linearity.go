package estimate

import (
	"fmt"
	"sort"
)

// Linearity is the check of a continuous moderator's straight line
// (Hainmueller, Mummolo & Xu 2019, Political Analysis 27(2); METHODS §5):
// the effect estimated within each third of the moderator, beside what the
// linear model says at each third's median, and a Wald test of the one
// against the other.
//
// The thirds are cut at the moderator's 1/3 and 2/3 quantiles (Hyndman &
// Fan definition 7); a third takes the values above its lower cut up to and
// including its upper one. Within third j, with median m_j, the binned
// model lets everything differ:
//
//	y = Σ_j G_j·(μ_j + α_j·T + η_j·(M − m_j) + β_j·T·(M − m_j)) + g'·C + e,
//
// so α_j is the effect at M = m_j estimated from that third alone. Written
// as the linear model plus G_j, G_j·M, G_j·T and G_j·T·M for the upper two
// thirds, it nests the linear model, which holds when those 8 terms are all
// zero: the Wald test (same variance estimator as the fit) is of that. The
// linear interaction is said to be contradicted when the test rejects at α:
// by the wild cluster bootstrap's p-value of the same statistic when the
// bootstrap runs (few clusters, METHODS §8), since F(8, G − 1) from the
// cluster-robust covariance rejects far too often there (joint.go).
type Linearity struct {
	Thirds []Third `json:"thirds"`
	// Wald is the test that the binned model reduces to the linear one;
	// nil when it cannot be computed or judged.
	Wald *WaldTest `json:"wald,omitempty"`
	// NotJudged is set, and Wald nil, when there are too few clusters to
	// judge 8 terms (joint.go).
	NotJudged *NotJudged `json:"not_judged,omitempty"`
	// Contradicts is true when the Wald test rejects at α (its bootstrap
	// p-value when there is one).
	Contradicts bool `json:"contradicts"`
}

// Third is one third of a continuous moderator's rows.
type Third struct {
	// From and To are the smallest and largest moderator value in it.
	From   float64 `json:"from"`
	To     float64 `json:"to"`
	Median float64 `json:"median"`
	Rows   int     `json:"rows"`
	// Effect is the treatment's effect at the median, estimated within
	// the third (the binned model).
	Effect Inference `json:"effect"`
	// Line is the linear model's effect at the same value.
	Line Inference `json:"line"`
}

// linearityTerms is the number of terms the binned model adds.
const linearityTerms = 8

// linearity runs the check for a continuous moderator, fitted with
// coefficients f and covariance v. It returns the check, or nil and a note
// that says why it could not be made.
func (ds *design) linearity(d *Data, s Spec, f *lsFit, v []float64, df int) (*Linearity, string) {
	n, k := ds.n, ds.k
	sorted := sortedCopy(ds.modValue)
	cut1, cut2 := quantile7(sorted, 1.0/3), quantile7(sorted, 2.0/3)
	third := make([]int, n)
	members := make([][]float64, 3)
	for r, m := range ds.modValue {
		j := 0
		switch {
		case m > cut2:
			j = 2
		case m > cut1:
			j = 1
		}
		third[r] = j
		members[j] = append(members[j], m)
	}
	cannot := fmt.Sprintf("The check that the effect follows a straight line in %s could not be made: ", s.Moderator.Column)
	for _, ms := range members {
		if len(ms) == 0 {
			return nil, cannot + "the moderator takes too few different values to split into thirds."
		}
	}
	// The binned model: the linear columns, then for thirds 2 and 3 the
	// indicator, its product with M − c, with T, and with T·(M − c).
	b3 := ds.iCols[0]
	mc := ds.mCols[0]
	ke := k + linearityTerms
	x := make([]float64, n*ke)
	for r := range n {
		row := ds.x[r*k : (r+1)*k]
		copy(x[r*ke:], row)
		if j := third[r]; j > 0 {
			at := r*ke + k + (j - 1)
			x[at] = 1
			x[at+2] = row[mc]
			x[at+4] = ds.treat[r]
			x[at+6] = row[b3]
		}
	}
	y := ds.y
	if ds.w != nil {
		x, y = weighted(x, ds.y, ds.w, ke)
	}
	fe, aliased := fitLS(x, y, n, ke)
	if aliased != nil {
		return nil, cannot + "within some third the moderator or the treatment does not vary enough to estimate the effect there."
	}
	ext := *ds
	ext.k, ext.x = ke, x
	ve, _, dfe, _, err := ext.variance(d, fe, s)
	if err != nil {
		return nil, cannot + "the binned model's standard errors cannot be computed (" + err.Error() + ")"
	}
	line := newInferencer(f.coef, v, df, s.Alpha, s.Power)
	binned := newInferencer(fe.coef, ve, dfe, s.Alpha, s.Power)
	lin := &Linearity{}
	for j, ms := range members {
		sort.Float64s(ms)
		med := quantile7(ms, 0.5)
		u := med - ds.centre
		a := make([]float64, ke)
		a[ds.tCol], a[b3] = 1, u
		if j > 0 {
			a[k+(j-1)+4], a[k+(j-1)+6] = 1, u
		}
		al := make([]float64, k)
		al[ds.tCol], al[b3] = 1, u
		lin.Thirds = append(lin.Thirds, Third{From: ms[0], To: ms[len(ms)-1], Median: med, Rows: len(ms),
			Effect: binned.combo(a), Line: line.combo(al)})
	}
	if lin.NotJudged = judgeJoint(linearityTerms, len(ds.clusterLabels)); lin.NotJudged != nil {
		return lin, ""
	}
	if w, ok := binned.wald(linearityCols(k)); ok {
		lin.Wald = &w
		lin.Contradicts = w.P < s.Alpha
		ds.binned = fe
	}
	return lin, ""
}

// linearityCols are the columns of the 8 added terms in the binned model
// of a linear model with k columns.
func linearityCols(k int) []int {
	cols := make([]int, linearityTerms)
	for i := range cols {
		cols[i] = k + i
	}
	return cols
}
