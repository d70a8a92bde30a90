package workbook

import (
	"io"
	"unsafe"
)

// aheadSource reads a text file's rows in a goroutine of its own, a batch
// ahead of the caller, so that splitting the text into cells and taking
// the cells in (a survey, a table) run side by side on two cores. The
// rows and cells are the scanner's, in the same order, with the same
// errors at the same place; a batch's texts live in one block of bytes
// until the caller has moved two batches on.
type aheadSource struct {
	scan  *csvScanner
	ready chan *rowBatch
	spare chan *rowBatch
	stop  chan struct{}
	done  chan struct{}
	cur   *rowBatch
	next  int // the row of cur to give next
	err   error
}

// rowBatch is a run of rows: row k's cells are cells[ends[k-1]:ends[k]].
type rowBatch struct {
	nums  []int
	ends  []int
	cells []rawCell
	offs  []int // each cell's text's start in arena
	arena []byte
	err   error // what the scanner said after the last row (io.EOF at the end)
}

// aheadRows is how many rows a batch holds (a variable for tests).
var aheadRows = 2048

func newAheadSource(scan *csvScanner) *aheadSource {
	a := &aheadSource{scan: scan, ready: make(chan *rowBatch, 2), spare: make(chan *rowBatch, 4),
		stop: make(chan struct{}), done: make(chan struct{})}
	go a.fill()
	return a
}

// fill scans batches until the file ends, an error, or Close.
func (a *aheadSource) fill() {
	defer close(a.done)
	defer close(a.ready)
	for {
		var b *rowBatch
		select {
		case b = <-a.spare:
		default:
			b = &rowBatch{}
		}
		b.nums, b.ends, b.cells, b.offs, b.arena, b.err = b.nums[:0], b.ends[:0], b.cells[:0], b.offs[:0], b.arena[:0], nil
		for len(b.nums) < aheadRows {
			num, cells, err := a.scan.Next()
			if err != nil {
				b.err = err
				break
			}
			b.nums = append(b.nums, num)
			for _, c := range cells {
				b.offs = append(b.offs, len(b.arena))
				b.arena = append(b.arena, c.Text...)
				b.cells = append(b.cells, c)
			}
			b.ends = append(b.ends, len(b.cells))
		}
		// The texts point into the arena only now that it has stopped
		// growing.
		for i := range b.cells {
			n := len(b.cells[i].Text)
			if n == 0 {
				b.cells[i].Text = ""
				continue
			}
			b.cells[i].Text = unsafe.String(&b.arena[b.offs[i]], n)
		}
		select {
		case a.ready <- b:
		case <-a.stop:
			return
		}
		if b.err != nil {
			return
		}
	}
}

// Next implements rowSource.
func (a *aheadSource) Next() (int, []rawCell, error) {
	for a.cur == nil || a.next == len(a.cur.nums) {
		if a.err != nil {
			return 0, nil, a.err
		}
		if a.cur != nil {
			if a.cur.err != nil {
				a.err = a.cur.err
				continue
			}
			select {
			case a.spare <- a.cur:
			default:
			}
		}
		b, ok := <-a.ready
		if !ok {
			a.err = io.ErrUnexpectedEOF // not reached: a batch with an error ends the stream
			continue
		}
		a.cur, a.next = b, 0
	}
	k := a.next
	a.next++
	start := 0
	if k > 0 {
		start = a.cur.ends[k-1]
	}
	return a.cur.nums[k], a.cur.cells[start:a.cur.ends[k]], nil
}

// Close stops the goroutine and closes the file.
func (a *aheadSource) Close() error {
	close(a.stop)
	<-a.done
	return a.scan.Close()
}
