package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"sync"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// streamChunkRows is how many rows a chunk of a streamed fit holds.
const streamChunkRows = 8192

// Source is a sheet ready to analyze: read whole into a Table, or, for a
// delimited text file, surveyed for a streamed fit that holds no rows
// (ARCHITECTURE, "Streaming where it pays").
type Source struct {
	// Table is the sheet read whole; nil when streamed.
	Table *workbook.Table
	// Stream is the surveyed text file; nil when read whole.
	Stream *workbook.Stream

	// groupings is the last answer of Groupings, for the spec whose
	// groupingKey is groupingsKey.
	groupings    []report.Grouping
	groupingsKey string
}

// Open readies the run's file for Analyze: a text file is surveyed for a
// streamed fit; a workbook, or a text file the survey cannot take (it
// then says why through Read's own error, or reads it whole), is read.
func Open(ctx context.Context, run report.Run) (*Source, error) {
	s, err := workbook.OpenStream(ctx, run.File, workbook.Options{Sheet: run.Sheet, HeaderRow: run.HeaderRow})
	if err == nil {
		return &Source{Stream: s}, nil
	}
	if ctx.Err() != nil {
		return nil, err
	}
	t, err := Read(ctx, run, nil)
	if err != nil {
		return nil, err
	}
	return &Source{Table: t}, nil
}

// Close lets go of what a streamed source keeps between passes (a
// temporary file); a Source read whole has nothing to let go of.
func (s *Source) Close() {
	if s.Stream != nil {
		s.Stream.Close()
	}
}

// Outline is the sheet's columns (names, kinds, levels) for choosing
// roles: the Table itself, or the stream's outline, which holds no rows.
func (s *Source) Outline() *workbook.Table {
	if s.Stream != nil {
		return s.Stream.Outline
	}
	return s.Table
}

// Analyze fits and builds the results sheet. A streamed fit that needs
// every row (estimate.ErrNeedsMemory) reads the file whole and fits again
// in memory, so the result is always Fit's. The Analysis of a streamed
// fit has no Table.
func (s *Source) Analyze(ctx context.Context, run report.Run) (*Analysis, error) {
	if s.Stream == nil {
		run.Groupings = s.knownGroupings(run.Spec)
		return AnalyzeTable(ctx, run, s.Table)
	}
	o := s.Stream.Outline
	run.Sheet, run.HeaderRow = o.Sheet, o.HeaderRow
	// The grouping check rides on the fit's first pass, unless it has
	// been made already; either way the passes ask for the same columns,
	// so that the copy the first one keeps serves the others.
	chunks, sc := s.chunks(run.Spec)
	if run.Groupings = s.knownGroupings(run.Spec); run.Groupings == nil {
		chunks.tap = sc
	}
	res, err := estimate.FitStream(ctx, chunks, run.Spec)
	if sc != nil && sc.complete {
		s.keepGroupings(run.Spec, sc.result())
		run.Groupings = s.groupings
	}
	if errors.Is(err, estimate.ErrNeedsMemory) {
		t, err := Read(ctx, run, nil)
		if err != nil {
			return nil, err
		}
		return AnalyzeTable(ctx, run, t)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", where(o), err)
	}
	if run.Groupings == nil {
		run.Groupings = []report.Grouping{}
	}
	sheet, err := report.Build(run, res)
	if err != nil {
		return nil, err
	}
	return &Analysis{Run: run, Result: res, Sheet: sheet}, nil
}

// usedColumns lists the columns of the outline that the spec uses, each
// once (specColumns); one it names but the file lacks is left for the fit
// to report.
func usedColumns(o *workbook.Table, s estimate.Spec) []string {
	var names []string
	for _, name := range specColumns(s) {
		if o.Column(name) != nil {
			names = append(names, name)
		}
	}
	return names
}

