package estimate

import (
	"context"
	"runtime"
	"sync"
)

// The later passes of a streamed fit (FitStream) split the work on a chunk
// in two, so that it can use every core and still give the same result to
// the bit on any number of them, as the blocks of Fit do (parallel.go):
//
//   - the chunk's own work, which depends on no other chunk (which rows
//     enter the fit, their model rows, weights, clusters, residuals,
//     leverage and rows of the sandwich's middle), runs on up to
//     GOMAXPROCS goroutines into a chunkPart of its own;
//   - the parts are combined into the running sums, triangles and hash
//     strictly in chunk order, on the goroutine that receives the chunks.
//
// Which goroutine prepared which part then changes nothing. At most
// pipeDepth chunks are in flight (handed out and not yet combined), so
// memory stays bounded by a few chunks whatever the number of rows.

// pipeDepth is the most chunks of a pass in flight at once.
const pipeDepth = 4

// chunkPart is what the chunk's own work leaves for the combining: the
// rows of the chunk that enter the fit, in order.
type chunkPart struct {
	n        int
	x        []float64 // n×K row-major: the model rows, times √w with weights
	raw      []float64 // n×K: the model rows without the weights (for the hash; weighted factor pass only)
	y        []float64 // the outcome
	yw       []float64 // √w·y (y without weights)
	w        []float64 // the weights (with weights only)
	cluster  []int     // the cluster numbers, −1 for one the survey did not see (with clusters only)
	unit     []int     // the unit numbers, −1 for one the survey did not see (with a unit column only)
	yRaw     []float64 // the outcome before the within transformation (unit effects only)
	e        []float64 // the residuals (residual pass)
	o        []float64 // √ωᵢ: row i of the sandwich's middle is √ωᵢ·xᵢ (residual pass, HC0–HC3)
	changed  bool      // a group, level or cluster the survey did not see
	levOne   bool      // a row of leverage 1 (residual pass, HC2 and HC3)
	err      error
	d        *Data
	release  func()
	prepared chan struct{}
}

// grow returns s with length n, reusing its memory when it can.
func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// chunkWorker is one goroutine's scratch space for the chunks' own work.
type chunkWorker struct {
	checks []roleColumn
	u, h   []float64 // the leverage's scratch space, and the chunk's leverages
	wide   []float64 // a model row before the unit effects absorb columns
}

// passWork is a pass's work on its chunks.
type passWork struct {
	// prepare is each chunk's own work, on any goroutine.
	prepare func(w *chunkWorker, p *chunkPart) error
	// combine takes the prepared parts in chunk order, on the goroutine
	// that receives the chunks.
	combine func(p *chunkPart)
	// then, when set, takes the combined parts in chunk order too, but on
	// a goroutine of its own: sequential work (the hash) that need not
	// hold up the combining.
	then func(p *chunkPart)
}

// spareParts is the most parts kept for reuse between chunks and passes:
// those in flight, those waiting for then, and a few more.
const spareParts = 2*pipeDepth + 2

// chunkPipe runs one pass.
type chunkPipe struct {
	passWork
	jobs   chan *chunkPart
	queue  []*chunkPart // handed out, in chunk order, not yet combined
	later  chan *chunkPart
	spare  chan *chunkPart
	inline *chunkWorker // with one core: everything runs on the caller
	wg     sync.WaitGroup
	thenWG sync.WaitGroup
}

// pass runs a pass over src; parts are taken from and returned to spare,
// so that the passes of a fit share them.
func pass(ctx context.Context, src Chunks, spare chan *chunkPart, work passWork) error {
	cp := &chunkPipe{passWork: work, spare: spare}
	if workers := min(runtime.GOMAXPROCS(0), pipeDepth); workers <= 1 {
		cp.inline = &chunkWorker{}
	} else {
		cp.jobs = make(chan *chunkPart, pipeDepth)
		for range workers {
			cp.wg.Go(func() {
				w := &chunkWorker{}
				for p := range cp.jobs {
					cp.work(w, p)
					p.prepared <- struct{}{}
				}
			})
		}
		if cp.then != nil {
			cp.later = make(chan *chunkPart, pipeDepth)
			cp.thenWG.Go(func() {
				for p := range cp.later {
					cp.then(p)
					cp.recycle(p)
				}
			})
		}
	}
	err := src.Pass(ctx, cp.each)
	if ferr := cp.finish(err == nil); err == nil {
		err = ferr
	}
	return err
}

// work does the chunk's own work and hands the chunk back.
func (cp *chunkPipe) work(w *chunkWorker, p *chunkPart) {
	p.changed, p.levOne = false, false
	p.err = cp.prepare(w, p)
	p.d = nil
	p.release()
}

// each takes the next chunk: it hands the chunk to a worker, then
// combines the parts that are ready, in order, waiting for the oldest
// while pipeDepth chunks are in flight.
func (cp *chunkPipe) each(d *Data, release func()) error {
	p := cp.part()
	p.d, p.release = d, release
	if cp.inline != nil {
		cp.work(cp.inline, p)
		return cp.done(p)
	}
	cp.queue = append(cp.queue, p)
	cp.jobs <- p
	for len(cp.queue) > 0 {
		q := cp.queue[0]
		if len(cp.queue) < pipeDepth {
			select {
			case <-q.prepared:
			default:
				return nil
			}
		} else {
			<-q.prepared
		}
		cp.queue = cp.queue[1:]
		if err := cp.done(q); err != nil {
			return err
		}
	}
	return nil
}

// done combines a prepared part, or returns its error, and passes the
// part on to then, or keeps it for another chunk.
func (cp *chunkPipe) done(p *chunkPart) error {
	if p.err != nil {
		return p.err
	}
	cp.combine(p)
	switch {
	case cp.then == nil:
		cp.recycle(p)
	case cp.later != nil:
		cp.later <- p
	default:
		cp.then(p)
		cp.recycle(p)
	}
	return nil
}

// finish waits for the chunks in flight and, when the pass went well,
// combines them in order; it returns the first error of their work.
func (cp *chunkPipe) finish(combine bool) error {
	var err error
	if cp.jobs != nil {
		close(cp.jobs)
		for _, p := range cp.queue {
			<-p.prepared
			if combine && err == nil {
				err = cp.done(p)
			}
		}
		cp.wg.Wait()
	}
	if cp.later != nil {
		close(cp.later)
		cp.thenWG.Wait()
	}
	cp.queue = nil
	return err
}

// part returns a spare part, or a new one.
func (cp *chunkPipe) part() *chunkPart {
	select {
	case p := <-cp.spare:
		return p
	default:
		return &chunkPart{prepared: make(chan struct{}, 1)}
	}
}

// recycle keeps a part for another chunk, when there is room.
func (cp *chunkPipe) recycle(p *chunkPart) {
	select {
	case cp.spare <- p:
	default:
	}
}
