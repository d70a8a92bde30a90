package estimate

// The streamed fit's second pass (FitStream, stream.go): model rows
// built chunk by chunk and factored into R and Qᵀy in Fit's blocks.

import "math"

// layout is where fill writes the terms of a model row: the design's
// columns before unit effects absorb any (their indices then change).
type layout struct {
	tCol, gCol, pCol int
	mCols, iCols     []int
}

// fill writes row i's model row into x, unweighted, as assemble does,
// and reports whether the survey saw its group and levels.
func (st *stream) fill(d *Data, i int, x []float64) bool {
	ds, at := st.ds, &st.layout
	clear(x)
	x[0] = 1
	t := st.treatment(d, i)
	g, p, q := t, 0.0, len(at.mCols)
	if st.iPeriod >= 0 {
		p = st.period(d, i)
		x[at.gCol], x[at.pCol] = g, p
		t = g * p
	}
	x[at.tCol] = t
	key, _ := st.modKeys.lookup(&d.Columns[st.iMod], i)
	level, known := st.levelIndex[key]
	m := 0
	for j := range ds.levels {
		if j == ds.ref {
			continue
		}
		ind := 0.0
		if j == level {
			ind = 1
		}
		x[at.mCols[m]] = ind
		if st.iPeriod >= 0 {
			// Fit's order: M, T×M, P×M, T·P×M.
			x[at.mCols[m]+q], x[at.mCols[m]+2*q] = g*ind, p*ind
		}
		x[at.iCols[m]] = t * ind
		m++
	}
	for j, ci := range st.iControls {
		c := &d.Columns[ci]
		levels := st.controlLevels[j]
		if levels == nil {
			x[st.controlCol[j]] = c.Num[i]
			continue
		}
		known = known && st.controlCount[j][c.Text[i]] != 0
		for l, level := range levels {
			if c.Text[i] == level {
				x[st.controlCol[j]+l] = 1
			}
		}
	}
	return known
}

// designRows is the chunk's own work common to the later passes: the rows
// that enter the fit, into p: their model rows (times √w with weights;
// also without, in p.raw, when raw is set), outcomes, weights and
// clusters.
func (st *stream) designRows(w *chunkWorker, p *chunkPart, raw bool) error {
	d, k := p.d, st.ds.k
	n, err := d.rows()
	if err != nil {
		return err
	}
	weighted := st.iWeight >= 0
	p.x, p.y, p.yw = grow(p.x, n*k), grow(p.y, n), grow(p.yw, n)
	if weighted {
		p.w = grow(p.w, n)
	}
	if raw {
		p.raw = grow(p.raw, n*k)
	}
	if st.iClus >= 0 {
		p.cluster = grow(p.cluster, n)
	}
	wi := st.ds.within
	if wi != nil {
		p.yRaw = grow(p.yRaw, n)
		w.wide = grow(w.wide, wi.k)
	}
	if st.iUnit >= 0 {
		p.unit = grow(p.unit, n)
	}
	w.checks = st.roleChecks(d, w.checks)
	out := d.Columns[st.iOut].Num
	r := 0
	for i := 0; i < n; i++ {
		if !usable(w.checks, i) {
			continue
		}
		x := p.x[r*k : (r+1)*k]
		y := out[i]
		u := -1
		if st.iUnit >= 0 {
			var ok bool
			if u, ok = st.units.lookup(&d.Columns[st.iUnit], i); !ok {
				u, p.changed = -1, true
			}
			p.unit[r] = u
		}
		if wi != nil && u >= 0 {
			// The row before absorption, then its deviations from its
			// unit's means (within.go), as Fit's absorbUnits.
			p.changed = !st.fill(d, i, w.wide) || p.changed
			p.yRaw[r] = y
			y = wi.apply(u, w.wide, y, x)
		} else {
			p.changed = !st.fill(d, i, x) || p.changed
		}
		p.y[r], p.yw[r] = y, y
		if raw {
			copy(p.raw[r*k:(r+1)*k], x)
		}
		if weighted {
			wi := d.Columns[st.iWeight].Num[i]
			p.w[r] = wi
			rw := math.Sqrt(wi)
			p.yw[r] = rw * y
			for j := range x {
				x[j] *= rw
			}
		}
		if st.iClus >= 0 {
			c, ok := st.clusters.lookup(&d.Columns[st.iClus], i)
			if !ok {
				c = -1
				p.changed = true
			}
			p.cluster[r] = c
		}
		r++
	}
	p.n = r
	return nil
}

