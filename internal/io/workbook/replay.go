package workbook

import (
	"bufio"
	"encoding/binary"
	"errors"
	"io"
	"math"
	"os"
	"slices"
)

// A replay is the chunks of a stream's first pass kept in a temporary
// file in a compact binary form, so that later passes over the same
// columns read them back instead of parsing the text again: parsing and
// converting a cell costs far more than copying its eight bytes. The
// values read back are the very ones the first pass gave (numbers as
// their bits, reasons, texts), so a replayed pass is the parsed pass.
// Memory stays flat: the file is read a chunk at a time. A replay that
// cannot be written (no space, no temporary folder) is dropped and the
// passes parse the text as before.
//
// A chunk is: its row count n (uvarint); n row numbers (uvarints, each
// the step from the row before); then for each column n numbers (8 bytes
// each, little-endian IEEE 754 bits), n reasons (a byte each) and, for a
// column of texts, n texts (uvarint length, then the bytes).
type replay struct {
	names []string
	size  int
	f     *os.File
	path  string // still to remove, where an open file cannot be removed
	w     *bufio.Writer
	bytes int64
	rows  int  // the rows recorded
	done  bool // the first pass ended well: the file holds every chunk
	buf   []byte
}

// maxReplayBytes bounds a replay file; a pass that would write more
// parses the text instead.
const maxReplayBytes = 8 << 30

// newReplay starts a replay file in the system's temporary folder; nil
// when it cannot be made.
func newReplay(names []string, size int) *replay {
	f, err := os.CreateTemp("", "slopewise-pass-*")
	if err != nil {
		return nil
	}
	r := &replay{names: slices.Clone(names), size: size, f: f, w: bufio.NewWriterSize(f, 1<<20)}
	// Removed at once where an open file can be (the space comes back
	// when it is closed, even if the program is stopped); otherwise at
	// close.
	if os.Remove(f.Name()) != nil {
		r.path = f.Name()
	}
	return r
}

// matches reports whether a pass over names in chunks of size can be
// replayed.
func (r *replay) matches(names []string, size int) bool {
	return r != nil && r.done && r.size == size && slices.Equal(r.names, names)
}

// record appends a chunk; false when the replay has to be given up.
func (r *replay) record(rows []int, cols []*Column) bool {
	b := r.buf[:0]
	b = binary.AppendUvarint(b, uint64(len(rows)))
	prev := 0
	for _, row := range rows {
		b = binary.AppendUvarint(b, uint64(row-prev))
		prev = row
	}
	for _, c := range cols {
		for _, v := range c.Numbers {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
		}
		for _, m := range c.Missing {
			b = append(b, byte(m))
		}
		if textKind(c.Kind) {
			for _, s := range c.Texts {
				b = binary.AppendUvarint(b, uint64(len(s)))
				b = append(b, s...)
			}
		}
	}
	r.buf = b
	r.rows += len(rows)
	r.bytes += int64(len(b))
	if r.bytes > maxReplayBytes {
		return false
	}
	_, err := r.w.Write(b)
	return err == nil
}

// finish marks the replay complete after a first pass that ended well.
func (r *replay) finish() bool {
	if r.w.Flush() != nil {
		return false
	}
	r.done = true
	return true
}

// close removes the file.
func (r *replay) close() {
	if r == nil {
		return
	}
	r.f.Close()
	if r.path != "" {
		os.Remove(r.path)
	}
}

// errBadReplay is a replay file that does not read back as written.
var errBadReplay = errors.New("the pass's temporary copy does not read back")

// play reads the chunks back into cols (the pass's columns, which say
// each column's kind) and calls each with them; played counts the chunks
// given to each, so that a pass that meets errBadReplay can go on from
// there.
func (r *replay) play(cols []*chunkColumn, out []*Column, each func(rows []int, cols []*Column) error) (played int, err error) {
	if _, err := r.f.Seek(0, io.SeekStart); err != nil {
		return 0, errBadReplay
	}
	br := bufio.NewReaderSize(r.f, 1<<20)
	var rows []int
	var raw []byte
	total := 0
	for {
		n, err := binary.ReadUvarint(br)
		if err == io.EOF && total == r.rows {
			return played, nil
		}
		if err != nil || n == 0 || n > uint64(r.size) {
			return played, errBadReplay
		}
		rows = rows[:0]
		prev := 0
		for range n {
			d, err := binary.ReadUvarint(br)
			if err != nil {
				return played, errBadReplay
			}
			prev += int(d)
			rows = append(rows, prev)
		}
		for _, c := range cols {
			if raw, err = readN(br, raw, int(n)*9); err != nil {
				return played, errBadReplay
			}
			c.Numbers, c.Missing = c.Numbers[:0], c.Missing[:0]
			for i := range int(n) {
				c.Numbers = append(c.Numbers, math.Float64frombits(binary.LittleEndian.Uint64(raw[8*i:])))
			}
			for _, m := range raw[8*n:] {
				c.Missing = append(c.Missing, Reason(m))
			}
			if !textKind(c.Kind) {
				continue
			}
			c.Texts = c.Texts[:0]
			for range n {
				l, err := binary.ReadUvarint(br)
				if err != nil || l > maxCellBytes {
					return played, errBadReplay
				}
				if raw, err = readN(br, raw, int(l)); err != nil {
					return played, errBadReplay
				}
				c.Texts = append(c.Texts, c.keepBytes(raw))
			}
		}
		if err := each(rows, out); err != nil {
			return played, err
		}
		played++
		total += len(rows)
	}
}

// maxCellBytes bounds a text read back from a replay.
const maxCellBytes = 1 << 26

// readN reads n bytes into buf's storage.
func readN(br *bufio.Reader, buf []byte, n int) ([]byte, error) {
	if cap(buf) < n {
		buf = make([]byte, n)
	}
	buf = buf[:n]
	_, err := io.ReadFull(br, buf)
	return buf, err
}

// textKind reports the kinds whose chunk columns hold texts.
func textKind(k Kind) bool { return k == YesNo || k == Category || k == Text }

// keepBytes is keep for a text given as bytes, allocating only for a
// text not seen before.
func (c *chunkColumn) keepBytes(b []byte) string {
	if k, ok := c.intern[string(b)]; ok {
		return k
	}
	return c.keep(string(b))
}
