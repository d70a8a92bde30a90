package estimate

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// Chunks delivers a data set a chunk of rows at a time, for a fit that
// does not hold the rows in memory (FitStream).
type Chunks interface {
	// Pass calls each with successive chunks of the rows, from the first,
	// the same rows in the same order at every pass, one call at a time.
	// Every chunk has the same columns, with the same names and kinds.
	// A chunk stays each's until it calls the chunk's release, once, from
	// any goroutine, during the call or after it (so that the fit can work
	// on a few chunks at once); only then may Pass reuse the chunk and its
	// slices. A chunk never released is never reused. Pass stops at the
	// first error of each or of reading, and returns it.
	Pass(ctx context.Context, each func(chunk *Data, release func()) error) error
}

// ErrNeedsMemory is the cause of a streamed fit that cannot finish without
// every row in memory; the caller then fits with Fit.
var ErrNeedsMemory = errors.New("this fit needs every row in memory")

func needsMemory(why string) error { return fmt.Errorf("%w: %s", ErrNeedsMemory, why) }

// ErrChangedBetweenPasses is the cause of a streamed fit whose later
// passes met a group, level or cluster that the survey did not see.
var ErrChangedBetweenPasses = errors.New("the data changed between the passes of the fit")

// correctionTol bounds the change of the residuals, relative to their
// norm, that the seminormal correction may make without the residual pass
// being repeated with the corrected coefficients (see FitStream).
const correctionTol = 1e-12

// FitStream fits the model of METHODS §1 as Fit does, but in passes over
// the rows, holding O(K²) numbers (and one per cluster, and the list of
// dropped rows) instead of the rows, so that the data's size is bounded by
// the disk, not the memory (ARCHITECTURE, "Streaming where it pays"):
//
//  1. Survey: the rows left out and why, the groups of the moderator and of
//     text controls, the clusters, and the facts the checks need.
//  2. Factorization: the model matrix with the outcome as a last column,
//     [X y], goes through the first stage of the QR factorization a block
//     of rows at a time (qr.go; the same blocks as Fit's), which leaves
//     R and Qᵀy; then the pivoted second stage and the solution
//     b₀ = R⁻¹Qᵀy. The blocks' reflectors are not kept.
//  3. Residuals: eᵢ in compensated arithmetic, leverage from R, the middle
//     of the sandwich (or the cluster scores), and Xᵀe. One step of the
//     corrected seminormal equations, b = b₀ + (RᵀR)⁻¹Xᵀe (Björck 1987,
//     "Stability analysis of the method of seminormal equations", Linear
//     Algebra Appl. 88/89; Björck, Numerical Methods for Least Squares
//     Problems, 1996, §2.2.5), takes the place of Fit's refinement against
//     stored reflectors. When the correction moves the residuals by more
//     than 1e-12 of their norm, this pass is repeated with b.
//
// R, the leverage and the covariance's bread are computed exactly as Fit
// computes them, so results agree with Fit's to rounding in the
// coefficients. Without stored reflectors the inverse cross-product cannot
// be refined, so a design whose scaled condition estimate exceeds 1e5
// (where Fit refines it) is handed back, as is everything else that needs
// every row: a continuous moderator (its percentiles), the wild cluster
// bootstrap (fewer than BootstrapClusters clusters), and any data problem
// (so that its message, naming rows, is Fit's word for word). Those return
// an error wrapping ErrNeedsMemory, and the caller fits with Fit.
func FitStream(ctx context.Context, src Chunks, s Spec) (*Result, error) {
	s, err := s.withDefaults()
	if err != nil {
		return nil, err
	}
	if s.Moderator.Kind == ModeratorContinuous {
		return nil, needsMemory("a continuous moderator's percentiles need all its values")
	}
	st := &stream{s: s, parts: make(chan *chunkPart, spareParts)}
	if err := src.Pass(ctx, func(d *Data, release func()) error {
		defer release()
		return st.survey(d)
	}); err != nil {
		return nil, err
	}
	ds, err := st.plan()
	if err != nil {
		return nil, err
	}
	if err := pass(ctx, src, st.parts, passWork{st.factorRows, st.factor, st.hashRows}); err != nil {
		return nil, err
	}
	if st.changed {
		return nil, ErrChangedBetweenPasses
	}
	st.finishFactor()
	q := st.qr
	q.pivot()
	if q.rank < ds.k {
		return nil, needsMemory("some terms of the model cannot be told apart")
	}
	if q.cond() > condRefine {
		return nil, needsMemory(fmt.Sprintf("the model's columns are nearly collinear (condition estimate %.3g), and the solution must be refined against the whole data", q.cond()))
	}
	f := &lsFit{n: ds.n, k: ds.k, qr: q}
	f.coef = q.solveQty(st.qty)
	f.bread = f.inverseCrossProduct()

	for range 2 {
		st.startResiduals(f)
		if err := pass(ctx, src, st.parts, passWork{prepare: st.residualRows, combine: st.residuals}); err != nil {
			return nil, err
		}
		st.flushMeat()
		st.endMeatBlock()
		if st.changed {
			return nil, ErrChangedBetweenPasses
		}
		if st.leverageOne {
			return nil, needsMemory("a row has leverage 1")
		}
		if !st.correct(f) {
			break
		}
	}
	f.rss = st.rss.value()
	if f.rss <= 1e-26*st.tssW {
		return nil, needsMemory("the model fits the outcome exactly")
	}
	v, df := st.variance(f)
	facts := &rowFacts{outcomeBinary: st.outcomeBinary, hash: st.hash.sum(), rows: st.levelRows, treated: st.levelTreated}
	facts.r2, facts.adjR2 = rSquared(f.rss, st.tss, ds.n, ds.k)
	ds.facts = facts
	return ds.result(s, f, v, s.Variance, df, nil), nil
}

