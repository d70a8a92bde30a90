package estimate

// The streamed fit's third pass (FitStream, stream.go): residuals,
// leverage, the sandwich's middle or the cluster scores, and the
// correction step of the seminormal equations.

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// startResiduals readies the residual pass for the coefficients of f.
func (st *stream) startResiduals(f *lsFit) {
	k := f.k
	st.coef = append(st.coef[:0], f.coef...)
	st.rss = acc{}
	st.xte = make([]acc, k)
	st.tss, st.tssW = 0, 0
	st.meanY = st.swy / st.sw
	st.meanYW = st.swyW / float64(st.ds.n)
	st.meat = blas64.Symmetric{Uplo: blas.Upper, N: k, Stride: k, Data: make([]float64, k*k)}
	st.meatTotal = make([]float64, k*k)
	st.meatBuf = make([]float64, chunkRows*k)
	st.meatRows = 0
	st.meatChunks = 0
	st.scores = nil
	if st.s.Variance == CR1 {
		st.scores = make([]float64, len(st.ds.clusterLabels)*k)
	}
	st.leverageOne = false
	st.r2Columns = f.qr.columnsOfR2()
}

// residualRows is the chunk's own work in the residual pass: each row's
// residual eᵢ in compensated arithmetic, and for HC0–HC3 its leverage and
// the √ωᵢ of its row of the middle of the sandwich, as Fit's residuals,
// leverage and hcVariance compute them, row for row.
func (st *stream) residualRows(w *chunkWorker, p *chunkPart) error {
	if err := st.designRows(w, p, false); err != nil {
		return err
	}
	s, k, q := st.s, st.ds.k, st.qr
	hc := s.Variance != CR1 && s.Variance != Classical
	p.e = grow(p.e, p.n)
	lev := s.Variance == HC2 || s.Variance == HC3
	if hc {
		p.o = grow(p.o, p.n)
	}
	if lev {
		w.u, w.h = grow(w.u, 4*k), grow(w.h, p.n)
		q.leverageRows(st.r2Columns, p.x[:p.n*k], w.h, w.u)
	}
	for r := 0; r < p.n; r++ {
		x := p.x[r*k : (r+1)*k]
		var a acc
		a.add(p.yw[r])
		for j, v := range x {
			a.addProd(-v, st.coef[j])
		}
		e := a.value()
		p.e[r] = e
		if !hc {
			continue
		}
		e2 := e * e
		if lev {
			h := w.h[r]
			if wi := st.ds.within; wi != nil {
				h += wi.leverage(p.unit[r], st.weight(p, r))
			}
			if 1-h <= 1e-10 {
				p.levOne = true
			}
			if s.Variance == HC2 {
				e2 /= 1 - h
			} else {
				e2 /= (1 - h) * (1 - h)
			}
		}
		p.o[r] = math.Sqrt(e2)
	}
	return nil
}

// residuals is the third pass, in chunk order: the sums of the residuals
// and of the outcome, Xᵀe, and the middle of the sandwich (or the cluster
// scores), as Fit's residuals, hcVariance and clusterSandwich compute
// them.
func (st *stream) residuals(p *chunkPart) {
	k := st.ds.k
	st.changed = st.changed || p.changed
	st.leverageOne = st.leverageOne || p.levOne
	for r := 0; r < p.n; r++ {
		y, wi := st.outcome(p, r), st.weight(p, r)
		st.tss += wi * (y - st.meanY) * (y - st.meanY)
		y = p.yw[r]
		st.tssW += (y - st.meanYW) * (y - st.meanYW)
		e := p.e[r]
		st.rss.addProd(e, e)
		x := p.x[r*k : (r+1)*k]
		for j, v := range x {
			st.xte[j].addProd(v, e)
		}
		if st.scores != nil {
			c := p.cluster[r]
			if c < 0 {
				continue
			}
			sc := st.scores[c*k : (c+1)*k]
			for j, v := range x {
				sc[j] += v * e
			}
		}
	}
	if st.s.Variance == CR1 || st.s.Variance == Classical {
		return
	}
	for r := 0; r < p.n; r++ {
		o := p.o[r]
		row := st.meatBuf[st.meatRows*k : (st.meatRows+1)*k]
		for j, v := range p.x[r*k : (r+1)*k] {
			row[j] = o * v
		}
		st.meatRows++
		if st.meatRows == chunkRows {
			st.flushMeat()
		}
	}
}

