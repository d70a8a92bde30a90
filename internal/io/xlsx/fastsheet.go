package xlsx

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"strconv"
	"unicode/utf8"
	"unsafe"

	"slopewise/internal/io/table"
)

// fastSheet reads a worksheet part row by row by scanning its bytes,
// where sheetStream tokenises it with encoding/xml: the same rows and
// cells (both turn a cell's parts into a table.RawCell with cellReader.cell),
// at about fifteen times the speed. It reads what worksheets written by
// spreadsheet programs hold — rows and cells located by their r
// attribute or by position, the cell types, <v> values, formulas with or
// without a cached value, inline and rich-text strings without their
// phonetic runs, the five XML entities and character references, and
// namespace prefixes — and meets anything else (a comment or CDATA
// section, an unknown entity, a character XML does not allow, an element
// it does not expect, a malformed tag or value) by giving up with
// errFastFallback. Read then reads the sheet again with sheetStream,
// which reads it or says what is wrong: the fast reader never guesses
// and never words an error.
type fastSheet struct {
	cellReader
	rc   io.ReadCloser
	buf  []byte
	pos  int // next byte to scan in buf
	end  int // end of the data in buf
	eof  bool
	done bool

	rowEnd  []byte // "</row>" with the document's prefix
	dataEnd []byte // "</sheetData>" likewise
	cells   []table.RawCell
	// searched is how far into the row at pos the search for its end has
	// gone without finding it.
	searched int
	value    []byte // the current cell's <v>, decoded
	inline   []byte // the current cell's text runs, decoded
	scratch  []byte
}

// maxRowBytes bounds the XML of one row held in memory. A row of 16,384
// cells of ordinary values is well under a megabyte; text cells of the
// most characters a cell holds could in theory make one larger, but no
// spreadsheet program writes such rows.
const maxRowBytes = 32 << 20

// errFastFallback is the fast reader giving a sheet back to sheetStream.
var errFastFallback = errors.New("the fast worksheet reader leaves this sheet to the standard one")

func fallback(what string) error { return fmt.Errorf("%w: %s", errFastFallback, what) }

func newFastSheet(p *Package, part string) (*fastSheet, error) {
	sst, err := fastSharedStrings(p)
	if err != nil {
		return nil, err
	}
	rc, err := p.OpenPart(part, p.Limit)
	if err != nil {
		return nil, err
	}
	s := &fastSheet{cellReader: cellReader{pkg: p, sst: sst}, rc: newPrefetcher(rc), buf: make([]byte, 1<<20)}
	if err := s.toSheetData(); err != nil {
		rc.Close()
		return nil, err
	}
	return s, nil
}

// Close closes the part and the workbook file it was read from.
func (s *fastSheet) Close() error {
	return errors.Join(s.rc.Close(), s.pkg.Close())
}

// fill moves the unread bytes to the front and reads more, growing the
// buffer when it is full.
func (s *fastSheet) fill() error {
	if s.eof {
		return io.ErrUnexpectedEOF
	}
	n := copy(s.buf, s.buf[s.pos:s.end])
	s.pos, s.end = 0, n
	if s.end == len(s.buf) {
		s.buf = append(s.buf, make([]byte, len(s.buf))...)
	}
	m, err := io.ReadAtLeast(s.rc, s.buf[s.end:], 1)
	s.end += m
	if err == io.EOF || err == io.ErrUnexpectedEOF {
		s.eof = true
		return nil
	}
	if err != nil {
		return fallback(err.Error())
	}
	return nil
}