// stream is the state of a streamed fit between passes.
type stream struct {
	// tooLarge: a used value passes maxMagnitude; Fit words the refusal.
	tooLarge bool
	s        Spec
	ds       *design

	// Set by the first chunk: the column index of each role.
	resolved                  bool
	iOut, iTreat, iMod, iClus int
	iWeight                   int
	iControls                 []int
	checks                    []roleColumn

	// Survey.
	countAt                 map[[2]string]int
	firstY, firstT          float64
	yVaries, tVaries        bool
	badTreatment            bool
	labelCount              map[string]int
	modCount                map[string]int
	modStats                map[string]*groupStats
	controlCount            []map[string]int
	clusterByText           map[string]int
	clusterByValue          map[float64]int
	modKeys, clusterKeys    keyCache
	levelIndex              map[string]int
	controlLevels           [][]string // per control: the levels with a column, nil if numeric
	controlCol              []int      // per control: its first model column
	levelRows, levelTreated []int

	// Factorization.
	qr      *qrFactor // over K+1 columns until the pass ends, then K
	block   []float64 // column-major, chunkRows × (K+1)
	rows    int       // rows in block
	tri     []float64 // the triangle of the current block of chunks (qr.go)
	triDone int       // chunks absorbed into tri
	blocks  int       // blocks merged into the running triangle
	qty     []float64 // Qᵀy, K entries
	hash    *rowHash
	parts   chan *chunkPart // spare parts for the passes' chunks (streampipe.go)

	sw, swy       float64
	swyW          float64 // sum of the weighted outcome
	outcomeBinary bool

	// Residuals.
	coef        []float64
	rss         acc
	xte         []acc
	tss, tssW   float64
	meat        blas64.Symmetric // the current block's part
	meatTotal   []float64        // the finished blocks' parts, summed
	meatBuf     []float64
	meatRows    int
	meatChunks  int // chunks of rows in meat
	scores      []float64
	meanY       float64 // of the outcome, weighted with the weights
	meanYW      float64 // of √w·y, as checkExact takes it
	leverageOne bool
	r2Columns   []float64 // for the leverage (leverageRows)
	changed     bool      // a later pass met what the survey did not see
}

// groupStats are the facts the checks need about one moderator group.
type groupStats struct {
	n, treated int
	firstT     float64
	tVaries    bool
}

// add counts a row of the group with treatment t.
func (g *groupStats) add(t float64) {
	if g.n == 0 {
		g.firstT = t
	}
	g.n++
	g.treated += int(t)
	g.tVaries = g.tVaries || t != g.firstT
}

// keyCache remembers the category key of numeric cells, so that a numeric
// moderator or cluster is not formatted anew on every row.
type keyCache map[float64]string

func (kc keyCache) key(c *Column, i int) string {
	k, kept := kc.lookup(c, i)
	if !kept && len(kc) < 1<<16 {
		kc[c.Num[i]] = k
	}
	return k
}

// lookup returns the key of row i and whether there is nothing to
// remember (text, or a number the cache holds). It changes nothing, so
// that goroutines may share the cache after the survey.
func (kc keyCache) lookup(c *Column, i int) (string, bool) {
	if c.Num == nil {
		return c.Text[i], true
	}
	if k, ok := kc[c.Num[i]]; ok {
		return k, true
	}
	return c.key(i), false
}

