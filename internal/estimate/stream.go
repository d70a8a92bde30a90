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
	// the same rows in the same order at every pass. Every chunk has the
	// same columns, with the same names and kinds. A chunk and its slices
	// may be reused once each returns, so each keeps no part of them.
	// Pass stops at the first error of each or of reading, and returns it.
	Pass(ctx context.Context, each func(chunk *Data) error) error
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
	st := &stream{s: s}
	if err := src.Pass(ctx, st.survey); err != nil {
		return nil, err
	}
	ds, err := st.plan()
	if err != nil {
		return nil, err
	}
	if err := src.Pass(ctx, st.factor); err != nil {
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
		if err := src.Pass(ctx, st.residuals); err != nil {
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
	s  Spec
	ds *design

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
	qr       *qrFactor // over K+1 columns until the pass ends, then K
	block    []float64 // column-major, chunkRows × (K+1)
	rows     int       // rows in block
	tri      []float64 // the triangle of the current block of chunks (qr.go)
	triDone  int       // chunks absorbed into tri
	blocks   int       // blocks merged into the running triangle
	qty      []float64 // Qᵀy, K entries
	row      []float64
	hash     *rowHash
	clusters []int // the current row's cluster number, for the hash

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
	u           []float64
	leverageOne bool
	changed     bool // a later pass met what the survey did not see
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
	if c.Num == nil {
		return c.Text[i]
	}
	v := c.Num[i]
	if k, ok := kc[v]; ok {
		return k
	}
	k := c.key(i)
	if len(kc) < 1<<16 {
		kc[v] = k
	}
	return k
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
// missing values (buildDesign).
func (st *stream) roleChecks(d *Data) []roleColumn {
	s := st.s
	rc := func(i int, role string, numeric bool) roleColumn {
		return roleColumn{col: &d.Columns[i], role: role, numeric: numeric}
	}
	st.checks = append(st.checks[:0], rc(st.iOut, "outcome", true),
		rc(st.iTreat, "treatment", s.Treatment.Kind != TreatmentLabels),
		rc(st.iMod, "moderator", false))
	for _, i := range st.iControls {
		st.checks = append(st.checks, rc(i, "control", false))
	}
	if st.iClus >= 0 {
		st.checks = append(st.checks, rc(st.iClus, "cluster", false))
	}
	if st.iWeight >= 0 {
		st.checks = append(st.checks, rc(st.iWeight, "weight", true))
	}
	return st.checks
}

// usable reports whether row i of the chunk enters the fit; in the survey
// (record), it also notes why a row does not.
func (st *stream) usable(d *Data, checks []roleColumn, i int, record bool) bool {
	for _, rc := range checks {
		reason, kind := rc.problem(i)
		if reason == "" {
			continue
		}
		if record {
			ds := st.ds
			ds.dropped = append(ds.dropped, DroppedRow{Row: d.label(i), Column: rc.col.Name, Reason: reason})
			key := [2]string{rc.col.Name, kind}
			if j, ok := st.countAt[key]; ok {
				ds.counts[j].Rows++
			} else {
				st.countAt[key] = len(ds.counts)
				ds.counts = append(ds.counts, DropCount{Column: rc.col.Name, Reason: countReason(rc, kind), Rows: 1})
			}
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
	checks := st.roleChecks(d)
	for i := 0; i < n; i++ {
		ds.rowsRead++
		if !st.usable(d, checks, i, true) {
			continue
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

// knownCluster returns the number the survey gave row i's cluster, or
// −1, noting the change, when the survey did not see it.
func (st *stream) knownCluster(c *Column, i int) int {
	j, ok := st.lookupCluster(c, i)
	if !ok {
		st.changed = true
		return -1
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
			return nil, needsMemory(fmt.Sprintf("the treatment's effect cannot be estimated in group %q", l))
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
	st.row = make([]float64, k)
	st.hash = newRowHash()
	st.outcomeBinary = true
	if st.iClus >= 0 {
		st.clusters = make([]int, 1)
	}
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

// fill writes row i's model row into st.row, unweighted, as assemble does.
func (st *stream) fill(d *Data, i int) {
	ds, x := st.ds, st.row
	clear(x)
	x[0] = 1
	t := st.treatment(d, i)
	x[ds.tCol] = t
	level, ok := st.levelIndex[st.modKeys.key(&d.Columns[st.iMod], i)]
	st.changed = st.changed || !ok
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
		st.changed = st.changed || st.controlCount[j][c.Text[i]] == 0
		for l, level := range levels {
			if c.Text[i] == level {
				x[st.controlCol[j]+l] = 1
			}
		}
	}
}

// weight returns row i's weight, 1 without weights.
func (st *stream) weight(d *Data, i int) float64 {
	if st.iWeight < 0 {
		return 1
	}
	return d.Columns[st.iWeight].Num[i]
}

// factor is the second pass: [√w·X √w·y] into the QR factorization.
func (st *stream) factor(d *Data) error {
	k := st.ds.k
	var w []float64
	if st.iWeight >= 0 {
		w = make([]float64, 1)
	}
	return st.usedRows(d, func(i int, y, wi float64) {
		if w != nil {
			w[0] = wi
		}
		if st.clusters != nil {
			st.clusters[0] = st.knownCluster(&d.Columns[st.iClus], i)
		}
		st.hash.row(st.row, y, w, 0, st.clusters)
		st.sw += wi
		st.swy += wi * y
		if y != 0 && y != 1 {
			st.outcomeBinary = false
		}
		if w != nil {
			r := math.Sqrt(wi)
			y = r * y
			for j := range st.row {
				st.row[j] *= r
			}
		}
		st.swyW += y
		m := chunkRows
		for j, v := range st.row {
			st.block[j*m+st.rows] = v
		}
		st.block[k*m+st.rows] = y
		st.rows++
		if st.rows == chunkRows {
			st.flushBlock()
		}
	})
}

// usedRows calls fn with each row of the chunk that enters the fit, its
// outcome and its weight (1 without weights), its model row in st.row.
func (st *stream) usedRows(d *Data, fn func(i int, y, w float64)) error {
	n, err := d.rows()
	if err != nil {
		return err
	}
	checks := st.roleChecks(d)
	for i := 0; i < n; i++ {
		if !st.usable(d, checks, i, false) {
			continue
		}
		st.fill(d, i)
		fn(i, d.Columns[st.iOut].Num[i], st.weight(d, i))
	}
	return nil
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
	st.u = make([]float64, k)
	st.leverageOne = false
}

// residuals is the third pass: the residuals, their sums, the leverage and
// the middle of the sandwich, as Fit's residuals, leverage, hcVariance and
// clusterSandwich compute them, row for row.
func (st *stream) residuals(d *Data) error {
	s, k, q := st.s, st.ds.k, st.qr
	return st.usedRows(d, func(i int, y, wi float64) {
		st.tss += wi * (y - st.meanY) * (y - st.meanY)
		x := st.row
		if st.iWeight >= 0 {
			r := math.Sqrt(wi)
			y = r * y
			for j := range x {
				x[j] *= r
			}
		}
		st.tssW += (y - st.meanYW) * (y - st.meanYW)
		var a acc
		a.add(y)
		for j, v := range x {
			a.addProd(-v, st.coef[j])
		}
		e := a.value()
		st.rss.addProd(e, e)
		for j, v := range x {
			st.xte[j].addProd(v, e)
		}
		switch s.Variance {
		case CR1:
			c := st.knownCluster(&d.Columns[st.iClus], i)
			if c < 0 {
				return
			}
			sc := st.scores[c*k : (c+1)*k]
			for j, v := range x {
				sc[j] += v * e
			}
			return
		case Classical:
			return
		}
		e2 := e * e
		if s.Variance == HC2 || s.Variance == HC3 {
			for j, p := range q.perm {
				st.u[j] = x[p] / q.d[p]
			}
			q.solveRT(st.u)
			var h float64
			for _, v := range st.u {
				h += v * v
			}
			if 1-h <= 1e-10 {
				st.leverageOne = true
			}
			if s.Variance == HC2 {
				e2 /= 1 - h
			} else {
				e2 /= (1 - h) * (1 - h)
			}
		}
		o := math.Sqrt(e2)
		row := st.meatBuf[st.meatRows*k : (st.meatRows+1)*k]
		for j, v := range x {
			row[j] = o * v
		}
		st.meatRows++
		if st.meatRows == chunkRows {
			st.flushMeat()
		}
	})
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
