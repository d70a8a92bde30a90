package xlsx

import (
	"bufio"
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
	"unicode/utf8"

	"slopewise/internal/io/table"
)

// sheetStream reads a worksheet part row by row with a token decoder, so
// memory stays flat however long the sheet is.
//
// It does the work of excelize's row iterator (Rows/Columns) but keeps
// what that iterator drops and the reader needs: each cell's type (an
// error value is not text), its style (a number shown as a date is a
// date) and whether it holds a formula without a saved result. Values are
// read as stored, never as displayed.
type sheetStream struct {
	cellReader
	Body  io.ReadCloser
	dec   *xml.Decoder
	cells []table.RawCell
	done  bool
}

// cellReader turns a cell's parts into a table.RawCell, for both worksheet
// readers: the workbook, its shared strings, and the row being read.
type cellReader struct {
	pkg *Package
	sst []string
	row int
}

func NewSheetStream(p *Package, part string) (*sheetStream, error) {
	sst, err := ReadSharedStrings(p)
	if err != nil {
		return nil, err
	}
	rc, err := p.OpenPart(part, p.Limit)
	if err != nil {
		return nil, err
	}
	return &sheetStream{cellReader: cellReader{pkg: p, sst: sst}, Body: rc, dec: NewXMLDecoder(&textRuns{r: rc, path: p.Path, part: part})}, nil
}

// maxTextRun bounds a run of characters without markup in a part read
// with encoding/xml, which gathers a whole run of text before handing it
// over: a cell's text is at most maxCellChars characters of at most four
// bytes, and entities make it longer still in the file, so a run past a
// megabyte is no cell of a spreadsheet.
const maxTextRun = 1 << 20

// textRuns passes a part through, failing when it holds a run of more
// than maxTextRun bytes without a '<'.
type textRuns struct {
	r          io.Reader
	run        int
	path, part string
}

func (t *textRuns) Read(b []byte) (int, error) {
	n, err := t.r.Read(b)
	if i := bytes.LastIndexByte(b[:n], '<'); i >= 0 {
		t.run = n - i - 1
	} else {
		t.run += n
	}
	if t.run > maxTextRun {
		return n, &table.Error{Path: t.path, Cause: table.ErrUnusual, Detail: fmt.Sprintf("the part %s holds a text of more than %s without markup; a cell holds at most %d characters", t.part, ByteSize(maxTextRun), table.MaxCellChars)}
	}
	return n, err
}

func NewXMLDecoder(r io.Reader) *xml.Decoder {
	return xml.NewDecoder(bufio.NewReaderSize(r, 1<<16))
}

// Close closes the part and the workbook file it was read from.
func (s *sheetStream) Close() error {
	return errors.Join(s.Body.Close(), s.pkg.Close())
}

// damaged reports a broken worksheet at the current row.
func (s *sheetStream) damaged(err error) error {
	return &table.Error{Path: s.pkg.Path, Cell: fmt.Sprintf("row %d", s.row), Cause: table.ErrDamaged, Underlying: err}
}

