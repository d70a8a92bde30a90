package estimate

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// chunkRows is the number of rows absorbed at a time by the first stage of
// the factorization. Large enough that per-chunk overhead is negligible,
// small enough that a chunk (chunkRows × K, column-major) stays in cache;
// not a power of two, so that the columns of a chunk do not all fall in the
// same cache sets when the chunk is transposed into place.
const chunkRows = 500

// qrFactor is a Householder QR factorization with column pivoting of an
// N×K matrix X, computed in two stages so that rows can be taken in chunks:
//
//  1. Unpivoted Householder QR of the rows, a chunk at a time: each chunk is
//     stacked under a running triangle and reduced to it again ("tall-skinny
//     QR"; Golub & Van Loan, Matrix Computations, 4th ed., §5.2.2 and
//     §5.2.4). The chunks are grouped in blocks of blockChunks (parallel.go):
//     each block starts from a zero triangle, so that blocks can be reduced
//     on different cores, and the blocks' triangles are then merged into R0
//     one after the other in block order, each merge the same reduction of
//     a K-row chunk (the block's triangle) under R0. X = Q1·[R0; 0]. With
//     one block (up to blockRows rows) this is the plain chunked reduction.
//  2. Column scaling to unit norm (D = diag of the column norms of X, which
//     are the column norms of R0), then Householder QR with column pivoting
//     of the K×K matrix R0·D⁻¹ (LAPACK dgeqp3; Golub & Van Loan §5.4.2):
//     R0·D⁻¹·P = Q2·R2.
//
// Together X·D⁻¹·P = Q·[R2; 0] with Q = Q1·diag(Q2, I). Householder QR is
// backward stable column by column, so scaling after stage 1 gives the same
// rank decision as scaling before it. The reflectors of both stages are kept
// so that Q and Qᵀ can be applied to vectors for iterative refinement.
//
// Each block's triangle is reduced from K rows of zeros stacked above its
// rows, so Q1 acts on N + K·(number of blocks) rows: the rows of X and K
// "phantom" rows a block. Vectors to which Q1 or Q1ᵀ is applied carry the
// phantom rows of block 0 as top and those of the later blocks as ext
// (len(merges)·K entries, the first K unused); both are zero for a vector
// of the row space of X.
type qrFactor struct {
	n, k   int
	chunks []qrChunk
	merges []qrChunk // merges[b]: block b's triangle merged into R0 (b ≥ 1)
	r0     []float64 // stage 1 triangle, K×K row-major

	d    []float64 // column norms of X
	a2   []float64 // dgeqp3 output, K×K row-major: R2 above, reflectors below
	tau2 []float64
	perm []int // column j of X·D⁻¹·P is column perm[j] of X
	rank int
}

// qrChunk holds the Householder vectors of one chunk of rows. Reflector j
// acts on row j of the running triangle (where its component is an implicit
// 1) and on the chunk's rows (v[j*rows:(j+1)*rows]).
type qrChunk struct {
	start, rows int
	v           []float64 // column-major rows×K
	tau         []float64
}

// factorQR computes the factorization of the n×k row-major matrix x, the
// blocks of the first stage in parallel.
func factorQR(x []float64, n, k int) *qrFactor {
	nb := numBlocks(n, blockRows)
	q := &qrFactor{n: n, k: k, chunks: make([]qrChunk, numBlocks(n, chunkRows)), merges: make([]qrChunk, nb)}
	tri := make([][]float64, nb)
	forRows(n, blockRows, func(b, from, to int) {
		r := make([]float64, k*k)
		for start := from; start < to; start += chunkRows {
			rows := min(chunkRows, to-start)
			c := qrChunk{start: start, rows: rows, v: make([]float64, rows*k), tau: make([]float64, k)}
			for i := 0; i < rows; i++ {
				row := x[(start+i)*k : (start+i+1)*k]
				for j, v := range row {
					c.v[j*rows+i] = v
				}
			}
			absorb(r, k, &c)
			q.chunks[start/chunkRows] = c
		}
		tri[b] = r
	})
	for b, t := range tri {
		q.addBlock(b, t)
	}
	q.pivot()
	return q
}

