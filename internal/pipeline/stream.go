package pipeline

import (
	"context"
	"errors"
	"fmt"

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
		return AnalyzeTable(ctx, run, s.Table)
	}
	o := s.Stream.Outline
	run.Sheet, run.HeaderRow = o.Sheet, o.HeaderRow
	res, err := estimate.FitStream(ctx, streamChunks{s.Stream, usedColumns(o, run.Spec)}, run.Spec)
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
	sheet, err := report.Build(run, res)
	if err != nil {
		return nil, err
	}
	return &Analysis{Run: run, Result: res, Sheet: sheet}, nil
}

// usedColumns lists the columns of the outline that the spec uses; one it
// names but the file lacks is left for the fit to report.
func usedColumns(o *workbook.Table, s estimate.Spec) []string {
	var names []string
	for _, name := range append([]string{s.Outcome, s.Treatment.Column, s.Moderator.Column, s.Cluster, s.Weights}, s.Controls...) {
		if name != "" && o.Column(name) != nil {
			names = append(names, name)
		}
	}
	return names
}

// streamChunks adapts a stream's passes to the engine's chunks, as
// EngineData adapts a table. The file is read in a goroutine of its own a
// few chunks ahead of the fit, so that parsing and fitting run side by
// side; each chunk is a copy, since the stream reuses its slices.
type streamChunks struct {
	s     *workbook.Stream
	names []string
}

// chunksAhead is how many chunks the reader may be ahead of the fit.
const chunksAhead = 2

func (c streamChunks) Pass(ctx context.Context, each func(*estimate.Data) error) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	ready := make(chan *estimate.Data, chunksAhead)
	spare := make(chan *estimate.Data, chunksAhead+2)
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
		if err == nil {
			if err = each(d); err != nil {
				cancel()
			}
		}
		select {
		case spare <- d:
		default:
		}
	}
	if rerr := <-read; err == nil {
		err = rerr
	}
	return err
}

// copyChunk fills d with a copy of the stream's chunk, reusing d's
// slices.
func copyChunk(d *estimate.Data, rows []int, cols []*workbook.Column) {
	d.RowLabels = append(d.RowLabels[:0], rows...)
	if len(d.Columns) != len(cols) {
		d.Columns = make([]estimate.Column, len(cols))
	}
	for j, col := range cols {
		ec := engineColumn(col, len(rows))
		dc := &d.Columns[j]
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
