package estimate

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// Row-chunked work runs on up to GOMAXPROCS goroutines, but results must
// be the same to the bit whatever the number of cores. So the rows are
// split into blocks whose bounds depend only on the number of rows, every
// block writes only its own rows or its own partial result, and partial
// results are combined in block order on one goroutine afterwards. Which
// goroutine runs which block then changes nothing.

// blockChunks is the number of first-stage chunks in a block of the
// factorization (qr.go), and blockRows the rows of such a block: the unit
// of every reduction over rows (sums, partial triangles, partial meats).
// Large enough that combining the blocks' partial results costs little
// (≈ 125 blocks at 1,000,000 rows), small enough that two cores share the
// work evenly from about 16,000 rows on.
const (
	blockChunks = 16
	blockRows   = blockChunks * chunkRows
)

// numBlocks is the number of blocks of size rows in n rows.
func numBlocks(n, size int) int { return (n + size - 1) / size }

// forBlocks calls, for every block b of the rows [0, n) split into blocks
// of size rows, work(b, from, to) on up to GOMAXPROCS goroutines. Each
// goroutine calls newWorker once for its work function, so that scratch
// space is per goroutine; work must write only what belongs to block b.
// With one block, or one core, it runs on the calling goroutine.
func forBlocks(n, size int, newWorker func() func(b, from, to int)) {
	nb := numBlocks(n, size)
	workers := min(runtime.GOMAXPROCS(0), nb)
	if workers <= 1 {
		if nb == 0 {
			return
		}
		work := newWorker()
		for b := 0; b < nb; b++ {
			work(b, b*size, min(n, (b+1)*size))
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Go(func() {
			work := newWorker()
			for {
				b := int(next.Add(1) - 1)
				if b >= nb {
					return
				}
				work(b, b*size, min(n, (b+1)*size))
			}
		})
	}
	wg.Wait()
}

// forRows is forBlocks for work that needs no scratch space.
func forRows(n, size int, work func(b, from, to int)) {
	forBlocks(n, size, func() func(b, from, to int) { return work })
}
