package estimate

import (
	"context"
	"math"
	"math/rand/v2"
)

// The restricted wild cluster bootstrap-t (Cameron, Gelbach & Miller 2008,
// Review of Economics and Statistics 90(3); METHODS §8).
//
// For a hypothesis a'β = r, the restricted estimate is
//
//	β̃ = β̂ − d·(a'β̂ − r),  d = Ba/(a'Ba),  B = (X'X)⁻¹,
//
// with residuals ũ. A draw gives each cluster a weight v_g and rebuilds
// y* = Xβ̃ + v_g·ũ; refitting gives β̂* = β̃ + δ with δ = Σ_h v_h·B·X_h'ũ_h,
// and the cluster scores of the refit are S*_g = v_g·X_g'ũ_g − M_g·δ with
// M_g = X_g'X_g. So with the per-cluster blocks M_g and the unrestricted
// scores ŝ_g = X_g'ê_g computed once, a draw costs O(G·K) and no refit:
//
//	t* = a'δ / √(c·Σ_g w_g²),  w_g = v_g·a'B X_g'ũ_g − (M_g B a)'δ,
//
// c being the CR1 factor G/(G−1)·(N−1)/(N−K). Writing the null value as
// r = a'β̂ + s·SE makes ũ, δ and w_g affine in s, so every draw is kept as
// five numbers from which t*(s) follows for any s in O(1): the test can be
// inverted for a confidence interval without redrawing. p is the share of
// draws with |t*| ≥ |t|.

// BootstrapClusters is the number of clusters below which the bootstrap
// runs unless it is turned off: cluster-robust tests over-reject with fewer
// than about 40 clusters (Cameron & Miller 2015, J. Human Resources 50(2),
// §VI).
const BootstrapClusters = 42

// DefaultDraws is the number of bootstrap draws B when the spec gives none.
const DefaultDraws = 9999

// MaxDraws bounds B, so that a mistyped number cannot run for hours.
const MaxDraws = 999_999

// webbClusters: Webb's six-point weights at or below this many clusters
// (Webb 2014, Queen's Economics Department WP 1315; METHODS §8), where the
// two-point weights have too few distinct draws. The same holds when a
// group of the moderator lies in this many clusters or fewer, however many
// there are in all: its effect then turns on those clusters' weights alone,
// and with two-point weights its p-value cannot fall below 2/2^g for g of
// them (the draws that only flip the other clusters change nothing).
const webbClusters = 12

// tieShare is the relative distance within which a bootstrap statistic
// counts as equal to the observed one. The draw with every weight 1
// rebuilds the data exactly, so its statistic equals the observed one in
// exact arithmetic; this makes it count whatever the rounding.
const tieShare = 1e-9

// BootWeights names the distribution of the cluster weights v_g.
type BootWeights string

const (
	// Rademacher weights are −1 and 1 with probability ½ each.
	Rademacher BootWeights = "rademacher"
	// Webb weights are ±√(3/2), ±1, ±√(1/2) with probability ⅙ each
	// (Webb 2014).
	Webb BootWeights = "webb"
)

// Bootstrap says whether and how the wild cluster bootstrap runs. It only
// ever runs with a cluster column, and by default only when that column
// has fewer than BootstrapClusters clusters.
type Bootstrap struct {
	// Off turns the bootstrap off.
	Off bool `json:"off,omitempty"`
	// Draws is B; 0 means DefaultDraws. When every possible draw can be
	// listed in B or fewer (2^G for Rademacher, 6^G for Webb weights), all
	// are used instead, each once.
	Draws int `json:"draws,omitempty"`
	// Seed starts the random draws; the same seed gives the same answer.
	Seed uint64 `json:"seed,omitempty"`
	// Weights forces a weight distribution; empty means Webb's with 12
	// clusters or fewer, or when a group of the moderator lies in 12
	// clusters or fewer; Rademacher's otherwise.
	Weights BootWeights `json:"weights,omitempty"`
}

