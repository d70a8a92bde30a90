package delimited

import (
	"bufio"
	"bytes"
	"context"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"io"
	"os"
	"slices"
	"unsafe"

	"slopewise/internal/io/table"
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
// A chunk is framed as its length (uvarint), its bytes, and their
// CRC-32C (4 bytes), so that a copy damaged on disk is found rather than
// read. Its bytes are: the row count n (uvarint); n row numbers
// (uvarints, each the step from the row before); then for each column n
// numbers (their 8 bytes each in this machine's order: the file never
// leaves the process), n reasons (a byte each) and, for a column of
// texts, n text numbers (uvarints: the text's place in the first pass's
// table of the column's texts plus one, or 0 followed by the text's
// length and bytes for a text past that table's limit).
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
	texts [][]string // by column, the texts numbered in the file
}

// maxReplayBytes bounds a replay file (about 14 million rows of a dozen
// columns); a pass that would write more gives the replay up, and the
// later passes parse the text. The bound matters where the temporary
// folder lives in memory (a tmpfs /tmp).
const maxReplayBytes = 1 << 30

// newReplay starts a replay file in the system's temporary folder; nil
// when it cannot be made.
func newReplay(names []string, size int) *replay {
	f, path, err := createReplayFile()
	if err != nil {
		return nil
	}
	return &replay{names: slices.Clone(names), size: size, f: f, path: path, w: bufio.NewWriterSize(f, 1<<20)}
}

// matches reports whether a pass over names in chunks of size can be
// replayed.
func (r *replay) matches(names []string, size int) bool {
	return r != nil && r.done && r.size == size && slices.Equal(r.names, names)
}

// record appends a chunk; false when the replay has to be given up.
func (r *replay) record(rows []int, cols []*chunkColumn) bool {
	b := r.buf[:0]
	b = append(b, make([]byte, binary.MaxVarintLen64)...) // room for the length
	b = binary.AppendUvarint(b, uint64(len(rows)))
	prev := 0
	for _, row := range rows {
		b = binary.AppendUvarint(b, uint64(row-prev))
		prev = row
	}
	for _, c := range cols {
		b = append(b, floatBytes(c.Numbers)...)
		b = append(b, reasonBytes(c.Missing)...)
		if textKind(c.Kind) {
			for i, id := range c.ids {
				b = binary.AppendUvarint(b, uint64(id))
				if id == 0 {
					b = binary.AppendUvarint(b, uint64(len(c.Texts[i])))
					b = append(b, c.Texts[i]...)
				}
			}
		}
	}
	// The length goes just before the chunk's bytes, in the room left.
	body := b[binary.MaxVarintLen64:]
	var head [binary.MaxVarintLen64]byte
	h := binary.PutUvarint(head[:], uint64(len(body)))
	start := binary.MaxVarintLen64 - h
	copy(b[start:], head[:h])
	b = binary.LittleEndian.AppendUint32(b, crc32.Checksum(body, castagnoli))
	r.buf = b
	b = b[start:]
	r.rows += len(rows)
	r.bytes += int64(len(b))
	if r.bytes > maxReplayBytes {
		return false
	}
	_, err := r.w.Write(b)
	return err == nil
}

// floatBytes is xs's memory as bytes.
func floatBytes(xs []float64) []byte {
	if len(xs) == 0 {
		return nil
	}
	return unsafe.Slice((*byte)(unsafe.Pointer(&xs[0])), 8*len(xs))
}

// reasonBytes is rs's memory as bytes (a Reason is one byte).
func reasonBytes(rs []table.Reason) []byte {
	if len(rs) == 0 {
		return nil
	}
	return unsafe.Slice((*byte)(unsafe.Pointer(&rs[0])), len(rs))
}