// toSheetData skips to what follows the <sheetData> start tag.
func (s *fastSheet) toSheetData() error {
	for {
		i := bytes.Index(s.buf[s.pos:s.end], []byte("sheetData"))
		if i < 0 {
			if s.eof {
				return fallback("no sheetData")
			}
			s.pos = max(s.pos, s.end-64)
			if err := s.fill(); err != nil {
				return err
			}
			continue
		}
		at := s.pos + i
		// Back over a namespace prefix to the '<'.
		lt := at - 1
		for lt >= s.pos && s.buf[lt] != '<' && nameByte(s.buf[lt]) {
			lt--
		}
		gt := bytes.IndexByte(s.buf[at:s.end], '>')
		if lt < s.pos || gt < 0 {
			if s.eof || lt < s.pos && at-s.pos > 64 {
				return fallback("sheetData")
			}
			s.pos = max(lt, s.pos)
			if err := s.fill(); err != nil {
				return err
			}
			continue
		}
		prefix := s.buf[lt+1 : at]
		if s.buf[lt] != '<' || len(prefix) > 0 && prefix[len(prefix)-1] != ':' {
			s.pos = at + len("sheetData")
			continue
		}
		if next := s.buf[at+len("sheetData")]; next != '>' && next != '/' && next != ' ' && next != '\t' && next != '\r' && next != '\n' {
			s.pos = at + len("sheetData")
			continue
		}
		s.rowEnd = append(append([]byte("</"), prefix...), "row>"...)
		s.dataEnd = append(append([]byte("</"), prefix...), "sheetData>"...)
		s.done = s.buf[at+gt-1] == '/'
		s.pos = at + gt + 1
		return nil
	}
}

// nameByte reports the bytes of an XML name that the scanner expects
// (ASCII letters, digits, '_', '-', '.', ':').
func nameByte(c byte) bool {
	return c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_' || c == '-' || c == '.' || c == ':'
}

// Next implements table.RowSource.
func (s *fastSheet) Next() (int, []table.RawCell, error) {
	for !s.done {
		row, err := s.nextRow()
		if err != nil {
			return 0, nil, err
		}
		if row == nil {
			s.done = true
			break
		}
		if err := s.readRow(row); err != nil {
			return 0, nil, err
		}
		if len(s.cells) > 0 {
			return s.row, s.cells, nil
		}
	}
	return 0, nil, io.EOF
}

// nextRow returns the next <row> element whole, or nil at </sheetData>.
func (s *fastSheet) nextRow() ([]byte, error) {
	for {
		i := bytes.IndexByte(s.buf[s.pos:s.end], '<')
		if i < 0 || s.pos+i+1 >= s.end {
			if s.eof {
				return nil, fallback("the sheet ends inside sheetData")
			}
			if i < 0 {
				if !isSpace(s.buf[s.pos:s.end]) {
					return nil, fallback("text between rows")
				}
				s.pos = s.end
			} else {
				s.pos += i
			}
			if err := s.fill(); err != nil {
				return nil, err
			}
			continue
		}
		if !isSpace(s.buf[s.pos : s.pos+i]) {
			return nil, fallback("text between rows")
		}
		start := s.pos + i
		if s.buf[start+1] == '/' {
			if s.end-start < len(s.dataEnd) && !s.eof {
				s.pos = start
				if err := s.fill(); err != nil {
					return nil, err
				}
				continue
			}
			if !bytes.HasPrefix(s.buf[start:s.end], s.dataEnd) {
				return nil, fallback("an end tag in sheetData")
			}
			return nil, nil
		}
		gt := bytes.IndexByte(s.buf[start:s.end], '>')
		if gt < 0 {
			s.pos = start
			if err := s.fill(); err != nil {
				return nil, err
			}
			continue
		}
		name := tagName(s.buf[start+1 : start+gt])
		if string(localName(name)) != "row" {
			return nil, fallback(fmt.Sprintf("<%s> in sheetData", name))
		}
		if s.buf[start+gt-1] == '/' {
			s.pos = start + gt + 1
			return s.buf[start : start+gt+1], nil
		}
		// Search on from where the last search of this row stopped, so
		// that a long row is scanned once, not once a refill.
		from := 0
		if start == s.pos {
			from = min(s.searched, s.end-start)
		}
		j := bytes.Index(s.buf[start+from:s.end], s.rowEnd)
		if j < 0 {
			if s.eof {
				return nil, fallback("unclosed row")
			}
			if s.end-start > maxRowBytes {
				return nil, &table.Error{Path: s.pkg.Path, Cell: fmt.Sprintf("after row %d", s.row), Cause: table.ErrUnusual,
					Detail: fmt.Sprintf("a row's XML is longer than %s; a row holds at most %d cells of %d characters, and no spreadsheet program writes rows this long", ByteSize(maxRowBytes), table.MaxColumns, table.MaxCellChars)}
			}
			s.searched = max(0, s.end-start-len(s.rowEnd)+1)
			s.pos = start
			if err := s.fill(); err != nil {
				return nil, err
			}
			continue
		}
		s.searched = 0
		s.pos = start + from + j + len(s.rowEnd)
		return s.buf[start:s.pos], nil
	}
}