// BootstrapInfo says how the bootstrap of a result was run.
type BootstrapInfo struct {
	// Draws is the number of draws used: B, or all possible draws when
	// Enumerated.
	Draws      int         `json:"draws"`
	Weights    BootWeights `json:"weights"`
	Enumerated bool        `json:"enumerated"`
	Seed       uint64      `json:"seed"`
}

// BootInference is the bootstrap's answer for one effect or difference:
// the p-value of the hypothesis that it is zero, and the 1 − α interval of
// the values the bootstrap test does not reject (test inversion).
type BootInference struct {
	P      float64 `json:"p"`
	CILow  float64 `json:"ci_low"`
	CIHigh float64 `json:"ci_high"`
	// Bounded is false when the test does not reject however far the null
	// value is moved (possible only with very few distinct draws); the
	// interval is then left at zero and must not be shown.
	Bounded bool `json:"bounded"`
}

// bootPlan is the weight distribution and the draws of one bootstrap.
type bootPlan struct {
	info  BootstrapInfo
	table []float64 // the weight values
	idx   []uint8   // draw b, cluster g: table index idx[b*g+g]
	g     int
}

// planBootstrap chooses the weights and makes the draws for g clusters,
// fewest being the smallest number of clusters in which a group of the
// moderator lies (g when the moderator is a number).
func planBootstrap(g, fewest int, b Bootstrap) *bootPlan {
	w := b.Weights
	if w == "" {
		w = Rademacher
		if g <= webbClusters || fewest <= webbClusters {
			w = Webb
		}
	}
	table := []float64{-1, 1}
	if w == Webb {
		table = []float64{-math.Sqrt(1.5), -1, -math.Sqrt(0.5), math.Sqrt(0.5), 1, math.Sqrt(1.5)}
	}
	levels := len(table)
	p := &bootPlan{info: BootstrapInfo{Draws: b.Draws, Weights: w, Seed: b.Seed}, table: table, g: g}
	// All levels^g draws, when there are no more than B of them.
	all := 1
	for range g {
		all *= levels
		if all > b.Draws {
			break
		}
	}
	if all <= b.Draws {
		p.info.Draws, p.info.Enumerated = all, true
		p.idx = make([]uint8, all*g)
		for d := range all {
			rest := d
			for j := range g {
				p.idx[d*g+j] = uint8(rest % levels)
				rest /= levels
			}
		}
		return p
	}
	rng := rand.New(rand.NewPCG(b.Seed, 0x5107e415e))
	p.idx = make([]uint8, b.Draws*g)
	if levels == 2 {
		var bits uint64
		left := 0
		for i := range p.idx {
			if left == 0 {
				bits, left = rng.Uint64(), 64
			}
			p.idx[i] = uint8(bits & 1)
			bits >>= 1
			left--
		}
		return p
	}
	for i := range p.idx {
		p.idx[i] = uint8(rng.IntN(levels))
	}
	return p
}

// wild holds what every hypothesis of one bootstrap shares: the bread, the
// per-cluster cross-products and scores, and the draws.
type wild struct {
	g, k  int
	scale float64 // the CR1 factor c
	plan  *bootPlan
	bread []float64 // B, k×k
	m     []float64 // M_g = X_g'X_g, g×k×k
	bm    []float64 // B·M_g, g×k×k
	c0    []float64 // B·ŝ_g, g×k
	ctx   context.Context
}