// finish marks the replay complete after a first pass that ended well,
// keeping the columns' tables of texts.
func (r *replay) finish(cols []*chunkColumn) bool {
	if r.w.Flush() != nil {
		return false
	}
	for _, c := range cols {
		r.texts = append(r.texts, c.texts)
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
func (r *replay) play(ctx context.Context, cols []*chunkColumn, out []*table.Column, each func(rows []int, cols []*table.Column) error) (played int, err error) {
	if _, err := r.f.Seek(0, io.SeekStart); err != nil {
		return 0, errBadReplay
	}
	br := bufio.NewReaderSize(r.f, 1<<20)
	var rows []int
	var frame, raw []byte
	var cr bytes.Reader
	total, last := 0, 0
	for {
		if err := ctx.Err(); err != nil {
			return played, err
		}
		size, err := binary.ReadUvarint(br)
		if err == io.EOF && total == r.rows {
			return played, nil
		}
		if err != nil || size > maxChunkBytes {
			return played, errBadReplay
		}
		if frame, err = readN(br, frame, int(size)+4); err != nil {
			return played, errBadReplay
		}
		body := frame[:size]
		if crc32.Checksum(body, castagnoli) != binary.LittleEndian.Uint32(frame[size:]) {
			return played, errBadReplay
		}
		cr.Reset(body)
		n, err := binary.ReadUvarint(&cr)
		// Every chunk but the last is full, so that a pass that goes on
		// after the chunks given counts them right.
		if err != nil || n == 0 || n > uint64(r.size) || n < uint64(r.size) && total+int(n) != r.rows {
			return played, errBadReplay
		}
		// Row numbers (from 1) rise strictly, within a chunk and from one
		// chunk to the next.
		rows = rows[:0]
		prev := 0
		for range n {
			d, err := binary.ReadUvarint(&cr)
			if err != nil || d == 0 || d > 1<<40 {
				return played, errBadReplay
			}
			prev += int(d)
			rows = append(rows, prev)
		}
		if rows[0] <= last {
			return played, errBadReplay
		}
		last = prev
		for j, c := range cols {
			c.Numbers = slices.Grow(c.Numbers[:0], int(n))[:n]
			c.Missing = slices.Grow(c.Missing[:0], int(n))[:n]
			if _, err := io.ReadFull(&cr, floatBytes(c.Numbers)); err != nil {
				return played, errBadReplay
			}
			if _, err := io.ReadFull(&cr, reasonBytes(c.Missing)); err != nil {
				return played, errBadReplay
			}
			if !textKind(c.Kind) {
				continue
			}
			c.Texts = c.Texts[:0]
			texts := r.texts[j]
			for range n {
				id, err := binary.ReadUvarint(&cr)
				switch {
				case err != nil || id > uint64(len(texts)):
					return played, errBadReplay
				case id > 0:
					c.Texts = append(c.Texts, texts[id-1])
					continue
				}
				l, err := binary.ReadUvarint(&cr)
				if err != nil || l > uint64(cr.Len()) {
					return played, errBadReplay
				}
				if raw, err = readN(&cr, raw, int(l)); err != nil {
					return played, errBadReplay
				}
				c.Texts = append(c.Texts, string(raw))
			}
		}
		if cr.Len() != 0 {
			return played, errBadReplay
		}
		if err := each(rows, out); err != nil {
			return played, err
		}
		played++
		total += len(rows)
	}
}

// castagnoli is the CRC-32C table (hardware-assisted on common CPUs).
var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// maxChunkBytes bounds a chunk read back from a replay.
const maxChunkBytes = 1 << 30

// readN reads n bytes into buf's storage.
func readN(r io.Reader, buf []byte, n int) ([]byte, error) {
	if cap(buf) < n {
		buf = make([]byte, n)
	}
	buf = buf[:n]
	_, err := io.ReadFull(r, buf)
	return buf, err
}

// textKind reports the kinds whose chunk columns hold texts.
func textKind(k table.Kind) bool { return k == table.YesNo || k == table.Category || k == table.Text }