// weights returns the part's weights, nil without weights.
func (st *stream) weights(p *chunkPart) []float64 {
	if st.iWeight < 0 {
		return nil
	}
	return p.w
}

// weight returns the weight of the part's row r, 1 without weights.
func (st *stream) weight(p *chunkPart, r int) float64 {
	if st.iWeight < 0 {
		return 1
	}
	return p.w[r]
}

// outcome returns the outcome of the part's row r before the within
// transformation, for R² and the check of a 0/1 outcome.
func (st *stream) outcome(p *chunkPart, r int) float64 {
	if st.ds.within != nil {
		return p.yRaw[r]
	}
	return p.y[r]
}

// factorRows is the chunk's own work in the second pass.
func (st *stream) factorRows(w *chunkWorker, p *chunkPart) error {
	return st.designRows(w, p, st.iWeight >= 0)
}

// hashRows is the second pass's hash of the rows, in chunk order; it
// runs beside factor.
func (st *stream) hashRows(p *chunkPart) {
	k := st.ds.k
	raw := p.x
	if st.iWeight >= 0 {
		raw = p.raw
	}
	var clusters []int
	if st.iClus >= 0 {
		clusters = p.cluster
	}
	for r := 0; r < p.n; r++ {
		st.hash.row(raw[r*k:(r+1)*k], p.y[r], st.weights(p), r, clusters)
	}
}

// factor is the second pass, in chunk order: [√w·X √w·y] into the QR
// factorization.
func (st *stream) factor(p *chunkPart) {
	k := st.ds.k
	st.changed = st.changed || p.changed
	for r := 0; r < p.n; r++ {
		y, wi := st.outcome(p, r), st.weight(p, r)
		st.sw += wi
		st.swy += wi * y
		if y != 0 && y != 1 {
			st.outcomeBinary = false
		}
		y = p.yw[r]
		st.swyW += y
		m := chunkRows
		for j, v := range p.x[r*k : (r+1)*k] {
			st.block[j*m+st.rows] = v
		}
		st.block[k*m+st.rows] = y
		st.rows++
		if st.rows == chunkRows {
			st.flushBlock()
		}
	}
}

// flushBlock absorbs the rows gathered into the current block's triangle,
// and a full block's triangle into the running one, as factorQR does.
func (st *stream) flushBlock() {
	m := st.rows
	if m == 0 {
		return
	}
	k1 := st.qr.k
	v := st.block
	if m < chunkRows {
		v = make([]float64, m*k1)
		for j := 0; j < k1; j++ {
			copy(v[j*m:(j+1)*m], st.block[j*chunkRows:j*chunkRows+m])
		}
	}
	absorb(st.tri, k1, &qrChunk{rows: m, v: v[:m*k1], tau: make([]float64, k1)})
	st.rows = 0
	st.triDone++
	if st.triDone == blockChunks {
		st.endBlock()
	}
}

// endBlock merges the current block's triangle into the running one.
func (st *stream) endBlock() {
	if st.triDone == 0 {
		return
	}
	st.qr.addBlock(st.blocks, st.tri)
	st.blocks++
	st.tri = make([]float64, len(st.tri))
	st.triDone = 0
}

// finishFactor splits the triangle of [X y] into X's, R, and Qᵀy.
func (st *stream) finishFactor() {
	st.flushBlock()
	st.endBlock()
	st.qr, st.qty = st.qr.splitAugmented()
}

// absorb is the unit effects' pass, in chunk order: each row, before
// absorption and without weights, into its unit's sums, as Fit's
// absorbUnits adds them.
func (st *stream) absorb(p *chunkPart) {
	k := st.ds.k
	st.changed = st.changed || p.changed
	raw := p.x
	if st.iWeight >= 0 {
		raw = p.raw
	}
	for r := 0; r < p.n; r++ {
		c := -1
		if st.iClus >= 0 {
			c = p.cluster[r]
		}
		if p.unit[r] < 0 || (st.iClus >= 0 && c < 0) {
			continue
		}
		st.within.add(p.unit[r], raw[r*k:(r+1)*k], p.y[r], st.weight(p, r), c)
	}
}