// newWild computes the per-cluster blocks of a fit in one pass over the
// rows: O(N·K²).
func newWild(ctx context.Context, f *lsFit, cluster []int, g int, plan *bootPlan) *wild {
	k, n := f.k, f.n
	w := &wild{g: g, k: k, plan: plan, bread: f.bread, ctx: ctx,
		scale: float64(g) / float64(g-1) * float64(n-1) / float64(n-k),
		m:     make([]float64, g*k*k), bm: make([]float64, g*k*k), c0: make([]float64, g*k)}
	s := make([]float64, g*k)
	for i, c := range cluster {
		row := f.x[i*k : (i+1)*k]
		mg := w.m[c*k*k : (c+1)*k*k]
		for a, xa := range row {
			if xa == 0 {
				continue
			}
			line := mg[a*k : (a+1)*k]
			for b := a; b < k; b++ {
				line[b] += xa * row[b]
			}
		}
		e := f.resid[i]
		sg := s[c*k : (c+1)*k]
		for j, v := range row {
			sg[j] += v * e
		}
	}
	for c := range g {
		mg := w.m[c*k*k : (c+1)*k*k]
		for a := range k {
			for b := 0; b < a; b++ {
				mg[a*k+b] = mg[b*k+a]
			}
		}
		bmg := w.bm[c*k*k : (c+1)*k*k]
		for a := range k {
			for b := range k {
				var sum float64
				for j := range k {
					sum += w.bread[a*k+j] * mg[j*k+b]
				}
				bmg[a*k+b] = sum
			}
		}
		matVec(w.c0[c*k:(c+1)*k], w.bread, s[c*k:(c+1)*k], k)
	}
	return w
}

// matVec sets out = A·x for the k×k row-major A.
func matVec(out, a, x []float64, k int) {
	for i := range k {
		var sum float64
		for j, xj := range x {
			sum += a[i*k+j] * xj
		}
		out[i] = sum
	}
}

func dot(a, b []float64) float64 {
	var s float64
	for i, v := range a {
		s += v * b[i]
	}
	return s
}

// weight returns v_g of draw d.
func (p *bootPlan) weight(d, g int) float64 { return p.table[p.idx[d*p.g+g]] }

// singleDraws holds, for one hypothesis a'β = r, each draw's statistic as
// a function of s = (r − a'β̂)/SE: t*(s) = (n0 − s·n1)/√(c·(q0 − 2s·q1 + s²·q2)).
type singleDraws struct {
	n0, n1, q0, q1, q2 []float64
	scale              float64
	est, se            float64
}

// single draws the statistics of the hypothesis a'β = r whose estimate is
// est with CR1 standard error se. ok is false when cancelled.
func (w *wild) single(a []float64, est, se float64) (*singleDraws, bool) {
	g, k := w.g, w.k
	ba := make([]float64, k)
	matVec(ba, w.bread, a, k)
	aba := dot(a, ba)
	d := make([]float64, k)
	for j := range d {
		d[j] = ba[j] / aba
	}
	// c_g(s) = c0_g − s·c1_g, c1_g = SE·B·M_g·d; ρ_g = M_g·B·a.
	c1 := make([]float64, g*k)
	rho := make([]float64, g*k)
	alpha0 := make([]float64, g)
	alpha1 := make([]float64, g)
	for c := range g {
		c1g := c1[c*k : (c+1)*k]
		matVec(c1g, w.bm[c*k*k:(c+1)*k*k], d, k)
		for j := range c1g {
			c1g[j] *= se
		}
		matVec(rho[c*k:(c+1)*k], w.m[c*k*k:(c+1)*k*k], ba, k)
		alpha0[c] = dot(a, w.c0[c*k:(c+1)*k])
		alpha1[c] = dot(a, c1g)
	}
	draws := w.plan.info.Draws
	sd := &singleDraws{scale: w.scale, est: est, se: se,
		n0: make([]float64, draws), n1: make([]float64, draws),
		q0: make([]float64, draws), q1: make([]float64, draws), q2: make([]float64, draws)}
	d0 := make([]float64, k)
	d1 := make([]float64, k)
	v := make([]float64, g)
	for b := range draws {
		if b%4096 == 0 && w.ctx.Err() != nil {
			return nil, false
		}
		clear(d0)
		clear(d1)
		var n0, n1 float64
		for h := range g {
			vh := w.plan.weight(b, h)
			v[h] = vh
			c0h, c1h := w.c0[h*k:(h+1)*k], c1[h*k:(h+1)*k]
			for j := range k {
				d0[j] += vh * c0h[j]
				d1[j] += vh * c1h[j]
			}
			n0 += vh * alpha0[h]
			n1 += vh * alpha1[h]
		}
		var q0, q1, q2 float64
		for h := range g {
			rh := rho[h*k : (h+1)*k]
			w0 := v[h]*alpha0[h] - dot(rh, d0)
			w1 := v[h]*alpha1[h] - dot(rh, d1)
			q0 += w0 * w0
			q1 += w0 * w1
			q2 += w1 * w1
		}
		sd.n0[b], sd.n1[b], sd.q0[b], sd.q1[b], sd.q2[b] = n0, n1, q0, q1, q2
	}
	return sd, true
}