func isSpace(b []byte) bool {
	for _, c := range b {
		if c != ' ' && c != '\t' && c != '\r' && c != '\n' {
			return false
		}
	}
	return true
}

// tagName is the element name at the start of a tag's inside.
func tagName(tag []byte) []byte {
	for i, c := range tag {
		if c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '/' {
			return tag[:i]
		}
	}
	return tag
}

func localName(name []byte) []byte {
	if i := bytes.LastIndexByte(name, ':'); i >= 0 {
		return name[i+1:]
	}
	return name
}

// attrs calls fn with each attribute of a tag's inside (after its name),
// its value decoded; it reports false for a malformed tag.
func attrs(tag []byte, fn func(local, value []byte) bool) bool {
	i := len(tagName(tag))
	for {
		for i < len(tag) && (tag[i] == ' ' || tag[i] == '\t' || tag[i] == '\r' || tag[i] == '\n') {
			i++
		}
		if i >= len(tag) || tag[i] == '/' && i == len(tag)-1 {
			return true
		}
		eq := bytes.IndexByte(tag[i:], '=')
		if eq <= 0 || i+eq+2 > len(tag) {
			return false
		}
		name := tag[i : i+eq]
		for len(name) > 0 && isSpace(name[len(name)-1:]) {
			name = name[:len(name)-1]
		}
		if !validName(name) {
			return false
		}
		q := tag[i+eq+1]
		if q != '"' && q != '\'' {
			return false
		}
		end := bytes.IndexByte(tag[i+eq+2:], q)
		if end < 0 {
			return false
		}
		raw := tag[i+eq+2 : i+eq+2+end]
		wide := false
		for _, c := range raw {
			if c == '&' || c == '<' || c < 0x20 {
				return false // entities, white space to normalise, control characters: left to encoding/xml
			}
			wide = wide || c >= 0x80
		}
		if wide && !validChars(raw) {
			return false
		}
		if !fn(localName(name), raw) {
			return false
		}
		i += eq + 3 + end
	}
}

// validName reports a name made of the bytes the scanner expects, not
// starting with a digit, '-' or '.'.
func validName(name []byte) bool {
	if len(name) == 0 || name[0] >= '0' && name[0] <= '9' || name[0] == '-' || name[0] == '.' {
		return false
	}
	for _, c := range name {
		if !nameByte(c) {
			return false
		}
	}
	return true
}

// validTag reports a well-formed start tag's inside (name, attributes,
// an optional '/') or end tag's (a '/', the name, white space).
func validTag(tag []byte) bool {
	if tag[0] == '/' {
		name := tagName(tag[1:])
		return validName(name) && isSpace(tag[1+len(name):])
	}
	return validName(tagName(tag)) && attrs(tag, func(_, _ []byte) bool { return true })
}

