package delimited

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"unicode/utf8"

	"golang.org/x/text/encoding/charmap"
	"golang.org/x/text/encoding/unicode"

	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
)

// sampleSize is how much of a text file is looked at to find its
// delimiter and decimal separator.
const sampleSize = 64 << 10

// Byte order marks (The Unicode Standard, section 23.8).
var (
	bomUTF8    = []byte{0xEF, 0xBB, 0xBF}
	bomUTF16LE = []byte{0xFF, 0xFE}
	bomUTF16BE = []byte{0xFE, 0xFF}
)

// textSource reads a delimited text file record by record.
type textSource struct {
	path    string
	f       *os.File
	r       *csv.Reader
	cells   []table.RawCell
	row     int
	endLine int
}

// openText sniffs a text file's encoding, delimiter and decimal separator
// and opens it for reading.
func openText(path string) (table.RowSource, *table.TextFormat, error) {
	tf, err := SniffText(path)
	if err != nil {
		return nil, nil, err
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, sniff.StatError(path, err)
	}
	r, err := decodedReader(f, tf.Encoding)
	if err != nil {
		f.Close()
		return nil, nil, &table.Error{Path: path, Underlying: err}
	}
	return &textSource{path: path, f: f, r: newCSVReader(r, tf.Delimiter)}, tf, nil
}

func newCSVReader(r io.Reader, delim rune) *csv.Reader {
	cr := csv.NewReader(r)
	cr.Comma = delim
	cr.FieldsPerRecord = -1
	cr.LazyQuotes = false
	cr.ReuseRecord = true
	return cr
}

// decodedReader skips the byte order mark and decodes to UTF-8.
func decodedReader(f *os.File, encoding string) (io.Reader, error) {
	br := bufio.NewReaderSize(f, 1<<16)
	head, _ := br.Peek(3)
	switch encoding {
	case "UTF-16LE", "UTF-16BE":
		order := unicode.LittleEndian
		if encoding == "UTF-16BE" {
			order = unicode.BigEndian
		}
		return unicode.UTF16(order, unicode.ExpectBOM).NewDecoder().Reader(br), nil
	case "Windows-1252":
		return charmap.Windows1252.NewDecoder().Reader(br), nil
	}
	if bytes.HasPrefix(head, bomUTF8) {
		if _, err := br.Discard(3); err != nil {
			return nil, err
		}
	}
	return br, nil
}

// undefined1252 are the five bytes that Windows-1252 leaves unassigned
// (the code page's published table, from memory).
var undefined1252 = [256]bool{0x81: true, 0x8D: true, 0x8F: true, 0x90: true, 0x9D: true}

// SniffText decides the encoding by reading the whole file once (a file
// is UTF-8 only if all of it is), then the delimiter and decimal separator
// from the start of it.
func SniffText(path string) (*table.TextFormat, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, sniff.StatError(path, err)
	}
	defer f.Close()
	tf := &table.TextFormat{Encoding: "UTF-8"}
	br := bufio.NewReaderSize(f, 1<<16)
	head, _ := br.Peek(3)
	switch {
	case bytes.HasPrefix(head, bomUTF16LE):
		tf.Encoding = "UTF-16LE"
	case bytes.HasPrefix(head, bomUTF16BE):
		tf.Encoding = "UTF-16BE"
	default:
		if err := scanEncoding(path, br, tf); err != nil {
			return nil, err
		}
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		return nil, &table.Error{Path: path, Underlying: err}
	}
	r, err := decodedReader(f, tf.Encoding)
	if err != nil {
		return nil, &table.Error{Path: path, Underlying: err}
	}
	sample, err := io.ReadAll(io.LimitReader(r, sampleSize))
	if err != nil {
		return nil, &table.Error{Path: path, Cause: table.ErrNotText, Underlying: err}
	}
	if len(bytes.TrimSpace(sample)) == 0 {
		return nil, table.Fail(path, table.ErrEmptyFile, "it holds no text")
	}
	if strings.ContainsRune(string(sample), 0) {
		return nil, table.Fail(path, table.ErrNotText, "it contains zero bytes")
	}
	tf.Delimiter = sniffDelimiter(sample, path)
	tf.DecimalComma = tf.Delimiter != ',' && sniffDecimalComma(sample, tf.Delimiter)
	return tf, nil
}

// isASCII reports whether b holds only bytes below 0x80, eight at a time.
func isASCII(b []byte) bool {
	for len(b) >= 8 {
		if binary.LittleEndian.Uint64(b)&0x8080808080808080 != 0 {
			return false
		}
		b = b[8:]
	}
	for _, c := range b {
		if c >= 0x80 {
			return false
		}
	}
	return true
}