// flushMeat adds the gathered rows to the current block's part of the
// middle of the sandwich, as sandwich does with each chunk, and a full
// block's part to the sum.
func (st *stream) flushMeat() {
	if st.meatRows == 0 {
		return
	}
	k := st.ds.k
	w := blas64.General{Rows: st.meatRows, Cols: k, Stride: k, Data: st.meatBuf[:st.meatRows*k]}
	blas64.Syrk(blas.Trans, 1, w, 1, st.meat)
	st.meatRows = 0
	st.meatChunks++
	if st.meatChunks == blockChunks {
		st.endMeatBlock()
	}
}

// endMeatBlock adds the current block's part of the middle of the
// sandwich to the sum, in block order as sandwich does.
func (st *stream) endMeatBlock() {
	if st.meatChunks == 0 {
		return
	}
	for i, v := range st.meat.Data {
		st.meatTotal[i] += v
	}
	clear(st.meat.Data)
	st.meatChunks = 0
}

// correct applies one step of the corrected seminormal equations,
// b += (XᵀX)⁻¹·Xᵀe, and reports whether the residuals moved by more than
// correctionTol of their norm, ‖X·Δb‖ = ‖R·P ᵀD·Δb‖ > tol·‖e‖, so that the
// residual pass must be repeated.
func (st *stream) correct(f *lsFit) bool {
	k, q := f.k, f.qr
	g := make([]float64, k)
	for j := range g {
		g[j] = st.xte[j].value()
	}
	dx := make([]float64, k)
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			dx[i] += f.bread[i*k+j] * g[j]
		}
	}
	z := make([]float64, k)
	for j, p := range q.perm {
		z[j] = dx[p] * q.d[p]
	}
	var moved float64
	for i := 0; i < k; i++ {
		var s float64
		for j := i; j < k; j++ {
			s += q.a2[i*k+j] * z[j]
		}
		moved += s * s
	}
	for j := range f.coef {
		f.coef[j] += dx[j]
	}
	return math.Sqrt(moved) > correctionTol*math.Sqrt(st.rss.value())
}

// variance finishes the covariance of the spec's estimator and returns it
// with its degrees of freedom, as Fit's variance does.
func (st *stream) variance(f *lsFit) ([]float64, int) {
	n, k := f.n, f.k
	dfRes := n - k - st.ds.absorbedDF()
	switch st.s.Variance {
	case Classical:
		s2 := f.rss / float64(dfRes)
		v := make([]float64, k*k)
		for i, b := range f.bread {
			v[i] = s2 * b
		}
		return v, dfRes
	case CR1:
		g := len(st.ds.clusterLabels)
		sg := blas64.General{Rows: g, Cols: k, Stride: k, Data: st.scores}
		meat := blas64.General{Rows: k, Cols: k, Stride: k, Data: make([]float64, k*k)}
		blas64.Gemm(blas.Trans, blas.NoTrans, 1, sg, sg, 0, meat)
		v := f.wrap(meat.Data)
		c := float64(g) / float64(g-1) * float64(n-1) / float64(n-k-st.ds.cr1AbsorbedDF())
		for i := range v {
			v[i] *= c
		}
		return v, g - 1
	}
	m := st.meatTotal
	for i := 0; i < k; i++ {
		for j := 0; j < i; j++ {
			m[i*k+j] = m[j*k+i]
		}
	}
	v := f.wrap(m)
	if st.s.Variance == HC1 {
		c := float64(n) / float64(dfRes)
		for i := range v {
			v[i] *= c
		}
	}
	return v, dfRes
}
