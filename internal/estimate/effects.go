package estimate

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// inferencer turns linear combinations of the coefficients into estimates
// with standard errors, tests and intervals (METHODS §4).
type inferencer struct {
	coef  []float64
	v     []float64 // covariance, k×k row-major
	k, df int
	alpha float64
	power float64
	tcrit float64 // t(1 − α/2, df)
}

func newInferencer(coef, v []float64, df int, alpha, power float64) *inferencer {
	in := &inferencer{coef: coef, v: v, k: len(coef), df: df, alpha: alpha, power: power}
	in.tcrit = in.dist().Quantile(1 - alpha/2)
	return in
}

func (in *inferencer) dist() distuv.StudentsT {
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(in.df)}
}

// combo returns a'b with SE √(a'Va) using the full covariance V: for the
// effect b1 + b3 this includes the 2·V13 term that hand calculations drop.
func (in *inferencer) combo(a []float64) Inference {
	var est, variance float64
	for i, ai := range a {
		if ai == 0 {
			continue
		}
		est += ai * in.coef[i]
		for j, aj := range a {
			variance += ai * in.v[i*in.k+j] * aj
		}
	}
	return in.inference(est, math.Sqrt(math.Max(variance, 0)))
}

// inference completes an estimate and its standard error with the t
// statistic, the two-sided p-value from t(df) and the 1 − α interval.
func (in *inferencer) inference(est, se float64) Inference {
	t := est / se
	p := 2 * in.dist().Survival(math.Abs(t))
	return Inference{Estimate: est, SE: se, T: t, P: math.Min(1, p),
		CILow: est - in.tcrit*se, CIHigh: est + in.tcrit*se}
}

// mdd is the minimum detectable difference for a standard error:
// (t(1 − α/2, df) + t(power, df))·SE (Bloom 1995, Evaluation Review 19(5)).
func (in *inferencer) mdd(se float64) float64 {
	return (in.tcrit + in.dist().Quantile(in.power)) * se
}

// equivalence is the two one-sided tests that the difference inf lies
// within (−margin, margin) (Schuirmann 1987): t₁ = (d + Δ)/SE and
// t₂ = (Δ − d)/SE, each referred to t(df) one-sided; the (1 − 2α) interval
// d ± t(1 − α, df)·SE.
func (in *inferencer) equivalence(inf Inference, margin float64) *Equivalence {
	dist := in.dist()
	half := dist.Quantile(1-in.alpha) * inf.SE
	p := math.Max(dist.Survival((inf.Estimate+margin)/inf.SE), dist.Survival((margin-inf.Estimate)/inf.SE))
	return &Equivalence{Margin: margin, CILow: inf.Estimate - half, CIHigh: inf.Estimate + half,
		P: p, Equivalent: p < in.alpha, Bounded: true}
}

// wald tests H0: b_j = 0 for every j in cols: W = b'[V_cols]⁻¹b, F = W/q on
// (q, df) (METHODS §4). ok is false when V_cols is not positive definite
// (for example, fewer clusters than restrictions).
func (in *inferencer) wald(cols []int) (WaldTest, bool) {
	q := len(cols)
	vs := mat.NewSymDense(q, nil)
	b := mat.NewVecDense(q, nil)
	for a, i := range cols {
		b.SetVec(a, in.coef[i])
		for c, j := range cols {
			vs.SetSym(a, c, in.v[i*in.k+j])
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(vs) {
		return WaldTest{}, false
	}
	var z mat.VecDense
	if err := ch.SolveVecTo(&z, b); err != nil {
		return WaldTest{}, false
	}
	f := mat.Dot(b, &z) / float64(q)
	dist := distuv.F{D1: float64(q), D2: float64(in.df)}
	return WaldTest{F: f, DF1: q, DF2: in.df, P: dist.Survival(f)}, true
}

// quantile7 is the sample quantile of sorted data by linear interpolation
// between order statistics (Hyndman & Fan 1996, definition 7; R's default).
func quantile7(sorted []float64, p float64) float64 {
	n := len(sorted)
	h := float64(n-1) * p
	lo := math.Floor(h)
	i := int(lo)
	if i+1 >= n {
		return sorted[n-1]
	}
	return sorted[i] + (h-lo)*(sorted[i+1]-sorted[i])
}

func sortedCopy(x []float64) []float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return s
}
