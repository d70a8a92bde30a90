package delimited

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"

	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
)

// Stream is a text file read in passes instead of held in memory, for a
// fit that streams its rows (estimate.FitStream). OpenStream surveys the
// file once, deciding each column's kind exactly as Read would; Pass then
// reads it again from the start, a chunk of rows at a time, giving each
// cell the value and missing reason Read would give it. Memory stays flat
// however long the file is.
type Stream struct {
	// Outline describes the file as Read's Table would (path, header row,
	// notes, columns with names, kinds, levels and distinct values) but
	// holds no rows: its columns' Numbers, Texts and Missing are nil.
	Outline *table.Table
	// Rows is the number of data rows.
	Rows int

	tf     *table.TextFormat
	file   os.FileInfo // the file as surveyed
	replay *replay     // the first pass's chunks, for the passes after it
}

// Close removes the temporary copy of the first pass's chunks, if any.
// The Stream's passes parse the file again after it.
func (s *Stream) Close() {
	s.replay.close()
	s.replay = nil
}

// ErrChangedWhileRead is the cause of a pass that did not see the rows
// the survey saw.
var ErrChangedWhileRead = errors.New("the file changed while it was being read")

// OpenStream surveys a delimited text file for streamed reading. Its
// errors are not worded for people: a caller that meets one reads the
// file with Read instead, which says what is wrong (a file that is not
// text, a quote out of place, a header with no rows below it).
func OpenStream(ctx context.Context, path string, opts table.Options) (*Stream, error) {
	f, err := sniff.File(path)
	if err != nil {
		return nil, err
	}
	if f != sniff.Text {
		return nil, fmt.Errorf("%s is not a text file", path)
	}
	info, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	tf, err := SniffText(path)
	if err != nil {
		return nil, err
	}
	scan, err := OpenScanner(path, tf)
	if err != nil {
		return nil, err
	}
	src := newAheadSource(scan)
	defer src.Close()
	t := &table.Table{Path: path, Text: tf}
	if tf.Encoding != "UTF-8" {
		t.Notes = append(t.Notes, table.Note{Text: "the file is not UTF-8; it was read as " + tf.Encoding + " text"})
	}
	b := &table.Builder{Table: t, Cols: map[int]table.ColAdder{}, DecimalComma: tf.DecimalComma,
		NewCol: func(i int) table.ColAdder { return &colSurvey{texts: map[string]bool{}} }}
	if err := table.ScanRows(ctx, src, t, opts, b); err != nil {
		return nil, err
	}
	finishSurvey(b)
	return &Stream{Outline: t, Rows: b.Rows, tf: tf, file: info}, nil
}

// colSurvey counts what colBuilder needs to decide a column's kind,
// keeping no rows. Text files hold only text cells.
type colSurvey struct {
	present, converted, dateTexts int
	marked                        int       // missing for a reason other than a blank
	numbers                       []float64 // the first three distinct numbers
	dates                         []float64 // the first three distinct date values
	texts                         map[string]bool
}

func (c *colSurvey) Add(_ int, cell *table.RawCell, decimalComma bool) {
	if cell == nil {
		return
	}
	s := table.TrimSpace(cell.Text)
	switch table.ClassifyText(s) {
	case table.Blank:
		return
	case table.Present:
	default:
		c.marked++
		return
	}
	c.present++
	if len(c.texts) <= table.MaxLevels && !c.texts[s] {
		c.texts[strings.Clone(s)] = true
	}
	if v, ok := table.ParseNumber(s, decimalComma); ok {
		c.converted++
		c.numbers = noteDistinct(c.numbers, v)
		if len(c.dates) < 3 && !contains(c.dates, v) && plainNumber(v, s) {
			c.dates = append(c.dates, v)
		}
		return
	}
	if v, ok := table.ParseDate(s); ok {
		c.dateTexts++
		c.dates = noteDistinct(c.dates, v)
	}
}

func noteDistinct(seen []float64, v float64) []float64 {
	if len(seen) < 3 && !contains(seen, v) {
		seen = append(seen, v)
	}
	return seen
}

func contains(xs []float64, v float64) bool {
	for _, x := range xs {
		if x == v {
			return true
		}
	}
	return false
}