// factorQRy factors [X y] (x n×k row-major) as factorQR does X, in the
// same chunks and blocks, but keeps no reflectors: it returns the
// factorization of X without them (R0, D, P and R2, enough for everything
// but refinement, and the same to the bit as factorQR's for up to
// blockRows rows) and Qᵀy, from which b = D⁻¹·P·R2⁻¹·Q2ᵀ·Qᵀy. Householder
// QR works column by column, so the last column changes nothing in the
// others. Not keeping the reflectors saves a copy of X.
func factorQRy(x, y []float64, n, k int) (*qrFactor, []float64) {
	k1 := k + 1
	tri := make([][]float64, numBlocks(n, blockRows))
	forBlocks(n, blockRows, func() func(b, from, to int) {
		v := make([]float64, chunkRows*k1)
		tau := make([]float64, k1)
		return func(b, from, to int) {
			r := make([]float64, k1*k1)
			for start := from; start < to; start += chunkRows {
				rows := min(chunkRows, to-start)
				c := qrChunk{rows: rows, v: v[:rows*k1], tau: tau}
				for i := 0; i < rows; i++ {
					row := x[(start+i)*k : (start+i+1)*k]
					for j, val := range row {
						c.v[j*rows+i] = val
					}
					c.v[k*rows+i] = y[start+i]
				}
				absorb(r, k1, &c)
			}
			tri[b] = r
		}
	})
	big := &qrFactor{n: n, k: k1}
	for b, t := range tri {
		big.addBlock(b, t)
	}
	q, qty := big.splitAugmented()
	q.pivot()
	return q, qty
}

// splitAugmented splits the first-stage triangle of [X y] into X's, R0,
// and Qᵀy.
func (big *qrFactor) splitAugmented() (*qrFactor, []float64) {
	k1 := big.k
	k := k1 - 1
	q := &qrFactor{n: big.n, k: k, r0: make([]float64, k*k)}
	qty := make([]float64, k)
	for i := 0; i < k; i++ {
		copy(q.r0[i*k:(i+1)*k], big.r0[i*k1:i*k1+k])
		qty[i] = big.r0[i*k1+k]
	}
	return q, qty
}

// solveQty returns b = D⁻¹·P·R2⁻¹·Q2ᵀ·z from z = Qᵀy (factorQRy).
func (q *qrFactor) solveQty(qty []float64) []float64 {
	z := append([]float64(nil), qty...)
	q.applyQ2T(z)
	q.solveR(z)
	return q.fromScaled(z)
}

// addBlock takes block b's triangle t into R0: as R0 for the first block,
// else by reducing t stacked under R0, its reflectors kept in merges[b].
func (q *qrFactor) addBlock(b int, t []float64) {
	k := q.k
	if b == 0 {
		q.r0 = t
		return
	}
	c := qrChunk{rows: k, v: make([]float64, k*k), tau: make([]float64, k)}
	for i := 0; i < k; i++ {
		for j := i; j < k; j++ {
			c.v[j*k+i] = t[i*k+j]
		}
	}
	absorb(q.r0, k, &c)
	if q.merges != nil {
		q.merges[b] = c
	}
}

// absorb reduces [R; chunk] to upper triangular form, updating the K×K
// triangle r in place and leaving the Householder vectors in the chunk
// (LAPACK dlarfg convention: β = −sign(α)·‖(α, x)‖, τ = (β−α)/β,
// v = x/(α−β)).
func absorb(r []float64, k int, c *qrChunk) {
	m := c.rows
	for j := 0; j < k; j++ {
		vj := c.v[j*m : (j+1)*m]
		sigma := floats.Norm(vj, 2)
		if sigma == 0 {
			c.tau[j] = 0
			continue
		}
		alpha := r[j*k+j]
		beta := -math.Copysign(math.Hypot(alpha, sigma), alpha)
		tau := (beta - alpha) / beta
		floats.Scale(1/(alpha-beta), vj)
		r[j*k+j] = beta
		c.tau[j] = tau
		for l := j + 1; l < k; l++ {
			vl := c.v[l*m : (l+1)*m]
			s := tau * (r[j*k+l] + floats.Dot(vj, vl))
			r[j*k+l] -= s
			floats.AddScaled(vl, -s, vj)
		}
	}
}