// resolve finds the spec's columns in the first chunk.
func (st *stream) resolve(d *Data) error {
	s := st.s
	find := func(name string) (int, error) {
		for i := range d.Columns {
			if d.Columns[i].Name == name {
				return i, nil
			}
		}
		return -1, needsMemory(fmt.Sprintf("the column %q is not in the data", name))
	}
	var err error
	if st.iOut, err = find(s.Outcome); err != nil {
		return err
	}
	if st.iTreat, err = find(s.Treatment.Column); err != nil {
		return err
	}
	if st.iMod, err = find(s.Moderator.Column); err != nil {
		return err
	}
	for _, c := range s.Controls {
		i, err := find(c)
		if err != nil {
			return err
		}
		st.iControls = append(st.iControls, i)
	}
	st.iClus, st.iWeight = -1, -1
	if s.Cluster != "" {
		if st.iClus, err = find(s.Cluster); err != nil {
			return err
		}
	}
	if s.Weights != "" {
		if st.iWeight, err = find(s.Weights); err != nil {
			return err
		}
	}
	numeric := func(i int) bool { return d.Columns[i].IsNumeric() }
	if !numeric(st.iOut) || (s.Treatment.Kind != TreatmentLabels && !numeric(st.iTreat)) || (st.iWeight >= 0 && !numeric(st.iWeight)) {
		return needsMemory("a column that must hold numbers holds text")
	}
	st.resolved = true
	st.countAt = map[[2]string]int{}
	st.labelCount = map[string]int{}
	st.modCount = map[string]int{}
	st.modStats = map[string]*groupStats{}
	st.clusterByText = map[string]int{}
	st.clusterByValue = map[float64]int{}
	st.modKeys, st.clusterKeys = keyCache{}, keyCache{}
	st.controlCount = make([]map[string]int, len(s.Controls))
	for j, i := range st.iControls {
		if !numeric(i) {
			st.controlCount[j] = map[string]int{}
		}
	}
	st.ds = &design{}
	return nil
}

// roleChecks lists the chunk's columns in the order Fit checks them for
// missing values (buildDesign), in checks' memory.
func (st *stream) roleChecks(d *Data, checks []roleColumn) []roleColumn {
	s := st.s
	rc := func(i int, role string, numeric bool) roleColumn {
		return roleColumn{col: &d.Columns[i], role: role, numeric: numeric}
	}
	checks = append(checks[:0], rc(st.iOut, "outcome", true),
		rc(st.iTreat, "treatment", s.Treatment.Kind != TreatmentLabels),
		rc(st.iMod, "moderator", false))
	for _, i := range st.iControls {
		checks = append(checks, rc(i, "control", false))
	}
	if st.iClus >= 0 {
		checks = append(checks, rc(st.iClus, "cluster", false))
	}
	if st.iWeight >= 0 {
		checks = append(checks, rc(st.iWeight, "weight", true))
	}
	return checks
}

// usable reports whether row i of the chunk enters the fit.
func usable(checks []roleColumn, i int) bool {
	for _, rc := range checks {
		if !rc.fine(i) {
			return false
		}
	}
	return true
}

// keep reports whether row i of the chunk enters the fit, as usable does,
// and notes why when it does not (the survey).
func (st *stream) keep(d *Data, checks []roleColumn, i int) bool {
	for _, rc := range checks {
		reason, kind := rc.problem(i)
		if reason == "" {
			continue
		}
		ds := st.ds
		ds.dropped = append(ds.dropped, DroppedRow{Row: d.label(i), Column: rc.col.Name, Reason: reason})
		key := [2]string{rc.col.Name, kind}
		if j, ok := st.countAt[key]; ok {
			ds.counts[j].Rows++
		} else {
			st.countAt[key] = len(ds.counts)
			ds.counts = append(ds.counts, DropCount{Column: rc.col.Name, Reason: countReason(rc, kind), Rows: 1})
		}
		return false
	}
	return true
}

// treatment returns row i's treatment as the model uses it.
func (st *stream) treatment(d *Data, i int) float64 {
	c := &d.Columns[st.iTreat]
	if st.s.Treatment.Kind == TreatmentLabels {
		if c.key(i) == st.s.Treatment.Treated {
			return 1
		}
		return 0
	}
	return c.Num[i]
}