// p is the bootstrap p-value of the null value r = est + s·SE: the share
// of draws with |t*(s)| ≥ |t(s)| = |s|, compared squared so that a draw with
// no variation counts whenever its numerator is not zero.
func (sd *singleDraws) p(s float64) float64 {
	lim := s * s * (1 - tieShare)
	count := 0
	for b, n0 := range sd.n0 {
		num := n0 - s*sd.n1[b]
		den := sd.scale * math.Max(0, sd.q0[b]-2*s*sd.q1[b]+s*s*sd.q2[b])
		if num*num >= lim*den {
			count++
		}
	}
	return float64(count) / float64(len(sd.n0))
}

// pAt is the p-value of the null value r.
func (sd *singleDraws) pAt(r float64) float64 { return sd.p((r - sd.est) / sd.se) }

// maxReach is how many standard errors from the estimate the search for an
// interval's end goes before calling that side unbounded.
const maxReach = 1 << 14

// interval inverts the test: the null values r whose p-value is at least
// level, found by doubling outwards from the estimate until the test
// rejects and then bisecting. ok is false when a side never rejects.
func (sd *singleDraws) interval(level float64) (lo, hi float64, ok bool) {
	edge := func(dir float64) (float64, bool) {
		inner, outer := 0.0, 1.0
		for sd.p(dir*outer) >= level {
			inner = outer
			outer *= 2
			if outer > maxReach {
				return 0, false
			}
		}
		for range 100 {
			mid := (inner + outer) / 2
			if outer-inner <= 1e-10*outer || mid == inner || mid == outer {
				break
			}
			if sd.p(dir*mid) >= level {
				inner = mid
			} else {
				outer = mid
			}
		}
		return dir * (inner + outer) / 2, true
	}
	sLo, okLo := edge(-1)
	sHi, okHi := edge(1)
	if !okLo || !okHi {
		return 0, 0, false
	}
	return sd.est + sLo*sd.se, sd.est + sHi*sd.se, true
}

// inference is the bootstrap p-value of zero and the 1 − α interval.
func (sd *singleDraws) inference(alpha float64) *BootInference {
	bi := &BootInference{P: sd.pAt(0)}
	bi.CILow, bi.CIHigh, bi.Bounded = sd.interval(alpha)
	return bi
}

// equivalence is the two one-sided tests of the difference against the
// margin by the bootstrap (Schuirmann 1987 with the bootstrap-t): the
// (1 − 2α) interval by inverting the test at level 2α, and each one-sided
// p-value half the symmetric test's p at ±Δ when the estimate lies on the
// side the alternative claims, one minus that half otherwise.
func (sd *singleDraws) equivalence(margin, alpha float64) *Equivalence {
	e := &Equivalence{Margin: margin, Bootstrap: true}
	e.CILow, e.CIHigh, e.Bounded = sd.interval(2 * alpha)
	oneSided := func(r float64, inside bool) float64 {
		half := sd.pAt(r) / 2
		if inside {
			return half
		}
		return 1 - half
	}
	e.P = math.Max(oneSided(-margin, sd.est > -margin), oneSided(margin, sd.est < margin))
	e.Equivalent = e.Bounded && e.P < alpha
	return e
}