// pivot runs stage 2: scaling, pivoted QR of R0·D⁻¹, and the rank decision
// |R2[j,j]| < max(N,K)·ε·|R2[0,0]| (METHODS §2).
func (q *qrFactor) pivot() {
	k := q.k
	q.d = make([]float64, k)
	for j := 0; j < k; j++ {
		col := make([]float64, j+1)
		for i := 0; i <= j; i++ {
			col[i] = q.r0[i*k+j]
		}
		q.d[j] = floats.Norm(col, 2)
	}
	q.a2 = make([]float64, k*k)
	for i := 0; i < k; i++ {
		for j := i; j < k; j++ {
			if q.d[j] > 0 {
				q.a2[i*k+j] = q.r0[i*k+j] / q.d[j]
			}
		}
	}
	q.perm = make([]int, k)
	for j := range q.perm {
		q.perm[j] = -1
	}
	q.tau2 = make([]float64, k)
	a := blas64.General{Rows: k, Cols: k, Stride: k, Data: q.a2}
	work := make([]float64, 1)
	lapack64.Geqp3(a, q.perm, q.tau2, work, -1)
	work = make([]float64, int(work[0]))
	lapack64.Geqp3(a, q.perm, q.tau2, work, len(work))

	tol := float64(max(q.n, k)) * eps * math.Abs(q.a2[0])
	q.rank = 0
	for j := 0; j < k; j++ {
		if math.Abs(q.a2[j*k+j]) <= tol || q.d[q.perm[j]] == 0 {
			break
		}
		q.rank++
	}
}

const eps = 0x1p-52

// cond returns |R2[0,0]| / |R2[r-1,r-1]|, a cheap lower estimate of the
// 2-norm condition number of the column-scaled X.
func (q *qrFactor) cond() float64 {
	if q.rank == 0 {
		return math.Inf(1)
	}
	k := q.k
	return math.Abs(q.a2[0]) / math.Abs(q.a2[(q.rank-1)*k+q.rank-1])
}

// applyQ1T overwrites (top, ext, y) with Q1ᵀ·(top, ext, y); top has K
// entries, ext K per block, y N. Afterwards top holds the coordinates along
// R0 and ext and y the rest. The blocks run in parallel, then the merges
// in block order.
func (q *qrFactor) applyQ1T(top, ext, y []float64) {
	k := q.k
	forRows(len(q.chunks), blockChunks, func(b, from, to int) {
		p := q.phantom(b, top, ext)
		for ci := from; ci < to; ci++ {
			c := &q.chunks[ci]
			yc := y[c.start : c.start+c.rows]
			for j := 0; j < k; j++ {
				q.reflect(c, j, p, yc)
			}
		}
	})
	for b := 1; b < len(q.merges); b++ {
		pb := ext[b*k : (b+1)*k]
		for j := 0; j < k; j++ {
			q.reflect(&q.merges[b], j, top, pb)
		}
	}
}

// applyQ1 overwrites (top, ext, y) with Q1·(top, ext, y).
func (q *qrFactor) applyQ1(top, ext, y []float64) {
	k := q.k
	for b := len(q.merges) - 1; b >= 1; b-- {
		pb := ext[b*k : (b+1)*k]
		for j := k - 1; j >= 0; j-- {
			q.reflect(&q.merges[b], j, top, pb)
		}
	}
	forRows(len(q.chunks), blockChunks, func(b, from, to int) {
		p := q.phantom(b, top, ext)
		for ci := to - 1; ci >= from; ci-- {
			c := &q.chunks[ci]
			yc := y[c.start : c.start+c.rows]
			for j := k - 1; j >= 0; j-- {
				q.reflect(c, j, p, yc)
			}
		}
	})
}