// Next implements table.RowSource.
func (s *sheetStream) Next() (int, []table.RawCell, error) {
	for !s.done {
		tok, err := s.dec.RawToken()
		if err == io.EOF {
			s.done = true
			break
		}
		if err != nil {
			return 0, nil, s.damaged(err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			if t.Name.Local != "row" {
				continue
			}
			num := s.row + 1
			if num > table.MaxRows {
				return 0, nil, s.tooManyRows()
			}
			if v := Attr(t, "r"); v != "" {
				n, err := strconv.Atoi(v)
				if err != nil || n < 1 || n > 1048576 {
					return 0, nil, &table.Error{Path: s.pkg.Path, Cell: fmt.Sprintf("after row %d", s.row), Cause: table.ErrUnusual, Detail: fmt.Sprintf("a row is numbered %q, which is not a row of a sheet (1 to 1,048,576)", v)}
				}
				num = n
			}
			s.row = num
			if err := s.readRow(); err != nil {
				return 0, nil, err
			}
			if len(s.cells) > 0 {
				return s.row, s.cells, nil
			}
		case xml.EndElement:
			if t.Name.Local == "sheetData" {
				s.done = true
			}
		}
	}
	return 0, nil, io.EOF
}

// readRow reads the cells of the current row up to </row>.
func (s *sheetStream) readRow() error {
	s.cells = s.cells[:0]
	col := -1
	for {
		tok, err := s.dec.RawToken()
		if err != nil {
			if err == io.EOF {
				err = io.ErrUnexpectedEOF
			}
			return s.damaged(err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			if t.Name.Local != "c" {
				continue
			}
			col++
			if ref := Attr(t, "r"); ref != "" {
				c, ok := RefColumn(ref)
				if !ok {
					return &table.Error{Path: s.pkg.Path, Cell: fmt.Sprintf("row %d", s.row), Cause: table.ErrUnusual, Detail: fmt.Sprintf("a cell is named %q, which is not a cell of a sheet", truncate(ref, 40))}
				}
				col = c
			}
			if col >= table.MaxColumns {
				return s.tooManyColumns()
			}
			c, keep, err := s.readCell(t, col)
			if err != nil {
				return err
			}
			if keep {
				s.cells = append(s.cells, c)
			}
		case xml.EndElement:
			if t.Name.Local == "row" {
				return nil
			}
		}
	}
}

// readCell reads one <c> element.
func (s *sheetStream) readCell(start xml.StartElement, col int) (table.RawCell, bool, error) {
	typ := Attr(start, "t")
	style := -1
	if v := Attr(start, "s"); v != "" {
		style, _ = strconv.Atoi(v)
	}
	var value, inline strings.Builder
	var hasV, hasF bool
	depth, inT, inPhonetic := 0, false, false
	var into *strings.Builder
	for {
		tok, err := s.dec.RawToken()
		if err != nil {
			if err == io.EOF {
				err = io.ErrUnexpectedEOF
			}
			return table.RawCell{}, false, s.damaged(err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			depth++
			switch t.Name.Local {
			case "v":
				hasV, into = true, &value
			case "f":
				hasF = true
			case "rPh":
				inPhonetic = true
			case "t":
				if !inPhonetic {
					inT, into = true, &inline
				}
			}
		case xml.EndElement:
			if depth == 0 {
				if t.Name.Local != "c" {
					return table.RawCell{}, false, s.damaged(fmt.Errorf("unexpected </%s>", t.Name.Local))
				}
				return s.cell(col, typ, style, value.String(), inline.String(), hasV, hasF)
			}
			depth--
			switch t.Name.Local {
			case "v":
				into = nil
			case "t":
				if inT {
					inT, into = false, nil
				}
			case "rPh":
				inPhonetic = false
			}
		case xml.CharData:
			if into != nil && into.Len() <= 4*table.MaxCellChars {
				into.Write(t)
			}
		}
	}
}

// cell turns a cell's parts into a table.RawCell; keep is false for cells with
// nothing in them (a styled empty cell).
//
// An empty <v></v> or <v/> is no value: openpyxl writes every formula so,
// and xlsxwriter a formula given an empty result (observed in the files
// of testdata/interop). Only a text result (t="str") may be empty text.
// A formula cell's value is the one Slopewise calculated, when it did
// (formulas.go); else the saved result, unless there is none or the
// workbook says its saved results are out of date (fullCalcOnLoad), when
// the cell is a cellNoValue and is logged for calculation.
func (s *cellReader) cell(col int, typ string, style int, v, inline string, hasV, hasF bool) (table.RawCell, bool, error) {
	if hasV && typ != "str" && typ != "inlineStr" && strings.TrimSpace(v) == "" {
		hasV = false
	}
	if err := s.checkText(col, v, inline); err != nil {
		return table.RawCell{}, false, err
	}
	c := table.RawCell{Col: col}
	if hasF {
		key := cellKey{row: int32(s.row), col: int32(col)}
		switch cv, ok := s.pkg.computed[key]; {
		case ok:
			c.Formula = table.FormulaComputed
			if hasV && s.pkg.staleResults {
				c.Formula = table.FormulaRecomputed
			}
			typ, v, inline, hasV = cv.typ, cv.v, "", true
		case !hasV && typ != "inlineStr":
			c.Formula = table.FormulaMissing
		case s.pkg.staleResults:
			c.Formula = table.FormulaStale
		default:
			c.Formula = table.FormulaSaved
		}
		if c.Formula == table.FormulaMissing || c.Formula == table.FormulaStale {
			s.pkg.logFormula(key)
			c.Type = table.CellNoValue
			return c, true, nil
		}
	}
	switch typ {
	case "s":
		if !hasV {
			return c, false, nil
		}
		i, err := strconv.Atoi(strings.TrimSpace(v))
		if err != nil || i < 0 || i >= len(s.sst) {
			return c, false, s.cellUnusual(col, fmt.Sprintf("the cell names shared text number %q, but the workbook's table of shared text has %d entries", v, len(s.sst)))
		}
		c.Type, c.Text = table.CellText, s.sst[i]
	case "inlineStr":
		c.Type, c.Text = table.CellText, inline
		if inline == "" && hasV {
			c.Text = v
		}
	case "str":
		if !hasV {
			return c, false, nil
		}
		c.Type, c.Text = table.CellText, v
	case "b":
		if !hasV {
			return c, false, nil
		}
		c.Type = table.CellBool
		if strings.TrimSpace(v) == "1" {
			c.Num, c.Text = 1, "TRUE"
		} else {
			c.Num, c.Text = 0, "FALSE"
		}
	case "e":
		if !hasV {
			return c, false, nil
		}
		c.Type, c.Text = table.CellError, v
	case "d":
		if !hasV {
			return c, false, nil
		}
		n, ok := table.ParseDate(strings.TrimSpace(v))
		if !ok {
			c.Type, c.Text = table.CellText, v
			break
		}
		c.Type, c.Num, c.Date = table.CellNumber, n, true
	case "", "n":
		if !hasV {
			return c, false, nil
		}
		n, err := parseValue(strings.TrimSpace(v))
		if err != nil {
			return c, false, s.cellUnusual(col, fmt.Sprintf("the cell is stored as a number but holds %q", truncate(v, 40)))
		}
		c.Type, c.Num = table.CellNumber, n
		if style >= 0 && style < len(s.pkg.dateXf) && s.pkg.dateXf[style] {
			c.Date = true
			if s.pkg.date1904 {
				c.Num += table.Date1904Offset
			}
		}
	default:
		return c, false, s.cellUnusual(col, fmt.Sprintf("the cell has the type %q, which is none of the types a workbook may use", truncate(typ, 40)))
	}
	return c, true, nil
}

// parseValue reads a <v> number: plain decimals on the fast path, which
// gives strconv.ParseFloat's value (plainDecimal), the rest by ParseFloat.
func parseValue(v string) (float64, error) {
	if v != "" {
		if n, ok := table.PlainDecimal(v, false); ok {
			return n, nil
		}
	}
	return strconv.ParseFloat(v, 64)
}

func (s *cellReader) tooManyRows() error {
	return &table.Error{Path: s.pkg.Path, Cell: fmt.Sprintf("after row %d", s.row), Cause: table.ErrUnusual, Detail: fmt.Sprintf("the sheet has more than %d rows, the most a sheet can hold", table.MaxRows)}
}

func (s *cellReader) tooManyColumns() error {
	return &table.Error{Path: s.pkg.Path, Cell: fmt.Sprintf("row %d", s.row), Cause: table.ErrUnusual, Detail: fmt.Sprintf("the row has a cell past column XFD, the last of the %d columns a sheet can hold", table.MaxColumns)}
}

// checkText refuses a cell with more characters than a cell can hold.
func (s *cellReader) checkText(col int, texts ...string) error {
	for _, t := range texts {
		if len(t) > table.MaxCellChars && utf8.RuneCountInString(t) > table.MaxCellChars {
			return s.cellUnusual(col, fmt.Sprintf("the cell holds more than %d characters, the most a cell can hold", table.MaxCellChars))
		}
	}
	return nil
}

// cellUnusual reports a cell that no spreadsheet program writes: the
// package is sound, so it is not called damaged.
func (s *cellReader) cellUnusual(col int, what string) error {
	return &table.Error{Path: s.pkg.Path, Cell: fmt.Sprintf("cell %s%d", table.ColumnLetter(col), s.row), Cause: table.ErrUnusual, Detail: what}
}

// truncate shortens s for a message.
func truncate(s string, n int) string {
	if len(s) <= n {
		return s
	}
	for n > 0 && !utf8.RuneStart(s[n]) {
		n--
	}
	return s[:n] + "…"
}

func Attr(t xml.StartElement, name string) string {
	for _, a := range t.Attr {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

// RefColumn returns the 0-based column of a cell reference such as "AB12".
func RefColumn(ref string) (int, bool) {
	col, i := 0, 0
	for ; i < len(ref); i++ {
		c := ref[i] | 0x20
		if c < 'a' || c > 'z' {
			break
		}
		col = col*26 + int(c-'a'+1)
		if col > 16384 {
			return 0, false
		}
	}
	if i == 0 {
		return 0, false
	}
	return col - 1, true
}

// openSharedStrings opens the shared string table; nil and no error
// when the workbook has none.
func openSharedStrings(p *Package) (io.ReadCloser, error) {
	if p.sstPart == "" {
		return nil, nil
	}
	if f := p.File(p.sstPart); f != nil && f.UncompressedSize64 > uint64(p.sstBudget()) {
		return nil, &table.Error{Path: p.Path, Cause: table.ErrTooLarge, Detail: fmt.Sprintf("its shared text (%s) unpacks to %s, more than %s (16 times the file's size, at least 64 MiB), far more than genuine text takes", p.sstPart, ByteSize(int64(min(f.UncompressedSize64, 1<<62))), ByteSize(p.sstBudget()))}
	}
	rc, err := p.OpenPart(p.sstPart, p.Limit)
	if err != nil {
		if p.File(p.sstPart) == nil {
			return nil, nil
		}
		return nil, err
	}
	return rc, nil
}

// longShared refuses a shared text longer than a cell can hold.
func longShared(p *Package, i int) error {
	return &table.Error{Path: p.Path, Cause: table.ErrUnusual, Detail: fmt.Sprintf("shared text number %d in %s holds more than %d characters, the most a cell can hold", i, p.sstPart, table.MaxCellChars)}
}

// sstBudget bounds the unpacked size of the shared text: 16 times the
// file's size, between 64 MiB and 1 GiB. Text in a workbook packs to a
// fifth or a tenth of its size (common practice), so genuine shared
// text stays well under it, while a crafted part that inflates a
// thousandfold is refused before it is read.
func (p *Package) sstBudget() int64 {
	return min(max(16*p.size, 64<<20), 1<<30)
}

// ReadSharedStrings reads the shared string table: each <si> is plain
// text in <t>, or rich text runs <r><t>, with phonetic hints <rPh> left
// out (ECMA-376 Part 1, section 18.4).
func ReadSharedStrings(p *Package) ([]string, error) {
	rc, err := openSharedStrings(p)
	if rc == nil {
		return nil, err
	}
	defer rc.Close()
	dec := NewXMLDecoder(&textRuns{r: rc, path: p.Path, part: p.sstPart})
	var out []string
	var cur strings.Builder
	inSI, inT, inPhonetic := false, false, false
	for {
		tok, err := dec.RawToken()
		if err == io.EOF {
			return out, nil
		}
		if err != nil {
			return nil, &table.Error{Path: p.Path, Cause: table.ErrDamaged, Detail: "the shared text table cannot be read", Underlying: err}
		}
		switch t := tok.(type) {
		case xml.StartElement:
			switch t.Name.Local {
			case "si":
				inSI = true
				cur.Reset()
			case "rPh":
				inPhonetic = true
			case "t":
				inT = inSI && !inPhonetic
			}
		case xml.EndElement:
			switch t.Name.Local {
			case "si":
				inSI = false
				if cur.Len() > table.MaxCellChars && utf8.RuneCountInString(cur.String()) > table.MaxCellChars {
					return nil, longShared(p, len(out))
				}
				out = append(out, cur.String())
			case "rPh":
				inPhonetic = false
			case "t":
				inT = false
			}
		case xml.CharData:
			if inT && cur.Len() <= 4*table.MaxCellChars {
				cur.Write(t)
			}
		}
	}
}
