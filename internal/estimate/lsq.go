package estimate

import (
	"math"
	"runtime"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// condRefine is the condition number (of the column-scaled design) above
// which the inverse cross-product is also refined column by column. Below
// it, the plain factorization already gives more than ten correct digits.
const condRefine = 1e5

// refineSteps bounds the refinement iterations; each costs O(N·K).
const refineSteps = 6

// lsFit is a least-squares fit of y on X, where X and y already carry the
// square roots of any weights (METHODS §2).
type lsFit struct {
	n, k  int
	x     []float64 // X, n×k row-major
	y     []float64
	coef  []float64
	resid []float64
	rss   float64
	bread []float64 // (XᵀX)⁻¹, k×k row-major
	qr    *qrFactor
}

// alias describes a column of X that is a linear combination of others.
type alias struct {
	col      int   // the aliased column
	partners []int // the columns it is a combination of
}

// The plain QR solution is not refined when its error bound is below
// refineNeedless of the coefficients' norm and below refineNeedlessEach of
// each coefficient or of its standard error, whichever is larger (see
// needsRefinement).
const (
	refineNeedless     = 1e-12
	refineNeedlessEach = 1e-9
)

// fitLS fits y on X (n×k row-major). When X does not have full column rank,
// it returns no fit and the aliased columns instead.
//
// The plain solution comes from factoring [X y] without keeping
// reflectors (factorQRy). When it may be less accurate than
// refineNeedless, or the inverse cross-product must be refined (condition
// estimate above condRefine), X is factored again keeping the reflectors
// and the solution refined (factorQR, refine); that costs a second
// factorization, but only for ill-conditioned designs.
func fitLS(x, y []float64, n, k int) (*lsFit, []alias) {
	q, qty := factorQRy(x, y, n, k)
	if q.rank < k {
		return nil, q.aliases()
	}
	f := &lsFit{n: n, k: k, x: x, y: y, qr: q}
	refine := q.cond() > condRefine
	if !refine {
		f.coef = q.solveQty(qty)
		f.resid = residuals(x, y, f.coef, k)
		f.rss = sumSquares(f.resid)
		refine = q.needsRefinement(f.coef, f.rss, n)
	}
	if refine {
		if q = factorQR(x, n, k); q.rank < k {
			return nil, q.aliases()
		}
		f.qr = q
		f.coef = q.solveLS(y)
		q.refine(x, y, make([]float64, k), f.coef, refineSteps)
		f.resid = residuals(x, y, f.coef, k)
		f.rss = sumSquares(f.resid)
	}
	f.bread = f.inverseCrossProduct()
	return f, nil
}

// sumSquares returns Σ eᵢ², accumulated in compensated arithmetic.
func sumSquares(e []float64) float64 {
	var a acc
	for _, v := range e {
		a.addProd(v, v)
	}
	return a.value()
}

// needsRefinement reports whether the plain QR solution b of a full-rank
// problem of n rows, with residual sum of squares rss, may be less
// accurate than refineNeedless and refineNeedlessEach ask. For Householder
// QR the computed solution is the exact one of a problem perturbed by
// about u (the unit roundoff) relative to each column, so its error is
// bounded, to first order, by
//
//	‖Δz‖/‖z‖ ≲ c·u·(κ + κ²·‖r‖/(‖A‖·‖z‖))
//
// (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., ch. 20:
// Theorem 20.3 with the perturbation bound of Theorem 20.1), here for the
// column-scaled A = X·D⁻¹·P, whose columns have norm 1 so that
// 1 ≤ ‖A‖ ≤ √K, with z = Pᵀ·D·b and r the residuals. κ is the estimate
// |R2₁₁|/|R2ᵣᵣ|, which can fall short of κ₂(A); c, taken as K, stands for
// the growth of rounding errors with the size of the problem and for that
// shortfall. The bound is norm-wise: a coefficient much smaller than the
// others can have a larger relative error (NIST's Wampler1, an exact
// polynomial fit with κ ≈ 600, keeps only 10 digits of its intercept
// unrefined), so each |Δzⱼ| ≤ bound·‖z‖ is also held against |zⱼ| or, if
// larger, the least the classical standard error of zⱼ can be,
// s·√((AᵀA)⁻¹ⱼⱼ) ≥ s/‖A‖ ≥ s/√K. Refinement (Björck 1967) is the cure for
// the κ² term, with which a badly fitting, ill-conditioned problem loses
// digits; below these bounds it could change only digits far beyond any
// standard error. BenchmarkFit's design (κ ≈ 3, ‖r‖ ≈ ‖z‖) has a bound
// of about 2e-14, and its refined and unrefined coefficients differ by 5e-14
// relative at most.
func (q *qrFactor) needsRefinement(b []float64, rss float64, n int) bool {
	const u = eps / 2
	k := q.k
	var zz float64
	for j, v := range b {
		zz += (v * q.d[j]) * (v * q.d[j])
	}
	norm := math.Sqrt(zz)
	kappa := q.cond()
	bound := float64(k) * u * (kappa + kappa*kappa*math.Sqrt(rss)/norm)
	if !(bound <= refineNeedless) {
		return true
	}
	se := math.Sqrt(rss / float64(n-k) / float64(k))
	for j, v := range b {
		if !(bound*norm <= refineNeedlessEach*math.Max(math.Abs(v*q.d[j]), se)) {
			return true
		}
	}
	return false
}

// aliases lists the columns past the numerical rank and, for each, the kept
// columns it is a combination of: R11⁻¹·R12 in the pivoted QR.
func (q *qrFactor) aliases() []alias {
	k, r := q.k, q.rank
	var out []alias
	for j := r; j < k; j++ {
		col := q.perm[j]
		if q.d[col] == 0 {
			out = append(out, alias{col: col})
			continue
		}
		t := make([]float64, k)
		for i := 0; i < r; i++ {
			t[i] = q.a2[i*k+j]
		}
		q.solveR(t)
		big := 0.0
		for i := 0; i < r; i++ {
			big = math.Max(big, math.Abs(t[i]))
		}
		a := alias{col: col}
		for i := 0; i < r; i++ {
			if math.Abs(t[i]) > 1e-6*big {
				a.partners = append(a.partners, q.perm[i])
			}
		}
		out = append(out, a)
	}
	return out
}

// inverseCrossProduct returns (XᵀX)⁻¹ = S⁻¹·R2⁻¹·R2⁻ᵀ·S⁻ᵀ, refined column by
// column when the design is ill-conditioned (which needs the reflectors:
// fitLS keeps them then).
func (f *lsFit) inverseCrossProduct() []float64 {
	q, k := f.qr, f.k
	ba := make([]float64, k*k) // in scaled, pivoted coordinates
	e := make([]float64, k)
	for j := 0; j < k; j++ {
		clear(e)
		e[j] = 1
		q.solveRT(e)
		q.solveR(e)
		for i := 0; i < k; i++ {
			ba[i*k+j] = e[i]
		}
	}
	b := make([]float64, k*k)
	for i, pi := range q.perm {
		for j, pj := range q.perm {
			b[pi*k+pj] = ba[i*k+j] / (q.d[pi] * q.d[pj])
		}
	}
	if q.cond() > condRefine {
		zero := make([]float64, f.n)
		c := make([]float64, k)
		col := make([]float64, k)
		for j := 0; j < k; j++ {
			clear(c)
			c[j] = -1
			for i := 0; i < k; i++ {
				col[i] = b[i*k+j]
			}
			q.refine(f.x, zero, c, col, refineSteps)
			for i := 0; i < k; i++ {
				b[i*k+j] = col[i]
			}
		}
	}
	for i := 0; i < k; i++ {
		for j := i + 1; j < k; j++ {
			m := (b[i*k+j] + b[j*k+i]) / 2
			b[i*k+j], b[j*k+i] = m, m
		}
	}
	return b
}

// leverage returns hᵢ = xᵢᵀ(XᵀX)⁻¹xᵢ = ‖R2⁻ᵀ·PᵀD⁻¹xᵢ‖² for every row:
// one triangular solve of K²/2 operations a row (leverageRows), blocks of
// rows in parallel.
func (f *lsFit) leverage() []float64 {
	k, q := f.k, f.qr
	rt := q.columnsOfR2()
	h := make([]float64, f.n)
	forBlocks(f.n, blockRows, func() func(b, from, to int) {
		u := make([]float64, 4*k)
		return func(_, from, to int) {
			q.leverageRows(rt, f.x[from*k:to*k], h[from:to], u)
		}
	})
	return h
}

// columnsOfR2 returns R2's columns above the diagonal as the rows of a
// K×K matrix, for leverageRows.
func (q *qrFactor) columnsOfR2() []float64 {
	k := q.k
	rt := make([]float64, k*k) // row i: column i of R2 above the diagonal
	for i := 0; i < q.rank; i++ {
		for j := 0; j < i; j++ {
			rt[i*k+j] = q.a2[j*k+i]
		}
	}
	return rt
}

// leverageRows writes to h the leverage of each row of x (len(h) rows,
// row-major), with rt from columnsOfR2 and u scratch space of 4·K. The
// solve is solveRT's, operation for operation (so the values are the same
// to the bit), but with R2's columns in contiguous rows and four rows
// solved side by side: each row's solve is one long chain of dependent
// operations, and four independent chains keep the processor busy.
func (q *qrFactor) leverageRows(rt, x, h, u []float64) {
	const rows = 4
	k, r, n := q.k, q.rank, len(h)
	for i := 0; i < n; i += rows {
		m := min(rows, n-i)
		for l := 0; l < rows; l++ {
			ul := u[l*k : (l+1)*k]
			row := x[min(i+l, n-1)*k:][:k] // past the end: a copy of the last row
			for j, p := range q.perm {
				ul[j] = row[p] / q.d[p]
			}
		}
		u0, u1, u2, u3 := u[:k], u[k:2*k], u[2*k:3*k], u[3*k:]
		for c := 0; c < r; c++ {
			rc := rt[c*k : c*k+c]
			s0, s1, s2, s3 := u0[c], u1[c], u2[c], u3[c]
			for j, v := range rc {
				s0 -= v * u0[j]
				s1 -= v * u1[j]
				s2 -= v * u2[j]
				s3 -= v * u3[j]
			}
			d := q.a2[c*k+c]
			u0[c], u1[c], u2[c], u3[c] = s0/d, s1/d, s2/d, s3/d
		}
		for l := 0; l < m; l++ {
			var s float64
			for _, v := range u[l*k : (l+1)*k] {
				s += v * v
			}
			h[i+l] = s
		}
	}
}

// sandwich returns B·(Σ ωᵢ xᵢxᵢᵀ)·B with B = (XᵀX)⁻¹ (White 1980); ωᵢ ≥ 0.
// The middle is a symmetric rank update (Syrk) of the rows scaled by √ωᵢ,
// a chunk at a time; each block of chunks has its own part, the blocks in
// parallel, and the parts are summed in block order.
func (f *lsFit) sandwich(omega []float64) []float64 {
	n, k := f.n, f.k
	parts := make([]float64, numBlocks(n, blockRows)*k*k)
	forBlocks(n, blockRows, func() func(b, from, to int) {
		buf := make([]float64, chunkRows*k)
		return func(b, from, to int) {
			meat := blas64.Symmetric{Uplo: blas.Upper, N: k, Stride: k, Data: parts[b*k*k : (b+1)*k*k]}
			for start := from; start < to; start += chunkRows {
				rows := min(chunkRows, to-start)
				w := blas64.General{Rows: rows, Cols: k, Stride: k, Data: buf[:rows*k]}
				for i := 0; i < rows; i++ {
					o := math.Sqrt(omega[start+i])
					row := f.x[(start+i)*k : (start+i+1)*k]
					for j, v := range row {
						w.Data[i*k+j] = o * v
					}
				}
				blas64.Syrk(blas.Trans, 1, w, 1, meat)
			}
		}
	})
	meat := make([]float64, k*k)
	for b := 0; b < len(parts); b += k * k {
		for i, v := range parts[b : b+k*k] {
			meat[i] += v
		}
	}
	for i := 0; i < k; i++ {
		for j := 0; j < i; j++ {
			meat[i*k+j] = meat[j*k+i]
		}
	}
	return f.wrap(meat)
}

// clusterSandwich returns B·(Σ_g s_g s_gᵀ)·B with the cluster score
// s_g = Σ_{i∈g} xᵢeᵢ (Liang & Zeger 1986). cluster[i] is in [0, g).
// The clusters are split into as many ranges as there are cores, and each
// range's goroutine reads every row in order and adds those of its
// clusters: each score adds its rows in row order whatever the split, and
// the rows are read in order (sorting them by cluster would make every
// row a cache miss).
func (f *lsFit) clusterSandwich(cluster []int, g int) []float64 {
	k := f.k
	scores := make([]float64, g*k)
	forRows(g, numBlocks(g, runtime.GOMAXPROCS(0)), func(_, from, to int) {
		for i, c := range cluster {
			if c < from || c >= to {
				continue
			}
			e := f.resid[i]
			row := f.x[i*k : (i+1)*k]
			s := scores[c*k : (c+1)*k]
			for j, v := range row {
				s[j] += v * e
			}
		}
	})
	sg := blas64.General{Rows: g, Cols: k, Stride: k, Data: scores}
	meat := blas64.General{Rows: k, Cols: k, Stride: k, Data: make([]float64, k*k)}
	blas64.Gemm(blas.Trans, blas.NoTrans, 1, sg, sg, 0, meat)
	return f.wrap(meat.Data)
}

// wrap returns B·M·B, symmetrised.
func (f *lsFit) wrap(m []float64) []float64 {
	k := f.k
	b := blas64.General{Rows: k, Cols: k, Stride: k, Data: f.bread}
	mm := blas64.General{Rows: k, Cols: k, Stride: k, Data: m}
	t := blas64.General{Rows: k, Cols: k, Stride: k, Data: make([]float64, k*k)}
	v := blas64.General{Rows: k, Cols: k, Stride: k, Data: make([]float64, k*k)}
	blas64.Gemm(blas.NoTrans, blas.NoTrans, 1, b, mm, 0, t)
	blas64.Gemm(blas.NoTrans, blas.NoTrans, 1, t, b, 0, v)
	for i := 0; i < k; i++ {
		for j := i + 1; j < k; j++ {
			s := (v.Data[i*k+j] + v.Data[j*k+i]) / 2
			v.Data[i*k+j], v.Data[j*k+i] = s, s
		}
	}
	return v.Data
}