// wald is the bootstrap p-value of the Wald test that the coefficients in
// cols are all zero, observed statistic f (an F, W/q). The restricted fit
// imposes all of them: β̃ = β̂ − D, D = BR'(RBR')⁻¹Rβ̂, so ũ_g = ê_g + X_g·D.
// ok is false when cancelled or when RBR' cannot be factored.
func (w *wild) wald(cols []int, coef []float64, f float64) (float64, bool) {
	g, k, q := w.g, w.k, len(cols)
	rbr := make([]float64, q*q)
	rb := make([]float64, q)
	for i, ci := range cols {
		rb[i] = coef[ci]
		for j, cj := range cols {
			rbr[i*q+j] = w.bread[ci*k+cj]
		}
	}
	z, ok := cholSolve(rbr, rb, q)
	if !ok {
		return 0, false
	}
	dvec := make([]float64, k)
	for j := range k {
		for i, ci := range cols {
			dvec[j] += w.bread[j*k+ci] * z[i]
		}
	}
	// c_g = B·X_g'ũ_g = c0_g + B·M_g·D; the rows cols of B·M_g give R·B·M_g.
	c := make([]float64, g*k)
	for h := range g {
		ch := c[h*k : (h+1)*k]
		matVec(ch, w.bm[h*k*k:(h+1)*k*k], dvec, k)
		for j := range ch {
			ch[j] += w.c0[h*k+j]
		}
	}
	draws := w.plan.info.Draws
	delta := make([]float64, k)
	num := make([]float64, q)
	u := make([]float64, q)
	meat := make([]float64, q*q)
	count := 0
	for b := range draws {
		if b%4096 == 0 && w.ctx.Err() != nil {
			return 0, false
		}
		clear(delta)
		for h := range g {
			vh := w.plan.weight(b, h)
			ch := c[h*k : (h+1)*k]
			for j := range k {
				delta[j] += vh * ch[j]
			}
		}
		for i, ci := range cols {
			num[i] = delta[ci]
		}
		clear(meat)
		for h := range g {
			vh := w.plan.weight(b, h)
			bmh := w.bm[h*k*k : (h+1)*k*k]
			for i, ci := range cols {
				u[i] = vh*c[h*k+ci] - dot(bmh[ci*k:(ci+1)*k], delta)
			}
			for i := range q {
				for j := range q {
					meat[i*q+j] += u[i] * u[j]
				}
			}
		}
		for i := range meat {
			meat[i] *= w.scale
		}
		x, ok := cholSolve(meat, num, q)
		// A draw whose variance is singular has an unbounded statistic.
		if !ok || dot(num, x)/float64(q) >= f*(1-tieShare) {
			count++
		}
	}
	return float64(count) / float64(draws), true
}

// cholSolve solves A·x = b for a small symmetric positive definite A
// (q×q, row-major) by Cholesky factorization, leaving A and b untouched.
// ok is false when A is not positive definite.
func cholSolve(a, b []float64, q int) ([]float64, bool) {
	l := make([]float64, q*q)
	for i := range q {
		for j := 0; j <= i; j++ {
			sum := a[i*q+j]
			for p := range j {
				sum -= l[i*q+p] * l[j*q+p]
			}
			if i == j {
				if !(sum > 0) {
					return nil, false
				}
				l[i*q+i] = math.Sqrt(sum)
			} else {
				l[i*q+j] = sum / l[j*q+j]
			}
		}
	}
	x := append([]float64(nil), b...)
	for i := range q {
		for p := range i {
			x[i] -= l[i*q+p] * x[p]
		}
		x[i] /= l[i*q+i]
	}
	for i := q - 1; i >= 0; i-- {
		for p := i + 1; p < q; p++ {
			x[i] -= l[p*q+i] * x[p]
		}
		x[i] /= l[i*q+i]
	}
	return x, true
}