// readRow reads the cells of one <row> element.
func (s *fastSheet) readRow(row []byte) error {
	gt := bytes.IndexByte(row, '>')
	head := row[1:gt]
	num := s.row + 1
	if num > table.MaxRows {
		return s.tooManyRows()
	}
	seen := false // the first r counts, as sheetStream's attr takes it
	ok := attrs(head, func(local, v []byte) bool {
		if string(local) == "r" && !seen {
			seen = true
			n, err := strconv.Atoi(string(v))
			if err != nil || n < 1 || n > 1048576 {
				return false
			}
			num = n
		}
		return true
	})
	if !ok {
		return fallback("row attributes")
	}
	s.row = num
	s.cells = s.cells[:0]
	if head[len(head)-1] == '/' {
		return nil
	}
	body := row[gt+1 : len(row)-len(s.rowEnd)]
	col := -1
	for {
		i := bytes.IndexByte(body, '<')
		if i < 0 {
			if !isSpace(body) {
				return fallback("text in a row")
			}
			return nil
		}
		if !isSpace(body[:i]) {
			return fallback("text in a row")
		}
		body = body[i:]
		gt := bytes.IndexByte(body, '>')
		if gt < 0 || len(body) < 2 {
			return fallback("a broken tag")
		}
		tag := body[1:gt]
		if string(localName(tagName(tag))) != "c" {
			return fallback(fmt.Sprintf("<%s> in a row", tagName(tag)))
		}
		col++
		var typ, ref, style []byte
		if !attrs(tag, func(local, v []byte) bool {
			switch string(local) {
			case "r":
				if ref == nil {
					ref = v
				}
			case "t":
				if typ == nil {
					typ = v
				}
			case "s":
				if style == nil {
					style = v
				}
			}
			return true
		}) {
			return fallback("cell attributes")
		}
		if len(ref) > 0 {
			c, ok := RefColumn(unsafe.String(unsafe.SliceData(ref), len(ref)))
			if !ok {
				return fallback("cell reference")
			}
			col = c
		}
		if col >= table.MaxColumns {
			return s.tooManyColumns()
		}
		st := -1
		if len(style) > 0 {
			st = smallInt(style)
		}
		var rest []byte
		hasV, hasF := false, false
		s.value, s.inline = s.value[:0], s.inline[:0]
		if tag[len(tag)-1] == '/' {
			rest = body[gt+1:]
		} else {
			var err error
			if rest, hasV, hasF, err = s.cellBody(body[gt+1:]); err != nil {
				return err
			}
		}
		body = rest
		c, keep, err := s.cell(col, typeName(typ), st, s.valueString(typ), string(s.inline), hasV, hasF)
		if err != nil {
			return fallback(err.Error())
		}
		if keep {
			s.cells = append(s.cells, c)
		}
	}
}

// typeName returns a cell's type as a string without allocating for the
// types ECMA-376 defines (Part 1, section 18.18.11).
func typeName(typ []byte) string {
	for _, t := range [...]string{"", "n", "s", "str", "inlineStr", "b", "e", "d"} {
		if string(typ) == t {
			return t
		}
	}
	return string(typ)
}

// smallInt reads a style index as strconv.Atoi does, with 0 for what it
// refuses (as sheetStream ignores the error); digits only, or Atoi.
func smallInt(b []byte) int {
	n := 0
	for _, c := range b {
		if c < '0' || c > '9' || n > 1<<40 {
			v, _ := strconv.Atoi(string(b))
			return v
		}
		n = n*10 + int(c-'0')
	}
	if len(b) == 0 {
		return 0
	}
	return n
}

// valueString is the cell's <v> as a string: a view of the scratch
// buffer for the types whose value cell only parses, a copy for the ones
// it keeps as text.
func (s *fastSheet) valueString(typ []byte) string {
	switch string(typ) {
	case "", "n", "b", "s":
		return unsafe.String(unsafe.SliceData(s.value), len(s.value))
	}
	return string(s.value)
}

// cellBody reads a cell's content up to </c>, returning what follows it.
// Text of <v> goes to s.value; text of <t> outside phonetic runs to
// s.inline, as sheetStream.readCell takes them.
func (s *fastSheet) cellBody(b []byte) (rest []byte, hasV, hasF bool, err error) {
	depth := 0
	var into *[]byte
	inPhonetic := false
	for {
		i := bytes.IndexByte(b, '<')
		if i < 0 {
			return nil, false, false, fallback("unclosed cell")
		}
		if err := s.text(into, b[:i]); err != nil {
			return nil, false, false, err
		}
		b = b[i:]
		if len(b) < 2 || b[1] == '!' || b[1] == '?' {
			return nil, false, false, fallback("a comment, CDATA or instruction in a cell")
		}
		gt := bytes.IndexByte(b, '>')
		if gt < 0 {
			return nil, false, false, fallback("a broken tag")
		}
		tag := b[1:gt]
		b = b[gt+1:]
		if len(tag) < 1 || tag[0] == '/' && len(tag) < 2 || !validTag(tag) {
			return nil, false, false, fallback("a malformed tag")
		}
		if tag[0] == '/' {
			name := string(localName(tagName(tag[1:])))
			if depth == 0 {
				if name != "c" {
					return nil, false, false, fallback("unexpected end tag")
				}
				return b, hasV, hasF, nil
			}
			depth--
			switch name {
			case "v", "t":
				into = nil
			case "rPh":
				inPhonetic = false
			}
			continue
		}
		name := string(localName(tagName(tag)))
		selfClosing := tag[len(tag)-1] == '/'
		if !selfClosing {
			depth++
		}
		switch name {
		case "v":
			hasV = true
			if !selfClosing {
				into = &s.value
			}
		case "f":
			hasF = true
		case "rPh":
			inPhonetic = !selfClosing
		case "t":
			if !inPhonetic && !selfClosing {
				into = &s.inline
			}
		}
	}
}

