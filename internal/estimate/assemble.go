package estimate

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"hash"
	"math"
	"sync/atomic"
)

// histogramBins is the number of bars in a continuous moderator's histogram.
const histogramBins = 20

// histogram counts sorted values in n equal-width bins over their range.
func histogram(sorted []float64, n int) []Bin {
	lo, hi := sorted[0], sorted[len(sorted)-1]
	width := (hi - lo) / float64(n)
	bins := make([]Bin, n)
	for b := range bins {
		bins[b] = Bin{From: lo + float64(b)*width, To: lo + float64(b+1)*width}
	}
	bins[n-1].To = hi
	for _, v := range sorted {
		b := min(int((v-lo)/width), n-1)
		bins[b].Rows++
	}
	return bins
}

// nearShare is the half-width, as a share of the observed range, of the
// window in which rows count as "near" a probe value.
const nearShare = 0.10

// result reads the fit back in the terms of the question: effects by
// group, differences, the heterogeneity test and, for a continuous
// moderator, the Johnson–Neyman analysis.
func (ds *design) result(s Spec, f *lsFit, v []float64, vt VarianceType, df int, notes []string) *Result {
	n, k := ds.n, ds.k
	in := newInferencer(f.coef, v, df, s.Alpha, s.Power)
	res := &Result{Spec: s, Notes: notes}
	res.Rows = RowSummary{Read: ds.rowsRead, Used: n, Dropped: len(ds.dropped), Reasons: ds.counts, List: ds.dropped}

	res.Model = ModelInfo{Terms: k, Variance: vt, DF: df, Clusters: len(ds.clusterLabels),
		Sigma: math.Sqrt(f.rss / float64(n-k-ds.absorbedDF())), Condition: f.qr.cond(), Alpha: s.Alpha, Power: s.Power}
	facts := ds.facts
	if facts == nil {
		facts = ds.rowFacts(f)
	}
	res.Model.R2, res.Model.AdjR2 = facts.r2, facts.adjR2
	res.Model.OutcomeBinary = facts.outcomeBinary
	res.Model.DataSHA256 = facts.hash
	res.Design = ds.designInfo(s, facts)

	res.Covariance = make([][]float64, k)
	for i := 0; i < k; i++ {
		res.Covariance[i] = append([]float64(nil), v[i*k:(i+1)*k]...)
		a := make([]float64, k)
		a[i] = 1
		res.Coefficients = append(res.Coefficients, Coefficient{Term: ds.names[i], Role: ds.roles[i], Inference: in.combo(a)})
	}

	switch {
	case ds.modValue != nil:
		ds.continuousEffects(s, in, res)
	case ds.arms != nil:
		ds.armEffects(s, in, res, facts)
	default:
		ds.groupEffectsOf(s, in, res, facts, ds.tCol, ds.iCols)
	}
	res.Leads = ds.leadsCheck(s, in)
	if nj := judgeJoint(len(ds.iCols), len(ds.clusterLabels)); nj != nil {
		res.HeterogeneityNotJudged = nj
	} else if w, ok := in.wald(ds.iCols); ok {
		res.Heterogeneity = &w
	} else {
		res.Notes = append(res.Notes, fmt.Sprintf("The test that all group effects are equal cannot be computed: the estimated covariance of the %d interaction terms is singular (with clusters, this happens when there are too few of them).", len(ds.iCols)))
	}
	return res
}

// rowFacts are what the result says about the rows used besides the fit:
// R², whether the outcome is 0/1, the data's hash, and each moderator
// group's rows and treated rows. The in-memory fit reads them off the
// design (rowFacts); the streamed fit gathers them as the rows pass.
type rowFacts struct {
	r2, adjR2     float64
	outcomeBinary bool
	hash          string
	rows, treated []int // by moderator level
	// cells counts the rows of a before-and-after design by group of
	// units and period (2·T + P).
	cells [4]int
}

// rowFacts computes the facts from the design's rows.
func (ds *design) rowFacts(f *lsFit) *rowFacts {
	rf := &rowFacts{outcomeBinary: true}
	ys := ds.y
	if ds.yRaw != nil {
		ys = ds.yRaw
	}
	var sw, swy float64
	for i, y := range ys {
		w := 1.0
		if ds.w != nil {
			w = ds.w[i]
		}
		sw += w
		swy += w * y
		if y != 0 && y != 1 {
			rf.outcomeBinary = false
		}
	}
	if ds.hash != nil {
		rf.hash = ds.hash.wait()
	} else {
		rf.hash = ds.rowHash(nil)
	}
	mean := swy / sw
	var tss float64
	for i, y := range ys {
		w := 1.0
		if ds.w != nil {
			w = ds.w[i]
		}
		tss += w * (y - mean) * (y - mean)
	}
	rf.r2, rf.adjR2 = rSquared(f.rss, tss, ds.n, ds.k+ds.absorbedDF())
	for r, p := range ds.period {
		rf.cells[2*int(ds.treat[r])+int(p)]++
	}
	if ds.modLevel != nil {
		rf.rows = make([]int, len(ds.levels))
		rf.treated = make([]int, len(ds.levels))
		for r, l := range ds.modLevel {
			rf.rows[l]++
			if ds.treat[r] == 1 {
				rf.treated[l]++
			}
		}
	}
	return rf
}