// streamChunks adapts a stream's passes to the engine's chunks, as
// EngineData adapts a table. The file is read in a goroutine of its own a
// few chunks ahead of the fit, so that parsing and fitting run side by
// side; each chunk is a copy, since the stream reuses its slices, and is
// the fit's until it releases it, so that the fit can work on a few at
// once; a released chunk's slices are reused for a later one.
type streamChunks struct {
	s     *workbook.Stream
	names []string
	// tap, when set, sees every chunk of the first pass before the fit
	// does, and is marked complete when that pass ends without error.
	tap *groupingScan
}

// chunksAhead is how many chunks the reader may be ahead of the fit, and
// chunksKept how many released chunks are kept for reuse (the fit holds a
// few at once).
const (
	chunksAhead = 2
	chunksKept  = chunksAhead + 6
)

func (c *streamChunks) Pass(ctx context.Context, each func(*estimate.Data, func()) error) error {
	tap := c.tap
	c.tap = nil
	if tap == nil {
		return c.pass(ctx, each)
	}
	err := c.pass(ctx, func(d *estimate.Data, release func()) error {
		tap.add(d)
		return each(d, release)
	})
	tap.complete = err == nil
	return err
}

func (c *streamChunks) pass(ctx context.Context, each func(*estimate.Data, func()) error) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	ready := make(chan *estimate.Data, chunksAhead)
	spare := make(chan *estimate.Data, chunksKept)
	recycle := func(d *estimate.Data) {
		select {
		case spare <- d:
		default:
		}
	}
	read := make(chan error, 1)
	go func() {
		defer close(ready)
		read <- c.s.Pass(ctx, c.names, streamChunkRows, func(rows []int, cols []*workbook.Column) error {
			var d *estimate.Data
			select {
			case d = <-spare:
			default:
				d = &estimate.Data{}
			}
			copyChunk(d, rows, cols)
			select {
			case ready <- d:
				return nil
			case <-ctx.Done():
				return ctx.Err()
			}
		})
	}()
	var err error
	for d := range ready {
		if err != nil {
			recycle(d)
			continue
		}
		if err = each(d, sync.OnceFunc(func() { recycle(d) })); err != nil {
			cancel()
		}
	}
	if rerr := <-read; err == nil {
		err = rerr
	}
	return err
}

// copyChunk fills d with a copy of the stream's chunk, reusing d's
// slices. The values are engineColumn's; a yes/no column of two numbers
// has each of its levels parsed once instead of every cell.
func copyChunk(d *estimate.Data, rows []int, cols []*workbook.Column) {
	d.RowLabels = append(d.RowLabels[:0], rows...)
	if len(d.Columns) != len(cols) {
		d.Columns = make([]estimate.Column, len(cols))
	}
	for j, col := range cols {
		dc := &d.Columns[j]
		if col.Kind == workbook.YesNo && numericLevels(col.Levels) {
			dc.Name, dc.Why, dc.Text = col.Name, whys(col), nil
			dc.Num = levelNumbers(dc.Num[:0], col)
			continue
		}
		ec := engineColumn(col, len(rows))
		num, text := dc.Num, dc.Text
		dc.Name, dc.Why, dc.Num, dc.Text = ec.Name, ec.Why, nil, nil
		if ec.Num != nil {
			dc.Num = append(num[:0], ec.Num...)
		}
		if ec.Text != nil {
			dc.Text = append(text[:0], ec.Text...)
		}
	}
}

// levelNumbers appends to num the cells of a yes/no column whose levels
// are numbers, as engineColumn reads them: NaN for a blank, else the
// number the text reads as.
func levelNumbers(num []float64, c *workbook.Column) []float64 {
	values := make([]float64, len(c.Levels))
	for l, s := range c.Levels {
		values[l], _ = strconv.ParseFloat(s, 64)
	}
	for _, s := range c.Texts {
		v := math.NaN()
		if s != "" {
			if l := slices.Index(c.Levels, s); l >= 0 {
				v = values[l]
			} else {
				v, _ = strconv.ParseFloat(s, 64)
			}
		}
		num = append(num, v)
	}
	return num
}