// text decodes character data into *into, or, when it goes nowhere,
// only checks it, as encoding/xml checks all text.
func (s *fastSheet) text(into *[]byte, b []byte) error {
	var err error
	if into != nil {
		*into, err = decodeText(*into, b)
	} else if !isSpace(b) {
		s.scratch, err = decodeText(s.scratch[:0], b)
	}
	return err
}

// decodeText appends XML character data to dst as encoding/xml reads it:
// the five entities and character references resolved, line ends
// normalised to "\n". Anything else (an unknown entity, a character XML
// does not allow, invalid UTF-8) gives the sheet back.
func decodeText(dst, src []byte) ([]byte, error) {
	for len(src) > 0 {
		i := 0
		for i < len(src) && src[i] >= 0x20 && src[i] < 0x80 && src[i] != '&' {
			i++
		}
		dst = append(dst, src[:i]...)
		src = src[i:]
		if len(src) == 0 {
			break
		}
		switch c := src[0]; {
		case c == '&':
			semi := bytes.IndexByte(src, ';')
			if semi < 0 {
				return nil, fallback("an unclosed entity")
			}
			r, ok := entity(src[1:semi])
			if !ok {
				return nil, fallback("an entity")
			}
			dst = utf8.AppendRune(dst, r)
			src = src[semi+1:]
		case c == '\r':
			dst = append(dst, '\n')
			src = src[1:]
			if len(src) > 0 && src[0] == '\n' {
				src = src[1:]
			}
		case c == '\n' || c == '\t':
			dst = append(dst, c)
			src = src[1:]
		case c < 0x20:
			return nil, fallback("a control character")
		default:
			r, n := utf8.DecodeRune(src)
			if r == utf8.RuneError && n <= 1 || !xmlChar(r) {
				return nil, fallback("a character XML does not allow")
			}
			dst = append(dst, src[:n]...)
			src = src[n:]
		}
	}
	return dst, nil
}

// entity resolves the five predefined entities and character references
// (XML 1.0, sections 4.1 and 4.6).
func entity(name []byte) (rune, bool) {
	switch string(name) {
	case "lt":
		return '<', true
	case "gt":
		return '>', true
	case "amp":
		return '&', true
	case "quot":
		return '"', true
	case "apos":
		return '\'', true
	}
	if len(name) < 2 || name[0] != '#' {
		return 0, false
	}
	var n uint64
	var err error
	if name[1] == 'x' {
		n, err = strconv.ParseUint(string(name[2:]), 16, 32)
	} else {
		n, err = strconv.ParseUint(string(name[1:]), 10, 32)
	}
	if err != nil || !xmlChar(rune(n)) {
		return 0, false
	}
	return rune(n), true
}

// validChars reports UTF-8 text of characters XML allows.
func validChars(b []byte) bool {
	for len(b) > 0 {
		r, n := utf8.DecodeRune(b)
		if r == utf8.RuneError && n <= 1 || !xmlChar(r) {
			return false
		}
		b = b[n:]
	}
	return true
}

// xmlChar reports the characters XML 1.0 allows (section 2.2, Char).
func xmlChar(r rune) bool {
	return r == 0x09 || r == 0x0A || r == 0x0D || r >= 0x20 && r <= 0xD7FF ||
		r >= 0xE000 && r <= 0xFFFD || r >= 0x10000 && r <= 0x10FFFF
}