// survey is the first pass.
func (st *stream) survey(d *Data) error {
	if !st.resolved {
		if err := st.resolve(d); err != nil {
			return err
		}
	}
	n, err := d.rows()
	if err != nil {
		return err
	}
	s, ds := st.s, st.ds
	st.checks = st.roleChecks(d, st.checks)
	checks := st.checks
	for i := 0; i < n; i++ {
		ds.rowsRead++
		if !st.keep(d, checks, i) {
			continue
		}
		for _, rc := range checks {
			if rc.col.IsNumeric() && math.Abs(rc.col.Num[i]) > maxMagnitude {
				st.tooLarge = true
			}
		}
		y := d.Columns[st.iOut].Num[i]
		t := st.treatment(d, i)
		if ds.n == 0 {
			st.firstY, st.firstT = y, t
		}
		ds.n++
		st.yVaries = st.yVaries || y != st.firstY
		st.tVaries = st.tVaries || t != st.firstT
		switch s.Treatment.Kind {
		case TreatmentBinary:
			st.badTreatment = st.badTreatment || (t != 0 && t != 1)
		case TreatmentLabels:
			st.labelCount[d.Columns[st.iTreat].key(i)]++
		}
		key := st.modKeys.key(&d.Columns[st.iMod], i)
		st.modCount[key]++
		g := st.modStats[key]
		if g == nil {
			g = &groupStats{}
			st.modStats[key] = g
		}
		g.add(t)
		for j, ci := range st.iControls {
			if cc := st.controlCount[j]; cc != nil {
				cc[d.Columns[ci].Text[i]]++
			}
		}
		if st.iClus >= 0 {
			st.clusterNumber(&d.Columns[st.iClus], i)
		}
	}
	return nil
}

// clusterNumber numbers the clusters in order of first appearance, as Fit
// does (readCluster).
func (st *stream) clusterNumber(c *Column, i int) int {
	if j, ok := st.lookupCluster(c, i); ok {
		return j
	}
	ds := st.ds
	j := len(ds.clusterLabels)
	ds.clusterLabels = append(ds.clusterLabels, st.clusterKeys.key(c, i))
	if c.IsNumeric() {
		st.clusterByValue[c.Num[i]] = j
	} else {
		st.clusterByText[c.Text[i]] = j
	}
	return j
}

func (st *stream) lookupCluster(c *Column, i int) (int, bool) {
	if c.IsNumeric() {
		j, ok := st.clusterByValue[c.Num[i]]
		return j, ok
	}
	j, ok := st.clusterByText[c.Text[i]]
	return j, ok
}

// plan turns the survey into the model's terms, or hands the fit back
// when the data have a problem whose message Fit words.
func (st *stream) plan() (*design, error) {
	s, ds := st.s, st.ds
	if ds == nil {
		return nil, needsMemory("the data have no rows")
	}
	if ds.n == 0 {
		return nil, noRowsError(ds.rowsRead, ds.counts)
	}
	if st.badTreatment {
		return nil, needsMemory("the treatment holds values other than 0 and 1")
	}
	if st.tooLarge {
		return nil, needsMemory("a value is too large to fit")
	}
	if s.Treatment.Kind == TreatmentLabels {
		labels := sortedLevels(st.labelCount)
		if st.labelCount[s.Treatment.Treated] == 0 || len(labels) != 2 {
			return nil, needsMemory("the treatment's labels do not match the spec")
		}
	}
	ds.levels = sortedLevels(st.modCount)
	if s.Moderator.Kind == ModeratorBinary && len(ds.levels) > 2 {
		return nil, needsMemory("the binary moderator has more than two values")
	}
	st.levelIndex = map[string]int{}
	for j, l := range ds.levels {
		st.levelIndex[l] = j
	}
	switch {
	case s.Moderator.Reference != "":
		j, ok := st.levelIndex[s.Moderator.Reference]
		if !ok {
			return nil, needsMemory("the reference group does not appear")
		}
		ds.ref = j
	case s.Moderator.Kind == ModeratorBinary && len(ds.levels) == 2 && ds.levels[0] == "0" && ds.levels[1] == "1":
		ds.ref = 0
	default:
		ds.ref = largestLevel(ds.levels, st.modCount)
	}
	if !st.yVaries || !st.tVaries || len(ds.levels) < 2 {
		return nil, needsMemory("a column that must vary is constant")
	}
	binaryT := s.Treatment.Kind != TreatmentContinuous
	st.levelRows = make([]int, len(ds.levels))
	st.levelTreated = make([]int, len(ds.levels))
	for j, l := range ds.levels {
		g := st.modStats[l]
		if g.n == 1 || binaryT && (g.treated == g.n || g.treated == 0) || !binaryT && !g.tVaries {
			return nil, needsMemory(fmt.Sprintf("the treatment's effect cannot be estimated in group %q", ShortLabel(l)))
		}
		st.levelRows[j] = g.n
		if binaryT {
			st.levelTreated[j] = g.treated
		}
	}
	st.terms()
	if ds.n <= ds.k {
		return nil, needsMemory("there are fewer rows than terms")
	}
	if s.Cluster != "" && len(ds.clusterLabels) < 2 {
		return nil, needsMemory("all rows are in one cluster")
	}
	if s.Variance == CR1 && !s.Bootstrap.Off && len(ds.clusterLabels) < BootstrapClusters {
		return nil, needsMemory("the wild cluster bootstrap needs every row")
	}
	k := ds.k
	st.qr = &qrFactor{n: ds.n, k: k + 1}
	st.tri = make([]float64, (k+1)*(k+1))
	st.block = make([]float64, chunkRows*(k+1))
	st.hash = newRowHash()
	st.outcomeBinary = true
	return ds, nil
}

