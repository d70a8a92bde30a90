package delimited

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"unsafe"

	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
)

// csvScanner reads a delimited text file record by record as encoding/csv
// does with the options textSource sets (no lazy quotes, no comments,
// any number of fields; Go 1.26 source, encoding/csv/reader.go, readLine
// and readRecord, whose logic it follows line for line), but hands out
// each field as a view of its record buffer instead of a new string, so
// that reading a record allocates nothing. The cells' texts are valid
// until the next call of Next; a caller keeps a text by copying it.
//
// It is the text source of streamed reads, which pass over a file several
// times. A record that encoding/csv would refuse is returned as an error
// wrapping errScannerRefused, so that the caller reads the file with
// textSource instead and reports encoding/csv's own error.
type csvScanner struct {
	path  string
	f     *os.File
	r     *bufio.Reader
	delim byte

	raw       []byte // a line longer than the reader's buffer
	record    []byte
	ends      []int // end of each field in record
	fieldLine []int // line each field starts on
	numLine   int
	cells     []table.RawCell
	row       int
	endLine   int
}

// errScannerRefused marks a record that the scanner leaves to encoding/csv.
var errScannerRefused = errors.New("the fast text reader leaves this record to the standard one")

// OpenScanner opens a text file whose format has been sniffed.
func OpenScanner(path string, tf *table.TextFormat) (*csvScanner, error) {
	if tf.Delimiter >= 0x80 {
		return nil, fmt.Errorf("%w: delimiter %q", errScannerRefused, tf.Delimiter)
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, sniff.StatError(path, err)
	}
	r, err := decodedReader(f, tf.Encoding)
	if err != nil {
		f.Close()
		return nil, &table.Error{Path: path, Underlying: err}
	}
	br, ok := r.(*bufio.Reader)
	if !ok {
		br = bufio.NewReaderSize(r, 1<<16)
	}
	return &csvScanner{path: path, f: f, r: br, delim: byte(tf.Delimiter)}, nil
}

func (s *csvScanner) Close() error { return s.f.Close() }

func (s *csvScanner) readLine() ([]byte, error) {
	line, err := s.r.ReadSlice('\n')
	if err == bufio.ErrBufferFull {
		s.raw = append(s.raw[:0], line...)
		for err == bufio.ErrBufferFull {
			line, err = s.r.ReadSlice('\n')
			s.raw = append(s.raw, line...)
		}
		line = s.raw
	}
	if n := len(line); n > 0 && err == io.EOF {
		err = nil
		if line[n-1] == '\r' {
			line = line[:n-1]
		}
	}
	s.numLine++
	if n := len(line); n >= 2 && line[n-2] == '\r' && line[n-1] == '\n' {
		line[n-2] = '\n'
		line = line[:n-1]
	}
	return line, err
}

func lengthNL(b []byte) int {
	if len(b) > 0 && b[len(b)-1] == '\n' {
		return 1
	}
	return 0
}

// readRecord reads one record into s.record, s.ends and s.fieldLine.
func (s *csvScanner) readRecord() error {
	var line []byte
	var errRead error
	for errRead == nil {
		line, errRead = s.readLine()
		if errRead == nil && len(line) == lengthNL(line) {
			line = nil
			continue
		}
		break
	}
	if errRead == io.EOF {
		return errRead
	}
	s.record, s.ends, s.fieldLine = s.record[:0], s.ends[:0], s.fieldLine[:0]
	posLine := s.numLine
	d := s.delim
	refused := func() error {
		return fmt.Errorf("%w: a quote out of place on line %d", errScannerRefused, s.numLine)
	}
parseField:
	for {
		if len(line) == 0 || line[0] != '"' {
			i := bytes.IndexByte(line, d)
			field := line
			if i >= 0 {
				field = field[:i]
			} else {
				field = field[:len(field)-lengthNL(field)]
			}
			if bytes.IndexByte(field, '"') >= 0 {
				return refused()
			}
			s.record = append(s.record, field...)
			s.ends = append(s.ends, len(s.record))
			s.fieldLine = append(s.fieldLine, posLine)
			if len(s.ends) > table.MaxTextColumns {
				return &table.Error{Cell: fmt.Sprintf("line %d", posLine), Cause: table.ErrTooManyColumns, Detail: fmt.Sprintf("the line has more than %d values, the most Slopewise reads from a text file", table.MaxTextColumns)}
			}
			if i >= 0 {
				line = line[i+1:]
				continue parseField
			}
			break parseField
		}
		fieldLine := posLine
		line = line[1:]
		for {
			i := bytes.IndexByte(line, '"')
			switch {
			case i >= 0:
				s.record = append(s.record, line[:i]...)
				line = line[i+1:]
				switch {
				case len(line) > 0 && line[0] == '"':
					s.record = append(s.record, '"')
					line = line[1:]
				case len(line) > 0 && line[0] == d:
					line = line[1:]
					s.ends = append(s.ends, len(s.record))
					s.fieldLine = append(s.fieldLine, fieldLine)
					continue parseField
				case lengthNL(line) == len(line):
					s.ends = append(s.ends, len(s.record))
					s.fieldLine = append(s.fieldLine, fieldLine)
					break parseField
				default:
					return refused()
				}
			case len(line) > 0:
				s.record = append(s.record, line...)
				if errRead != nil {
					break parseField
				}
				line, errRead = s.readLine()
				if len(line) > 0 {
					posLine++
				}
				if errRead == io.EOF {
					errRead = nil
				}
			default:
				if errRead == nil {
					return refused()
				}
				s.ends = append(s.ends, len(s.record))
				s.fieldLine = append(s.fieldLine, fieldLine)
				break parseField
			}
		}
	}
	return errRead
}

// Next implements table.RowSource, numbering rows as textSource does.
func (s *csvScanner) Next() (int, []table.RawCell, error) {
	line, err := s.advance()
	if err != nil {
		return 0, nil, err
	}
	s.cells = s.cells[:0]
	prev := 0
	for j, end := range s.ends {
		if end > prev {
			s.cells = append(s.cells, table.RawCell{Col: j, Type: table.CellText, Text: unsafe.String(&s.record[prev], end-prev), Line: line})
		}
		prev = end
	}
	return s.row, s.cells, nil
}

// advance reads the next record into s.record and s.ends (field j is
// s.record[s.ends[j-1]:s.ends[j]]) and numbers its row (s.row), as Next
// gives them; line is the line the record starts on.
func (s *csvScanner) advance() (line int, err error) {
	if err := s.readRecord(); err != nil {
		if err == io.EOF {
			return 0, io.EOF
		}
		var pe *csv.ParseError
		if errors.Is(err, errScannerRefused) || errors.As(err, &pe) {
			return 0, err
		}
		return 0, &table.Error{Path: s.path, Cause: table.ErrNotText, Underlying: err}
	}
	line = s.fieldLine[0]
	if s.endLine > 0 && line > s.endLine+1 {
		s.row += line - s.endLine - 1
	} else if s.endLine == 0 && line > 1 {
		s.row += line - 1
	}
	s.row++
	last := len(s.ends) - 1
	start := 0
	if last > 0 {
		start = s.ends[last-1]
	}
	s.endLine = s.fieldLine[last] + bytes.Count(s.record[start:s.ends[last]], []byte{'\n'})
	return line, nil
}

// TextRows marks the scanner as a source of text rows whose texts live
// only until the next row.
func (s *csvScanner) TextRows() bool { return true }