// fastSharedStrings reads the shared string table by scanning its bytes,
// as readSharedStrings reads it: each <si> is the text of its <t>
// elements outside phonetic runs.
func fastSharedStrings(p *Package) ([]string, error) {
	rc, err := openSharedStrings(p)
	if rc == nil {
		return nil, err
	}
	defer rc.Close()
	data, err := io.ReadAll(rc)
	if err != nil {
		return nil, fallback(err.Error())
	}
	var out []string
	var cur, scratch []byte
	inSI, inPhonetic := false, false
	var into *[]byte
	for {
		i := bytes.IndexByte(data, '<')
		if i < 0 {
			if inSI {
				return nil, fallback("unclosed shared string")
			}
			return out, nil
		}
		target := into
		if target == nil && !isSpace(data[:i]) {
			target = &scratch
			scratch = scratch[:0]
		}
		if target != nil {
			if *target, err = decodeText(*target, data[:i]); err != nil {
				return nil, err
			}
		}
		data = data[i:]
		if len(data) < 2 || (data[1] == '!' && inSI) || (data[1] == '?' && inSI) {
			return nil, fallback("a comment, CDATA or instruction in a shared string")
		}
		gt := bytes.IndexByte(data, '>')
		if gt < 0 {
			return nil, fallback("a broken tag")
		}
		tag := data[1:gt]
		data = data[gt+1:]
		if len(tag) < 1 || tag[0] == '/' && len(tag) < 2 {
			return nil, fallback("an empty tag")
		}
		if tag[0] == '?' || tag[0] == '!' {
			continue // the XML declaration, outside any string
		}
		if !validTag(tag) {
			return nil, fallback("a malformed tag")
		}
		if tag[0] == '/' {
			switch string(localName(tagName(tag[1:]))) {
			case "si":
				inSI = false
				if len(cur) > table.MaxCellChars && utf8.RuneCount(cur) > table.MaxCellChars {
					return nil, longShared(p, len(out))
				}
				out = append(out, string(cur))
			case "rPh":
				inPhonetic = false
			case "t":
				into = nil
			}
			continue
		}
		selfClosing := tag[len(tag)-1] == '/'
		switch string(localName(tagName(tag))) {
		case "si":
			if selfClosing {
				out = append(out, "")
				continue
			}
			inSI, cur = true, cur[:0]
		case "rPh":
			inPhonetic = !selfClosing
		case "t":
			if inSI && !inPhonetic && !selfClosing {
				into = &cur
			}
		}
	}
}

// prefetcher unpacks a part ahead of its reader in a goroutine of its
// own, so that inflating (about half of reading a sheet) and scanning run
// side by side on two cores.
type prefetcher struct {
	rc     io.ReadCloser
	blocks chan prefetched
	done   chan struct{}
	cur    []byte
	err    error
}

type prefetched struct {
	b   []byte
	err error
}

const prefetchBlock = 256 << 10

func newPrefetcher(rc io.ReadCloser) *prefetcher {
	p := &prefetcher{rc: rc, blocks: make(chan prefetched, 4), done: make(chan struct{})}
	go func() {
		defer close(p.blocks)
		for {
			b := make([]byte, prefetchBlock)
			n, err := io.ReadFull(rc, b)
			if err == io.ErrUnexpectedEOF {
				err = io.EOF
			}
			select {
			case p.blocks <- prefetched{b[:n], err}:
			case <-p.done:
				return
			}
			if err != nil {
				return
			}
		}
	}()
	return p
}

func (p *prefetcher) Read(b []byte) (int, error) {
	for len(p.cur) == 0 {
		if p.err != nil {
			return 0, p.err
		}
		blk, ok := <-p.blocks
		if !ok {
			return 0, io.EOF
		}
		p.cur, p.err = blk.b, blk.err
	}
	n := copy(b, p.cur)
	p.cur = p.cur[n:]
	return n, nil
}

// Close stops the goroutine and closes the part.
func (p *prefetcher) Close() error {
	close(p.done)
	for range p.blocks {
	}
	return p.rc.Close()
}