// rSquared returns R² and adjusted R² from the residual and total sums of
// squares, weighted when there are weights (the model always has an
// intercept, so both are centred).
func rSquared(rss, tss float64, n, k int) (float64, float64) {
	r2 := 1 - rss/tss
	adj := 1 - (1-r2)*float64(n-1)/float64(n-k)
	return r2, adj
}

// rowHash is the SHA-256 of the values used, row by row, as little-endian
// float64 bits: the row of the model matrix, the outcome, the weight (when
// there are weights) and the cluster number (when there are clusters).
// Row by row, so that a streamed fit computes it in one pass.
type rowHash struct {
	h   hash.Hash
	buf []byte
}

func newRowHash() *rowHash { return &rowHash{h: sha256.New(), buf: make([]byte, 0, 8*1024)} }

// row adds row i; w and cluster are nil when the model has none. The
// buffer is handed to the hash before a row that might not fit, so that
// the row's values are appended without a check each.
func (rh *rowHash) row(x []float64, y float64, w []float64, i int, cluster []int) {
	if len(rh.buf)+8*(len(x)+3) > cap(rh.buf) {
		rh.h.Write(rh.buf)
		rh.buf = rh.buf[:0]
	}
	b := rh.buf
	for _, v := range x {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
	}
	b = binary.LittleEndian.AppendUint64(b, math.Float64bits(y))
	if w != nil {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(w[i]))
	}
	if cluster != nil {
		b = binary.LittleEndian.AppendUint64(b, uint64(cluster[i]))
	}
	rh.buf = b
}

// rowHash returns the rowHash of the design's rows, or "" once stop is
// set (stop may be nil).
func (ds *design) rowHash(stop *atomic.Bool) string {
	h := newRowHash()
	for i, y := range ds.y {
		if i%blockRows == 0 && stop != nil && stop.Load() {
			return ""
		}
		h.row(ds.x[i*ds.k:(i+1)*ds.k], y, ds.w, i, ds.cluster)
	}
	return h.sum()
}

// hashJob is the rowHash of a design computed on a goroutine of its own.
// SHA-256 is sequential, so instead of taking its turn it runs beside the
// factorization and the variance, which use the other cores; the result
// waits for it.
type hashJob struct {
	done chan string
	stop atomic.Bool
}

// startHash starts computing the design's rowHash; the design's rows
// must not change until it is waited for or stopped.
func (ds *design) startHash() {
	j := &hashJob{done: make(chan string, 1)}
	ds.hash = j
	go func() { j.done <- ds.rowHash(&j.stop) }()
}

// wait returns the hash.
func (j *hashJob) wait() string { return <-j.done }

// stopHash ends the computation of a hash that will not be used; nil-safe.
func (j *hashJob) stopHash() {
	if j != nil {
		j.stop.Store(true)
	}
}

func (rh *rowHash) sum() string {
	rh.h.Write(rh.buf)
	rh.buf = rh.buf[:0]
	return hex.EncodeToString(rh.h.Sum(nil))
}

// groupEffectsOf fills the effects and differences of a binary or
// categorical moderator: θ(level) = b1 + b3[level] (METHODS §4), b1 the
// coefficient of column tCol and b3 those of iCols (one arm's, with
// several arms).
func (ds *design) groupEffectsOf(s Spec, in *inferencer, res *Result, facts *rowFacts, tCol int, iCols []int) {
	res.Moderator = ModeratorInfo{Column: s.Moderator.Column, Kind: s.Moderator.Kind, Levels: ds.levels, Reference: ds.levels[ds.ref]}
	binaryT := s.Treatment.Kind != TreatmentContinuous
	// icol[level] is the interaction column of the level, −1 for the reference.
	icol := make([]int, len(ds.levels))
	next := 0
	for j := range ds.levels {
		if j == ds.ref {
			icol[j] = -1
			continue
		}
		icol[j] = iCols[next]
		next++
	}
	rows, treated := facts.rows, facts.treated
	// Report order: the reference first, then the other levels in order.
	order := []int{ds.ref}
	for j := range ds.levels {
		if j != ds.ref {
			order = append(order, j)
		}
	}
	for _, j := range order {
		a := make([]float64, ds.k)
		a[tCol] = 1
		if icol[j] >= 0 {
			a[icol[j]] = 1
		}
		e := GroupEffect{Group: ds.levels[j], Reference: j == ds.ref, Rows: rows[j], Inference: in.combo(a), Contrast: a}
		ds.effectA = append(ds.effectA, a)
		if binaryT {
			e.Treated, e.Untreated = treated[j], rows[j]-treated[j]
		}
		res.Effects = append(res.Effects, e)
	}
	for p, ja := range order {
		for _, jb := range order[p+1:] {
			a := make([]float64, ds.k)
			if icol[jb] >= 0 {
				a[icol[jb]] += 1
			}
			if icol[ja] >= 0 {
				a[icol[ja]] -= 1
			}
			inf := in.combo(a)
			ds.diffA = append(ds.diffA, a)
			res.Differences = append(res.Differences, Difference{From: ds.levels[ja], To: ds.levels[jb],
				VsReference: ja == ds.ref, Inference: inf, Contrast: a, MDD: in.mdd(inf.SE), Equivalence: equivalenceOf(in, inf, s)})
		}
	}
}