// phantom returns the phantom rows of block b: top for the first block,
// its part of ext for the others.
func (q *qrFactor) phantom(b int, top, ext []float64) []float64 {
	if b == 0 {
		return top
	}
	return ext[b*q.k : (b+1)*q.k]
}

// newExt returns zero phantom rows for the blocks after the first.
func (q *qrFactor) newExt() []float64 { return make([]float64, len(q.merges)*q.k) }

// reflect applies reflector j of chunk c (symmetric, so it is its own
// inverse and transpose).
func (q *qrFactor) reflect(c *qrChunk, j int, top, yc []float64) {
	tau := c.tau[j]
	if tau == 0 {
		return
	}
	vj := c.v[j*c.rows : (j+1)*c.rows]
	s := tau * (top[j] + floats.Dot(vj, yc))
	top[j] -= s
	floats.AddScaled(yc, -s, vj)
}

// applyQ2T overwrites z (K entries) with Q2ᵀ·z; Q2 = H0·H1·…·H(K-1).
func (q *qrFactor) applyQ2T(z []float64) {
	for j := 0; j < q.k; j++ {
		q.reflect2(j, z)
	}
}

// applyQ2 overwrites z with Q2·z.
func (q *qrFactor) applyQ2(z []float64) {
	for j := q.k - 1; j >= 0; j-- {
		q.reflect2(j, z)
	}
}

func (q *qrFactor) reflect2(j int, z []float64) {
	tau := q.tau2[j]
	if tau == 0 {
		return
	}
	k := q.k
	s := z[j]
	for i := j + 1; i < k; i++ {
		s += q.a2[i*k+j] * z[i]
	}
	s *= tau
	z[j] -= s
	for i := j + 1; i < k; i++ {
		z[i] -= s * q.a2[i*k+j]
	}
}

// solveR overwrites z with R2⁻¹·z (leading rank×rank block).
func (q *qrFactor) solveR(z []float64) {
	k, r := q.k, q.rank
	for i := r - 1; i >= 0; i-- {
		s := z[i]
		for j := i + 1; j < r; j++ {
			s -= q.a2[i*k+j] * z[j]
		}
		z[i] = s / q.a2[i*k+i]
	}
}

// solveRT overwrites z with R2⁻ᵀ·z (leading rank×rank block).
func (q *qrFactor) solveRT(z []float64) {
	k, r := q.k, q.rank
	for i := 0; i < r; i++ {
		s := z[i]
		for j := 0; j < i; j++ {
			s -= q.a2[j*k+i] * z[j]
		}
		z[i] = s / q.a2[i*k+i]
	}
}

// toScaled maps a vector g in X's column space to the scaled, pivoted
// coordinates: g_A = Pᵀ·D⁻¹·g.
func (q *qrFactor) toScaled(g []float64) []float64 {
	out := make([]float64, q.k)
	for j, p := range q.perm {
		out[j] = g[p] / q.d[p]
	}
	return out
}

// fromScaled maps coefficients in scaled, pivoted coordinates back to X's:
// x = D⁻¹·P·y.
func (q *qrFactor) fromScaled(y []float64) []float64 {
	out := make([]float64, q.k)
	for j, p := range q.perm {
		out[p] = y[j] / q.d[p]
	}
	return out
}

// solveLS returns the least-squares solution of X·b ≈ y from the
// factorization alone (no refinement). Requires full rank.
func (q *qrFactor) solveLS(y []float64) []float64 {
	top := make([]float64, q.k)
	yc := append([]float64(nil), y...)
	q.applyQ1T(top, q.newExt(), yc)
	q.applyQ2T(top)
	q.solveR(top)
	return q.fromScaled(top)
}