// bootstrap adds the wild cluster bootstrap's p-values and intervals to
// every effect and difference of res, and its p-value to the joint tests:
// that all group effects are equal, and the linearity check's test of the
// line against the thirds (which then decides Contradicts).
func (ds *design) bootstrap(ctx context.Context, f *lsFit, s Spec, res *Result, progress func(done, total int)) error {
	g := len(ds.clusterLabels)
	plan := planBootstrap(g, ds.fewestClusters(), s.Bootstrap)
	w := newWild(ctx, f, ds.cluster, g, plan)
	lin := res.Linearity
	if lin != nil && (lin.Wald == nil || ds.binned == nil) {
		lin = nil
	}
	total := len(res.Effects) + len(res.Differences) + 1
	if lin != nil {
		total++
	}
	done := 0
	step := func() {
		done++
		if progress != nil {
			progress(done, total)
		}
	}
	one := func(a []float64, inf Inference) (*singleDraws, error) {
		if !(inf.SE > 0) || math.IsInf(inf.SE, 0) {
			step()
			return nil, nil
		}
		sd, ok := w.single(a, inf.Estimate, inf.SE)
		if !ok {
			return nil, ctx.Err()
		}
		step()
		return sd, nil
	}
	for i := range res.Effects {
		sd, err := one(ds.effectA[i], res.Effects[i].Inference)
		if err != nil {
			return err
		}
		if sd != nil {
			res.Effects[i].Boot = sd.inference(s.Alpha)
		}
	}
	for i := range res.Differences {
		d := &res.Differences[i]
		sd, err := one(ds.diffA[i], d.Inference)
		if err != nil {
			return err
		}
		if sd != nil {
			d.Boot = sd.inference(s.Alpha)
			if d.Equivalence != nil {
				d.Equivalence = sd.equivalence(s.EquivalenceMargin, s.Alpha)
			}
		}
	}
	if h := res.Heterogeneity; h != nil {
		var p float64
		ok := true
		if len(ds.iCols) == 1 {
			// One restriction: the t test of the interaction, so that the
			// p-value is the very one of the difference it equals.
			j := ds.iCols[0]
			a := make([]float64, ds.k)
			a[j] = 1
			var sd *singleDraws
			if sd, ok = w.single(a, f.coef[j], res.Coefficients[j].SE); ok {
				p = sd.pAt(0)
			}
		} else {
			p, ok = w.wald(ds.iCols, f.coef, h.F)
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		if ok {
			h.PBoot = &p
		}
	}
	for a := range res.Arms {
		// Each arm's test, the same restricted bootstrap of its Wald
		// statistic; then Holm over the arms again, on these p-values.
		if h := res.Arms[a].Heterogeneity; h != nil {
			if p, ok := w.wald(ds.arms[a].iCols, f.coef, h.F); ok {
				h.PBoot = &p
			}
		}
	}
	if res.Arms != nil {
		if err := ctx.Err(); err != nil {
			return err
		}
		adjustArms(res)
	}
	if lc := res.Leads; lc != nil && lc.Test != nil {
		// The leads' test, the same restricted bootstrap of its Wald
		// statistic, which then decides Contradicts.
		if p, ok := w.wald(ds.leadCols, f.coef, lc.Test.F); ok {
			lc.Test.PBoot = &p
			lc.Contradicts = p < s.Alpha
		}
		if err := ctx.Err(); err != nil {
			return err
		}
	}
	step()
	if lin != nil {
		// The check of the line: the same restricted bootstrap of the
		// Wald statistic, on the binned model, with the same draws.
		wb := newWild(ctx, ds.binned, ds.cluster, g, plan)
		p, ok := wb.wald(linearityCols(ds.k), ds.binned.coef, lin.Wald.F)
		if err := ctx.Err(); err != nil {
			return err
		}
		if ok {
			lin.Wald.PBoot = &p
			lin.Contradicts = p < s.Alpha
		}
		step()
	}
	res.Bootstrap = &plan.info
	return nil
}

// fewestClusters is the smallest number of clusters in which a group of a
// binary or categorical moderator lies; for a continuous moderator, all.
func (ds *design) fewestClusters() int {
	if ds.modLevel == nil {
		return len(ds.clusterLabels)
	}
	in := make([]map[int]bool, len(ds.levels))
	for r, l := range ds.modLevel {
		if in[l] == nil {
			in[l] = map[int]bool{}
		}
		in[l][ds.cluster[r]] = true
	}
	fewest := len(ds.clusterLabels)
	for _, set := range in {
		fewest = min(fewest, len(set))
	}
	return fewest
}