// plainNumber reports whether s is v written plainly, as colBuilder
// decides whether to keep a number's text.
func plainNumber(v float64, s string) bool {
	var buf [32]byte
	return string(strconv.AppendFloat(buf[:0], v, 'g', -1, 64)) == s
}

// kind decides the column's kind and levels as colBuilder.finish does.
func (c *colSurvey) kind(col *table.Column) {
	switch {
	case c.present == 0:
		col.Kind = table.Empty
	case c.dateTexts > c.present/2:
		col.Kind, col.Distinct = table.Date, c.dates
	case c.converted > c.present/2:
		if len(c.numbers) == 2 && contains(c.numbers, 0) && contains(c.numbers, 1) {
			col.Kind, col.Levels = table.YesNo, []string{"0", "1"}
			return
		}
		col.Kind, col.Distinct = table.Number, c.numbers
	default:
		n := len(c.texts)
		switch {
		case n == 2:
			col.Kind = table.YesNo
		case n <= table.MaxLevels && n*2 <= c.present:
			col.Kind = table.Category
		default:
			col.Kind = table.Text
			return
		}
		for s := range c.texts {
			col.Levels = append(col.Levels, s)
		}
		if col.Kind == table.YesNo {
			table.OrderYesNo(col.Levels)
		} else {
			sort.Strings(col.Levels)
		}
	}
}

// finishSurvey names the columns and decides their kinds, as finish does
// for a Table.
func finishSurvey(b *table.Builder) {
	t := b.Table
	idx, names := b.ColumnNames()
	for i, ci := range idx {
		cs := b.Cols[ci].(*colSurvey)
		col := &table.Column{Name: names[i], Letter: table.ColumnLetter(ci), Index: ci}
		cs.kind(col)
		if col.Kind == table.Empty && b.Header[ci] == "" && cs.marked == 0 {
			continue // a spacer column with neither name nor values
		}
		t.Columns = append(t.Columns, col)
	}
}

// Pass reads the file again from the start and calls each with
// successive chunks of at most size data rows: the rows' numbers in the
// file (as Table.SourceRows) and, for each named column, a Column of the
// outline's kind holding the chunk's values (Numbers, Texts and Missing,
// as Read fills them). The chunk's slices are reused once each returns;
// its texts may be kept.
func (s *Stream) Pass(ctx context.Context, names []string, size int, each func(rows []int, cols []*table.Column) error) error {
	if info, err := os.Stat(s.Outline.Path); err != nil || info.Size() != s.file.Size() || !info.ModTime().Equal(s.file.ModTime()) {
		return &table.Error{Path: s.Outline.Path, Cause: ErrChangedWhileRead, Detail: "it was saved again while it was being analyzed; run the analysis again"}
	}
	cols := make([]*chunkColumn, len(names))
	for i, name := range names {
		oc := s.Outline.Column(name)
		if oc == nil {
			return fmt.Errorf("%s has no column %q", s.Outline.Path, name)
		}
		cols[i] = &chunkColumn{Column: table.Column{Name: oc.Name, Letter: oc.Letter, Index: oc.Index, Kind: oc.Kind, Levels: oc.Levels, Distinct: oc.Distinct},
			intern: map[string]uint32{}}
	}
	out := make([]*table.Column, len(cols))
	for i, c := range cols {
		out[i] = &c.Column
	}
	skip := 0 // chunks already given from a replay that broke off
	if s.replay.matches(names, size) {
		played, err := s.replay.play(ctx, cols, out, each)
		if ctx.Err() != nil && err == ctx.Err() {
			return &table.Error{Path: s.Outline.Path, Cause: table.ErrCancelled, Underlying: err}
		}
		if !errors.Is(err, errBadReplay) {
			return err
		}
		// Unreadable (a full or failing disk): parse the file, going on
		// after the chunks already given.
		s.Close()
		skip = played
		for _, c := range cols {
			c.reset()
		}
	}
	scan, err := OpenScanner(s.Outline.Path, s.tf)
	if err != nil {
		return err
	}
	src := newAheadSource(scan)
	defer src.Close()
	var rec *replay
	if s.replay == nil && skip == 0 {
		rec = newReplay(names, size)
		defer func() {
			if rec != nil && s.replay != rec {
				rec.close()
			}
		}()
	}
	var rows []int
	flush := func() error {
		if len(rows) == 0 {
			return nil
		}
		if rec != nil && !rec.record(rows, cols) {
			rec.close()
			rec = nil
		}
		if skip > 0 {
			skip--
		} else if err := each(rows, out); err != nil {
			return err
		}
		rows = rows[:0]
		for _, c := range cols {
			c.reset()
		}
		return nil
	}
	seen, headerRow := 0, s.Outline.HeaderRow
	for n := 0; ; n++ {
		if n%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return &table.Error{Path: s.Outline.Path, Cause: table.ErrCancelled, Underlying: err}
			}
		}
		num, cells, err := src.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		if num <= headerRow || table.IsBlankRow(cells) {
			continue
		}
		seen++
		rows = append(rows, num)
		for _, c := range cols {
			c.add(cells, s.tf.DecimalComma)
		}
		if len(rows) == size {
			if err := flush(); err != nil {
				return err
			}
		}
	}
	if err := flush(); err != nil {
		return err
	}
	if seen != s.Rows {
		return &table.Error{Path: s.Outline.Path, Cause: ErrChangedWhileRead, Detail: fmt.Sprintf("%d data rows were read first, %d now", s.Rows, seen)}
	}
	if rec != nil && rec.finish(cols) {
		s.replay = rec
	}
	return nil
}