// solveAugmented solves the augmented system
//
//	[ I   X ] [dr]   [f]
//	[ Xᵀ  0 ] [dx] = [g]
//
// with the factorization (Björck 1967, "Iterative refinement of linear least
// squares solutions I", BIT 7; Golub & Van Loan §5.3.8). f (N entries) is
// overwritten with dr; dx is returned. Requires full rank.
func (q *qrFactor) solveAugmented(f, g []float64) []float64 {
	k := q.k
	// With X = A·S, S = Pᵀ·D: Aᵀ·dr = S⁻ᵀ·g and dx = S⁻¹·dy.
	h := q.toScaled(g)
	q.solveRT(h)
	f1 := make([]float64, k)
	ext := q.newExt()
	q.applyQ1T(f1, ext, f)
	q.applyQ2T(f1)
	for i := range f1 {
		f1[i] -= h[i]
	}
	q.solveR(f1)
	q.applyQ2(h)
	q.applyQ1(h, ext, f)
	return q.fromScaled(f1)
}

// refine improves, in place, a solution x of the augmented system
//
//	r + X·x = b,  Xᵀ·r = c
//
// (least squares when c = 0; column j of (XᵀX)⁻¹ when b = 0, c = −e_j) by
// iterative refinement, the residuals of both equations accumulated in
// compensated arithmetic. xm is X, n×k row-major.
//
// The residual pass runs in blocks of rows in parallel; each block sums its
// part of c − Xᵀr in its own accumulators (the first block's starting from
// c), and the parts are added in block order.
func (q *qrFactor) refine(xm []float64, b, c, x []float64, maxIter int) {
	n, k := q.n, q.k
	kappa := q.cond()
	r := residuals(xm, b, x, k)
	f := make([]float64, n)
	parts := make([]acc, numBlocks(n, blockRows)*k)
	g := make([]float64, k)
	for it := 0; it < maxIter; it++ {
		clear(parts)
		for j := range k {
			parts[j].add(c[j])
		}
		forBlocks(n, blockRows, func() func(blk, from, to int) {
			ga := make([]acc, k) // the block's sums, here so that no cache line is shared
			return func(blk, from, to int) {
				copy(ga, parts[blk*k:(blk+1)*k])
				for i := from; i < to; i++ {
					var a acc
					a.add(b[i])
					a.add(-r[i])
					row := xm[i*k : (i+1)*k]
					for j, v := range row {
						a.addProd(-v, x[j])
						ga[j].addProd(-v, r[i])
					}
					f[i] = a.value()
				}
				copy(parts[blk*k:(blk+1)*k], ga)
			}
		})
		for j := range g {
			ga := parts[j]
			for blk := k + j; blk < len(parts); blk += k {
				ga.add(parts[blk].s)
				ga.add(parts[blk].c)
			}
			g[j] = ga.value()
		}
		dx := q.solveAugmented(f, g)
		// Each step shrinks the error by about κ·ε (κ the condition
		// number), so once a correction is below |x|/κ (with a margin) the
		// next would be below the last bit of x.
		small := true
		for j := range x {
			x[j] += dx[j]
			if math.Abs(dx[j]) > 1e-3/kappa*math.Abs(x[j]) {
				small = false
			}
		}
		for i := range r {
			r[i] += f[i]
		}
		if small {
			break
		}
	}
}

// residuals returns b − X·x, each entry accumulated in compensated
// arithmetic so that it is correct to about working precision even when it
// is the small difference of large numbers.
// Blocks of rows run in parallel.
func residuals(xm, b, x []float64, k int) []float64 {
	r := make([]float64, len(b))
	forRows(len(b), blockRows, func(_, from, to int) {
		for i := from; i < to; i++ {
			var a acc
			a.add(b[i])
			row := xm[i*k : (i+1)*k]
			for j, v := range row {
				a.addProd(-v, x[j])
			}
			r[i] = a.value()
		}
	})
	return r
}