// terms names the model's columns in Fit's order (assemble): intercept,
// treatment, moderator groups, interactions, controls.
func (st *stream) terms() {
	s, ds := st.s, st.ds
	add := func(name, role string) int {
		ds.names = append(ds.names, name)
		ds.roles = append(ds.roles, role)
		return len(ds.names) - 1
	}
	add("(intercept)", roleIntercept)
	tName := s.Treatment.Column
	if s.Treatment.Kind == TreatmentLabels {
		tName = fmt.Sprintf("%s = %s", s.Treatment.Column, s.Treatment.Treated)
	}
	ds.tCol = add(tName, roleTreatment)
	var modNames []string
	for j, l := range ds.levels {
		if j != ds.ref {
			modNames = append(modNames, fmt.Sprintf("%s = %s", s.Moderator.Column, l))
		}
	}
	for _, name := range modNames {
		ds.mCols = append(ds.mCols, add(name, roleModerator))
	}
	for _, name := range modNames {
		ds.iCols = append(ds.iCols, add(tName+" × "+name, roleInteraction))
	}
	st.controlLevels = make([][]string, len(s.Controls))
	st.controlCol = make([]int, len(s.Controls))
	for j, name := range s.Controls {
		count := st.controlCount[j]
		if count == nil {
			st.controlCol[j] = add(name, roleControl)
			continue
		}
		levels := sortedLevels(count)
		ref := largestLevel(levels, count)
		st.controlCol[j] = len(ds.names)
		for l, level := range levels {
			if l == ref {
				continue
			}
			st.controlLevels[j] = append(st.controlLevels[j], level)
			add(fmt.Sprintf("%s = %s", name, level), roleControl)
		}
		if st.controlLevels[j] == nil {
			st.controlLevels[j] = []string{}
		}
	}
	ds.k = len(ds.names)
}

// fill writes row i's model row into x, unweighted, as assemble does,
// and reports whether the survey saw its group and levels.
func (st *stream) fill(d *Data, i int, x []float64) bool {
	ds := st.ds
	clear(x)
	x[0] = 1
	t := st.treatment(d, i)
	x[ds.tCol] = t
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
		x[ds.mCols[m]] = ind
		x[ds.iCols[m]] = t * ind
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
	w.checks = st.roleChecks(d, w.checks)
	out := d.Columns[st.iOut].Num
	r := 0
	for i := 0; i < n; i++ {
		if !usable(w.checks, i) {
			continue
		}
		x := p.x[r*k : (r+1)*k]
		p.changed = !st.fill(d, i, x) || p.changed
		y := out[i]
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
			c, ok := st.lookupCluster(&d.Columns[st.iClus], i)
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
		y, wi := p.y[r], st.weight(p, r)
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
		y, wi := p.y[r], st.weight(p, r)
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
	switch st.s.Variance {
	case Classical:
		s2 := f.rss / float64(n-k)
		v := make([]float64, k*k)
		for i, b := range f.bread {
			v[i] = s2 * b
		}
		return v, n - k
	case CR1:
		g := len(st.ds.clusterLabels)
		sg := blas64.General{Rows: g, Cols: k, Stride: k, Data: st.scores}
		meat := blas64.General{Rows: k, Cols: k, Stride: k, Data: make([]float64, k*k)}
		blas64.Gemm(blas.Trans, blas.NoTrans, 1, sg, sg, 0, meat)
		v := f.wrap(meat.Data)
		c := float64(g) / float64(g-1) * float64(n-1) / float64(n-k)
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
		c := float64(n) / float64(n-k)
		for i := range v {
			v[i] *= c
		}
	}
	return v, n - k
}