// continuousEffects fills the effects at probe values of a continuous
// moderator, θ(m) = b1 + b3·(m − c), the differences and the
// Johnson–Neyman analysis (METHODS §5).
func (ds *design) continuousEffects(s Spec, in *inferencer, res *Result) {
	sorted := sortedCopy(ds.modValue)
	lo, hi := sorted[0], sorted[len(sorted)-1]
	res.Moderator = ModeratorInfo{Column: s.Moderator.Column, Kind: s.Moderator.Kind, Min: lo, Max: hi, Centre: ds.centre,
		Histogram: histogram(sorted, histogramBins)}
	type probe struct {
		label string
		value float64
	}
	var probes []probe
	if s.Moderator.Probes == nil {
		for _, p := range []int{10, 25, 50, 75, 90} {
			probes = append(probes, probe{fmt.Sprintf("p%d", p), quantile7(sorted, float64(p)/100)})
		}
	} else {
		// In increasing order, whatever order they were typed in, so that
		// the last minus the first is the highest minus the lowest.
		for _, v := range sortedCopy(s.Moderator.Probes) {
			probes = append(probes, probe{formatNumber(v), v})
		}
	}
	seen := map[float64]bool{}
	var kept []probe
	for _, p := range probes {
		if !seen[p.value] {
			seen[p.value] = true
			kept = append(kept, p)
		}
	}
	binaryT := s.Treatment.Kind != TreatmentContinuous
	b3 := ds.iCols[0]
	half := nearShare * (hi - lo)
	var outside []string
	for _, p := range kept {
		a := make([]float64, ds.k)
		a[ds.tCol] = 1
		a[b3] = p.value - ds.centre
		e := GroupEffect{Group: p.label, Value: p.value, Inference: in.combo(a), Contrast: a, Extrapolated: p.value < lo || p.value > hi}
		ds.effectA = append(ds.effectA, a)
		for r, m := range ds.modValue {
			if math.Abs(m-p.value) <= half {
				e.Rows++
				if binaryT && ds.treat[r] == 1 {
					e.Treated++
				}
			}
		}
		if binaryT {
			e.Untreated = e.Rows - e.Treated
		}
		if e.Extrapolated {
			outside = append(outside, formatNumber(p.value))
		}
		res.Effects = append(res.Effects, e)
	}
	if outside != nil {
		res.Notes = append(res.Notes, fmt.Sprintf("The moderator value(s) %s lie outside the observed range %s to %s; effects there are extrapolated from the straight-line model.", quoteList(outside), formatNumber(lo), formatNumber(hi)))
	}

	unit := make([]float64, ds.k)
	unit[b3] = 1
	inf := in.combo(unit)
	ds.diffA = append(ds.diffA, unit)
	res.Differences = append(res.Differences, Difference{PerUnit: true, Inference: inf, Contrast: unit, MDD: in.mdd(inf.SE)})
	if len(kept) > 1 {
		first, last := kept[0], kept[len(kept)-1]
		a := make([]float64, ds.k)
		a[b3] = last.value - first.value
		inf := in.combo(a)
		ds.diffA = append(ds.diffA, a)
		res.Differences = append(res.Differences, Difference{From: first.label, To: last.label, Inference: inf, Contrast: a, MDD: in.mdd(inf.SE),
			Equivalence: equivalenceOf(in, inf, s)})
	}
	res.JohnsonNeyman = johnsonNeyman(in, ds.tCol, b3, ds.centre, lo, hi)
}

// equivalenceOf is the equivalence test of a difference when the spec
// gives a margin.
func equivalenceOf(in *inferencer, inf Inference, s Spec) *Equivalence {
	if s.EquivalenceMargin <= 0 || !(inf.SE > 0) {
		return nil
	}
	return in.equivalence(inf, s.EquivalenceMargin)
}
