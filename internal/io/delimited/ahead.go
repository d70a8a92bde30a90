package delimited

import (
	"io"
	"unsafe"

	"slopewise/internal/io/table"
)

// aheadSource reads a text file's rows in a goroutine of its own, a batch
// ahead of the caller, so that splitting the text into cells and taking
// the cells in (a survey, a table) run side by side on two cores. The
// rows and cells are the scanner's, in the same order, with the same
// errors at the same place. A batch hands over only the cells' bytes and
// where they end: rebuilding a row's cells on the caller's side is
// cheaper than moving whole cells from one core's cache to the other's.
type aheadSource struct {
	scan  *csvScanner
	ready chan *rowBatch
	spare chan *rowBatch
	stop  chan struct{}
	done  chan struct{}
	cur   *rowBatch
	next  int // the row of cur to give next
	cells []table.RawCell
	err   error
}

// rowBatch is a run of rows; row k's cells are numbers rows[k-1].cells
// to rows[k].cells of cols, starts and ends, their texts
// arena[starts[i]:ends[i]]. The scanner gives every cell of a row the
// row's first line.
type rowBatch struct {
	rows   []aheadRow
	cols   []int32
	starts []int
	ends   []int
	arena  []byte
	err    error // what the scanner said after the last row (io.EOF at the end)
}

type aheadRow struct {
	num, line, cells int
}

// aheadRows is how many rows a batch holds at most (a variable for
// tests), and aheadBytes about how many bytes of text: a batch ends at
// the row that reaches it.
var aheadRows = 256

const aheadBytes = 4 << 20

func newAheadSource(scan *csvScanner) *aheadSource {
	a := &aheadSource{scan: scan, ready: make(chan *rowBatch, 4), spare: make(chan *rowBatch, 6),
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
		b.rows, b.cols, b.starts, b.ends, b.arena, b.err = b.rows[:0], b.cols[:0], b.starts[:0], b.ends[:0], b.arena[:0], nil
		for len(b.rows) < aheadRows && len(b.arena) < aheadBytes {
			line, err := a.scan.advance()
			if err != nil {
				b.err = err
				break
			}
			// The record's fields, the empty ones left out as Next leaves
			// them out.
			rec, base, prev := a.scan.record, len(b.arena), 0
			b.arena = append(b.arena, rec[:a.scan.ends[len(a.scan.ends)-1]]...)
			for j, end := range a.scan.ends {
				if end > prev {
					b.cols = append(b.cols, int32(j))
					b.starts = append(b.starts, base+prev)
					b.ends = append(b.ends, base+end)
				}
				prev = end
			}
			b.rows = append(b.rows, aheadRow{num: a.scan.row, line: line, cells: len(b.cols)})
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

// Next implements table.RowSource.
func (a *aheadSource) Next() (int, []table.RawCell, error) {
	for a.cur == nil || a.next == len(a.cur.rows) {
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
	b, k := a.cur, a.next
	a.next++
	first := 0
	if k > 0 {
		first = b.rows[k-1].cells
	}
	r := b.rows[k]
	n := r.cells - first
	if cap(a.cells) < n {
		a.cells = make([]table.RawCell, n, 2*n)
	}
	cells := a.cells[:n]
	for j := range cells {
		i := first + j
		c := &cells[j]
		c.Col, c.Type, c.Line = int(b.cols[i]), table.CellText, r.line
		c.Text = unsafe.String(&b.arena[b.starts[i]], b.ends[i]-b.starts[i])
	}
	return r.num, cells, nil
}

// Close stops the goroutine and closes the file.
func (a *aheadSource) Close() error {
	close(a.stop)
	<-a.done
	return a.scan.Close()
}

// TextRows marks the read-ahead as a source of text rows whose texts
// live only until the next row.
func (a *aheadSource) TextRows() bool { return true }
