package estimate

import (
	"context"
	"errors"
	"fmt"

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
//     With unit effects (within.go), a pass of their own follows: each
//     unit's sums of its model rows and outcome, in row order as Fit sums
//     them, and whether each column varies within some unit; the absorbed
//     columns leave the design, and the later passes demean every row.
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
	if s.Treatment.Kind == TreatmentArms {
		return nil, needsMemory("a treatment of several arms is fitted in memory")
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
	if s.UnitEffects {
		if err := st.absorbUnits(ctx, src); err != nil {
			return nil, err
		}
	}
	st.ready()
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
	facts.cells = st.allCells.cells
	facts.r2, facts.adjR2 = rSquared(f.rss, st.tss, ds.n, ds.k+ds.absorbedDF())
	ds.facts = facts
	return ds.result(s, f, v, s.Variance, df, nil), nil
}

// absorbUnits is the pass of the unit effects (within.go): every row's
// model row into its unit's sums, in row order as Fit sums them; then the
// columns the unit effects absorb leave the design. A model they cannot
// fit is handed back, so that Fit words why.
func (st *stream) absorbUnits(ctx context.Context, src Chunks) error {
	ds := st.ds
	st.within = newWithin(len(ds.unitLabels), ds.k)
	if err := pass(ctx, src, st.parts, passWork{prepare: func(w *chunkWorker, p *chunkPart) error {
		return st.designRows(w, p, st.iWeight >= 0)
	}, combine: st.absorb}); err != nil {
		return err
	}
	if st.changed {
		return ErrChangedBetweenPasses
	}
	st.within.finish()
	if err := ds.keepColumns(st.s, st.within); err != nil {
		return needsMemory("the unit effects absorb the programme's effect")
	}
	if ds.n <= ds.k+len(ds.unitLabels) {
		return needsMemory("there are fewer rows than terms and units")
	}
	ds.within = st.within
	return nil
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
	countAt             map[[2]string]int
	firstY, firstT      float64
	yVaries, tVaries    bool
	badTreatment        bool
	labelCount          map[string]int
	modCount            map[string]int
	modStats            map[string]*groupStats
	controlCount        []map[string]int
	clusters, units     *numbering
	modKeys, periodKeys keyCache
	// A before-and-after design: the period column, the labels of a
	// labelled one, and the rows by group of units and period.
	iPeriod     int
	badPeriod   bool
	periodCount map[string]int
	afterKey    string
	allCells    groupStats
	iUnit       int
	// within gathers the unit effects' means in a pass of their own,
	// before the factorization.
	within                  *within
	layout                  layout // the model row's terms, for fill
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