// scanEncoding reads the whole file: UTF-8 if every byte sequence is
// valid, else Windows-1252 if no byte is one that code page leaves
// unassigned, else not text. A zero byte means a binary file.
func scanEncoding(path string, br *bufio.Reader, tf *table.TextFormat) error {
	valid := true
	var carry []byte
	buf := make([]byte, 1<<16)
	line := 1
	bad1252 := 0
	var offset int64
	for {
		n, err := br.Read(buf)
		chunk := buf[:n]
		if i := bytes.IndexByte(chunk, 0); i >= 0 {
			return table.Fail(path, table.ErrNotText, fmt.Sprintf("it contains a zero byte at line %d", line+bytes.Count(chunk[:i], []byte{'\n'})))
		}
		if bad1252 == 0 && !isASCII(chunk) {
			for i, c := range chunk {
				if undefined1252[c] {
					bad1252 = line + bytes.Count(chunk[:i], []byte{'\n'})
					break
				}
			}
		}
		line += bytes.Count(chunk, []byte{'\n'})
		if valid {
			data := chunk
			if len(carry) > 0 {
				data = append(carry, chunk...)
			}
			// Keep an incomplete sequence at the end for the next chunk.
			cut := len(data)
			for k := 1; k <= 3 && k <= len(data); k++ {
				if utf8.RuneStart(data[len(data)-k]) {
					if !utf8.FullRune(data[len(data)-k:]) {
						cut = len(data) - k
					}
					break
				}
			}
			if err == io.EOF {
				cut = len(data)
			}
			if !utf8.Valid(data[:cut]) {
				valid = false
			}
			carry = append(carry[:0], data[cut:]...)
		}
		offset += int64(n)
		if err == io.EOF {
			break
		}
		if err != nil {
			return &table.Error{Path: path, Underlying: err}
		}
	}
	if valid && len(carry) > 0 && !utf8.Valid(carry) {
		valid = false
	}
	if valid {
		return nil
	}
	if bad1252 > 0 {
		return table.Fail(path, table.ErrNotText, fmt.Sprintf("it is neither UTF-8 nor Windows-1252; the first byte that fits neither is on line %d", bad1252))
	}
	tf.Encoding = "Windows-1252"
	return nil
}

// sniffDelimiter picks the delimiter that splits the sample's first
// records into the same number of fields, most often and most finely.
func sniffDelimiter(sample []byte, path string) rune {
	best, bestScore := rune(0), 0.0
	for _, d := range []rune{',', ';', '\t', '|'} {
		cr := newCSVReader(bytes.NewReader(sample), d)
		counts := map[int]int{}
		records := 0
		for records < 50 {
			rec, err := cr.Read()
			if err != nil {
				break
			}
			counts[len(rec)]++
			records++
		}
		mode, modeN := 0, 0
		for n, k := range counts {
			if k > modeN || k == modeN && n > mode {
				mode, modeN = n, k
			}
		}
		if records == 0 || mode < 2 {
			continue
		}
		// Consistency first, then the number of fields.
		score := float64(modeN)/float64(records)*100 + float64(min(mode, 99))/100
		if score > bestScore {
			best, bestScore = d, score
		}
	}
	if best != 0 {
		return best
	}
	if strings.EqualFold(filepath.Ext(path), ".tsv") {
		return '\t'
	}
	return ','
}

// sniffDecimalComma reports whether numbers in the sample use a decimal
// comma: more fields look like "12,5" than like "12.5".
func sniffDecimalComma(sample []byte, delim rune) bool {
	cr := newCSVReader(bytes.NewReader(sample), delim)
	comma, dot := 0, 0
	for {
		rec, err := cr.Read()
		if err != nil {
			break
		}
		for _, f := range rec {
			f = table.TrimSpace(f)
			if strings.Count(f, ",") == 1 && !strings.Contains(f, ".") {
				if _, ok := table.ParseNumber(f, true); ok {
					comma++
				}
			}
			if strings.Count(f, ".") == 1 && !strings.Contains(f, ",") {
				if i := strings.IndexByte(f, '.'); len(f)-i-1 != 3 {
					if _, ok := table.ParseNumber(f, false); ok {
						dot++
					}
				}
			}
		}
	}
	return comma > dot
}

// Next implements table.RowSource. The row number counts records as a
// spreadsheet program does when it opens the file, blank lines included.
func (s *textSource) Next() (int, []table.RawCell, error) {
	rec, err := s.r.Read()
	if err == io.EOF {
		return 0, nil, io.EOF
	}
	if err != nil {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			cause := table.ErrBadQuote
			return 0, nil, &table.Error{Path: s.path, Cell: fmt.Sprintf("line %d", pe.StartLine), Cause: cause, Underlying: err}
		}
		return 0, nil, &table.Error{Path: s.path, Cause: table.ErrNotText, Underlying: err}
	}
	line, _ := s.r.FieldPos(0)
	if len(rec) > table.MaxTextColumns {
		return 0, nil, &table.Error{Path: s.path, Cell: fmt.Sprintf("line %d", line), Cause: table.ErrTooManyColumns, Detail: fmt.Sprintf("the line has more than %d values, the most Slopewise reads from a text file", table.MaxTextColumns)}
	}
	if s.endLine > 0 && line > s.endLine+1 {
		s.row += line - s.endLine - 1
	} else if s.endLine == 0 && line > 1 {
		s.row += line - 1
	}
	s.row++
	last, _ := s.r.FieldPos(len(rec) - 1)
	s.endLine = last + strings.Count(rec[len(rec)-1], "\n")
	s.cells = s.cells[:0]
	for j, f := range rec {
		if f == "" {
			continue
		}
		s.cells = append(s.cells, table.RawCell{Col: j, Type: table.CellText, Text: f, Line: line})
	}
	return s.row, s.cells, nil
}

func (s *textSource) Close() error { return s.f.Close() }

// TextRows marks the source as one of text rows; its texts are kept.
func (s *textSource) TextRows() bool { return false }