// internLimit bounds the texts a column keeps one copy of (a variable
// for tests).
var internLimit = 1 << 16

// chunkColumn is one column of a chunk, filled cell by cell.
type chunkColumn struct {
	table.Column
	// ids has, for a column of texts, each cell's text's number in
	// texts plus one, or 0 for a text not kept there (past internLimit).
	ids    []uint32
	intern map[string]uint32
	texts  []string
}

// Add appends the row's cell of this column, converted as colBuilder.add
// and finish convert it for the column's kind.
func (c *chunkColumn) add(cells []table.RawCell, decimalComma bool) {
	var s string
	found := false
	for i := range cells {
		if cells[i].Col == c.Index {
			s, found = table.TrimSpace(cells[i].Text), true
			break
		}
		if cells[i].Col > c.Index {
			break
		}
	}
	reason := table.Blank
	if found {
		reason = table.ClassifyText(s)
	}
	num, text, id := math.NaN(), "", uint32(0)
	if reason == table.Present {
		switch c.Kind {
		case table.Number:
			if v, ok := table.ParseNumber(s, decimalComma); ok {
				num = v
			} else {
				reason = table.TextInNumbers
			}
		case table.Date:
			if v, ok := table.ParseNumber(s, decimalComma); ok && plainNumber(v, s) {
				num = v
			} else if v, ok := table.ParseDate(s); ok {
				num = v
			} else {
				reason = table.BadDate
			}
		case table.YesNo, table.Category, table.Text:
			// Two texts "0" and "1" would be numbers, so a yes/no column
			// with these levels was made from numbers (finishYesNoNumbers).
			if c.Kind == table.YesNo && c.Levels[0] == "0" && c.Levels[1] == "1" {
				v, ok := table.ParseNumber(s, decimalComma)
				switch {
				case ok && v == 0:
					num, text = 0, "0"
				case ok && v == 1:
					num, text = 1, "1"
				default:
					reason = table.TextInNumbers
				}
				break
			}
			text, id = c.keep(s)
		}
	}
	c.Numbers = append(c.Numbers, num)
	c.Missing = append(c.Missing, reason)
	if textKind(c.Kind) {
		c.Texts = append(c.Texts, text)
		c.ids = append(c.ids, id)
	}
}

// reset empties the column for the next chunk, keeping its storage.
func (c *chunkColumn) reset() {
	c.Numbers, c.Texts, c.Missing, c.ids = c.Numbers[:0], c.Texts[:0], c.Missing[:0], c.ids[:0]
}

// keep returns s as a string that outlives the chunk, one copy a text,
// and its number in c.texts plus one (0 past internLimit texts).
func (c *chunkColumn) keep(s string) (string, uint32) {
	if id, ok := c.intern[s]; ok {
		return c.texts[id-1], id
	}
	k := strings.Clone(s)
	if len(c.texts) >= internLimit {
		return k, 0
	}
	c.texts = append(c.texts, k)
	id := uint32(len(c.texts))
	c.intern[k] = id
	return k, id
}
