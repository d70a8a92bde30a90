package workbook

import (
	"archive/zip"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"
)

// SheetInfo describes one sheet of a workbook.
type SheetInfo struct {
	Name string
	// Hidden is true for sheets hidden from view in the workbook.
	Hidden bool
	// Worksheet is false for chart, dialog and macro sheets, which have
	// no cells to read.
	Worksheet bool
}

// Sheets lists a workbook's sheets in tab order. A text file has one
// sheet with an empty name.
func Sheets(path string) ([]SheetInfo, error) {
	f, err := sniff(path)
	if err != nil {
		return nil, err
	}
	if f == formatText {
		return []SheetInfo{{Worksheet: true}}, nil
	}
	pkg, err := openPackage(path, Options{})
	if err != nil {
		return nil, err
	}
	defer pkg.Close()
	return pkg.sheets, nil
}

// xlsxPackage is an opened workbook: excelize has checked it and its size
// limits; the zip is kept open to stream worksheets from it.
type xlsxPackage struct {
	path     string
	zf       *os.File
	zr       *zip.Reader
	sheets   []SheetInfo
	parts    map[string]string // sheet name → worksheet part name
	rids     map[string]string // sheet name → relationship id
	maxID    int               // the largest sheetId
	wbPart   string
	date1904 bool
	dateXf   []bool // by cell style index: shown as a date or time
	sstPart  string
	// stylesPart is the styles part, empty when the workbook has none.
	stylesPart string
	limit      int64
	limitXML   int64
	size       int64 // of the file, on disk
	// staleResults: the workbook asks to be recalculated when opened
	// (calcPr fullCalcOnLoad), so its formulas' saved results are not
	// trusted (xlsxwriter writes 0 as every formula's result and sets it).
	staleResults bool
	// computed holds the values Slopewise calculated for formula cells of
	// the sheet being read; formulas logs the cells that need one.
	computed map[cellKey]computedValue
	formulas formulaLog
	// filter keeps the sheet read to its data region (tables.go).
	filter     *regionFilter
	tableNotes []string
}

// Close closes the workbook file, if the package was opened from one.
func (p *xlsxPackage) Close() error {
	if p.zf == nil {
		return nil
	}
	return p.zf.Close()
}

// openPackage opens a workbook for reading with our own bounded readers,
// not excelize: excelize parses every part whole when it opens a package
// (the workbook, its styles, and every other part it holds in memory),
// before any limit of ours applies, so a small crafted file could take
// all memory (issue 12's hostile files). Reading needs only the workbook
// part (sheets, date system), its relationships and the styles' number
// formats; each is bounded in size and in nesting depth before it is
// decoded, and Go's zip reader refuses a part that inflates past its
// declared size.
func openPackage(path string, opts Options) (p *xlsxPackage, err error) {
	defer func() {
		if r := recover(); r != nil {
			if p != nil && p.zf != nil {
				p.zf.Close()
			}
			p, err = nil, fail(path, ErrDamaged, fmt.Sprint("the workbook reader stopped: ", r))
		}
	}()
	limit, limitXML := sizeLimits(opts.UnzipSizeLimit, opts.UnzipXMLSizeLimit)
	p = &xlsxPackage{path: path, parts: map[string]string{}, limit: limit, limitXML: limitXML}
	if p.zf, err = os.Open(path); err != nil {
		return nil, statError(path, err)
	}
	info, err := p.zf.Stat()
	if err != nil {
		p.zf.Close()
		return nil, statError(path, err)
	}
	p.size = info.Size()
	if p.zr, err = zip.NewReader(p.zf, info.Size()); err != nil {
		p.zf.Close()
		return nil, &Error{Path: path, Cause: ErrDamaged, Underlying: err}
	}
	var total uint64
	for _, f := range p.zr.File {
		total += f.UncompressedSize64
		if f.UncompressedSize64 > uint64(limit) || total > uint64(limit) {
			p.zf.Close()
			return nil, &Error{Path: path, Cause: ErrTooLarge, Detail: "the limit is " + byteSize(limit)}
		}
	}
	if err := p.readWorkbook(); err != nil {
		p.zf.Close()
		return nil, err
	}
	if err := p.readStyles(); err != nil {
		p.zf.Close()
		return nil, err
	}
	return p, nil
}

// isWorksheetPart reports the parts excelize treats as worksheets.
func isWorksheetPart(name string) bool {
	return strings.HasPrefix(strings.ToLower(strings.ReplaceAll(name, "\\", "/")), "xl/worksheets/sheet")
}

// byteSize writes a size for people.
func byteSize(n int64) string {
	switch {
	case n >= 1<<30:
		return fmt.Sprintf("%.1f GiB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20))
	}
	return fmt.Sprintf("%d bytes", n)
}

// sizeLimits applies the defaults to the size limits asked for.
func sizeLimits(limit, limitXML int64) (int64, int64) {
	if limit <= 0 {
		limit = DefaultUnzipSizeLimit
	}
	if limitXML <= 0 {
		limitXML = min(DefaultUnzipXMLSizeLimit, limit)
	}
	return limit, limitXML
}

// excelizeOpenError maps what excelize says on open to our causes.
func excelizeOpenError(path string, err error, limit int64) error {
	msg := err.Error()
	switch {
	case strings.Contains(msg, "unzip size exceeds"):
		return &Error{Path: path, Cause: ErrTooLarge, Detail: "the limit is " + byteSize(limit), Underlying: err}
	case errors.Is(err, excelize.ErrWorkbookFileFormat), errors.Is(err, excelize.ErrWorkbookPassword):
		return &Error{Path: path, Cause: ErrEncrypted, Underlying: err}
	case errors.Is(err, zip.ErrFormat), errors.Is(err, io.ErrUnexpectedEOF), errors.Is(err, zip.ErrChecksum), errors.Is(err, zip.ErrAlgorithm):
		return &Error{Path: path, Cause: ErrDamaged, Underlying: err}
	}
	var se *xml.SyntaxError
	if errors.As(err, &se) {
		return &Error{Path: path, Cause: ErrDamaged, Underlying: err}
	}
	return &Error{Path: path, Cause: ErrDamaged, Underlying: err}
}

// isBuiltinDate reports the built-in number formats that show dates or
// times: 14–22 and 45–47 (ECMA-376 Part 1, section 18.8.30), and the
// East Asian date formats 27–36 and 50–58 (same section, from memory).
func isBuiltinDate(id int) bool {
	return id >= 14 && id <= 22 || id >= 27 && id <= 36 || id >= 45 && id <= 47 || id >= 50 && id <= 58
}

// isDateFormat reports whether a custom number format shows a date or
// time: it has y, m, d, h or s outside quoted text, escapes and brackets
// (a bracketed [h], [m] or [s] is an elapsed time, which counts).
func isDateFormat(code string) bool {
	// Only the first section matters for positive numbers.
	inQuote := false
	for i := 0; i < len(code); i++ {
		c := code[i]
		switch {
		case inQuote:
			if c == '"' {
				inQuote = false
			}
		case c == '"':
			inQuote = true
		case c == '\\' || c == '_' || c == '*':
			i++
		case c == ';':
			return false
		case c == '[':
			end := strings.IndexByte(code[i:], ']')
			if end < 0 {
				return false
			}
			inner := strings.ToLower(code[i+1 : i+end])
			if inner == "h" || inner == "hh" || inner == "m" || inner == "mm" || inner == "s" || inner == "ss" {
				return true
			}
			i += end
		default:
			switch c | 0x20 {
			case 'y', 'm', 'd', 'h', 's':
				return true
			}
		}
	}
	return false
}

// Relationship type suffixes, from ECMA-376 Part 1, section 15.2.
const (
	relOfficeDocument = "/officeDocument"
	relWorksheet      = "/worksheet"
	relSharedStrings  = "/sharedStrings"
)

type xmlRels struct {
	Rels []struct {
		ID     string `xml:"Id,attr"`
		Type   string `xml:"Type,attr"`
		Target string `xml:"Target,attr"`
	} `xml:"Relationship"`
}

type xmlWorkbook struct {
	Sheets []struct {
		Name    string `xml:"name,attr"`
		SheetID int    `xml:"sheetId,attr"`
		State   string `xml:"state,attr"`
		RID     string `xml:"http://schemas.openxmlformats.org/officeDocument/2006/relationships id,attr"`
		RIDs    string `xml:"http://purl.oclc.org/ooxml/officeDocument/relationships id,attr"`
	} `xml:"sheets>sheet"`
	CalcPr struct {
		FullCalcOnLoad string `xml:"fullCalcOnLoad,attr"`
	} `xml:"calcPr"`
	WorkbookPr struct {
		Date1904 string `xml:"date1904,attr"`
	} `xml:"workbookPr"`
}

// readWorkbook finds the workbook part, its sheets and their parts.
func (p *xlsxPackage) readWorkbook() error {
	wbPart := "xl/workbook.xml"
	var root xmlRels
	if err := p.decodePart("_rels/.rels", &root); err == nil {
		for _, r := range root.Rels {
			if strings.HasSuffix(r.Type, relOfficeDocument) {
				wbPart = strings.TrimPrefix(r.Target, "/")
			}
		}
	}
	var wb xmlWorkbook
	if err := p.decodePart(wbPart, &wb); err != nil {
		var e *Error
		if errors.As(err, &e) {
			return e
		}
		return &Error{Path: p.path, Cause: ErrDamaged, Detail: "the workbook part cannot be read", Underlying: err}
	}
	var rels xmlRels
	relsPart := path.Join(path.Dir(wbPart), "_rels", path.Base(wbPart)+".rels")
	if err := p.decodePart(relsPart, &rels); err != nil {
		var e *Error
		if errors.As(err, &e) {
			return e
		}
		return &Error{Path: p.path, Cause: ErrDamaged, Detail: "the workbook's relationships cannot be read", Underlying: err}
	}
	targets := map[string]string{}
	for _, r := range rels.Rels {
		target := r.Target
		if strings.HasPrefix(target, "/") {
			target = strings.TrimPrefix(target, "/")
		} else {
			target = path.Join(path.Dir(wbPart), target)
		}
		targets[r.ID] = target
		if strings.HasSuffix(r.Type, relSharedStrings) {
			p.sstPart = target
		}
		if strings.HasSuffix(r.Type, relStyles) {
			p.stylesPart = target
		}
		if strings.HasSuffix(r.Type, relWorksheet) {
			targets["ws:"+r.ID] = target
		}
	}
	p.wbPart = wbPart
	p.staleResults = xmlTrue(wb.CalcPr.FullCalcOnLoad)
	p.date1904 = xmlTrue(wb.WorkbookPr.Date1904)
	p.rids = map[string]string{}
	for _, s := range wb.Sheets {
		rid := s.RID
		if rid == "" {
			rid = s.RIDs
		}
		p.rids[s.Name] = rid
		p.maxID = max(p.maxID, s.SheetID)
		_, isWS := targets["ws:"+rid]
		p.sheets = append(p.sheets, SheetInfo{Name: s.Name, Hidden: s.State == "hidden" || s.State == "veryHidden", Worksheet: isWS})
		if isWS {
			p.parts[s.Name] = targets[rid]
		}
	}
	return nil
}

// xmlTrue reads an XML Schema boolean ("1" or "true").
func xmlTrue(v string) bool {
	v = strings.TrimSpace(v)
	return v == "1" || v == "true"
}

// file finds a zip entry by part name, ignoring case and slash direction
// as spreadsheet programs do.
func (p *xlsxPackage) file(name string) *zip.File {
	for _, f := range p.zr.File {
		if strings.EqualFold(strings.ReplaceAll(f.Name, "\\", "/"), name) {
			return f
		}
	}
	return nil
}

// openPart opens a part for streaming, refusing parts past the size limit.
func (p *xlsxPackage) openPart(name string, limit int64) (io.ReadCloser, error) {
	f := p.file(name)
	if f == nil {
		return nil, fmt.Errorf("part %s is missing: %w", name, os.ErrNotExist)
	}
	if f.UncompressedSize64 > uint64(limit) {
		return nil, &Error{Path: p.path, Cause: ErrTooLarge, Detail: fmt.Sprintf("part %s unpacks to %s; the limit is %s", name, byteSize(int64(min(f.UncompressedSize64, 1<<62))), byteSize(limit))}
	}
	return f.Open()
}

// decodePart decodes a small part, after checking that it nests no
// deeper than maxXMLDepth: encoding/xml keeps a record of every open
// element, so a part of millions of nested elements would take gigabytes
// while it is decoded.
func (p *xlsxPackage) decodePart(name string, v any) error {
	if err := p.checkDepth(name); err != nil {
		return err
	}
	rc, err := p.openPart(name, p.limitXML)
	if err != nil {
		return err
	}
	defer rc.Close()
	return xml.NewDecoder(rc).Decode(v)
}

// maxXMLDepth bounds the nesting of the parts Slopewise decodes. Parts
// that spreadsheet programs write nest a dozen levels at most (common
// practice); a sheet's cells nest four.
const maxXMLDepth = 128

// checkDepth reads a part's tokens, without keeping any, and refuses it
// when elements nest deeper than maxXMLDepth; a part that does not
// unpack or parse is damage.
func (p *xlsxPackage) checkDepth(name string) (err error) {
	defer func() {
		var e *Error
		if err != nil && !errors.As(err, &e) {
			err = &Error{Path: p.path, Cause: ErrDamaged, Detail: "the part " + name + " cannot be read", Underlying: err}
		}
	}()
	rc, err := p.openPart(name, p.limitXML)
	if err != nil {
		return err
	}
	defer rc.Close()
	dec := newXMLDecoder(rc)
	depth := 0
	for {
		tok, err := dec.RawToken()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
		switch tok.(type) {
		case xml.StartElement:
			if depth++; depth > maxXMLDepth {
				return &Error{Path: p.path, Cause: ErrUnusual, Detail: fmt.Sprintf("the part %s nests elements more than %d deep", name, maxXMLDepth)}
			}
		case xml.EndElement:
			depth--
		}
	}
}

// openXLSXSheet opens the worksheet to read: the one named, or the first
// visible one.
func openXLSXSheet(path string, opts Options, calc *formulaResults, fast bool) (rowSource, string, error) {
	p, err := openPackage(path, opts)
	if err != nil {
		return nil, "", err
	}
	name := opts.Sheet
	if name == "" && opts.Table != "" {
		for _, s := range p.sheets {
			if !s.Worksheet {
				continue
			}
			if tables, _ := p.sheetTables(p.parts[s.Name]); len(tables) > 0 {
				if _, ok := findTable(tables, opts.Table); ok {
					name = s.Name
					break
				}
			}
		}
		if name == "" {
			p.Close()
			return nil, "", &Error{Path: path, Cause: ErrTableNotFound, Detail: fmt.Sprintf("no sheet holds a table named %q", opts.Table)}
		}
	}
	if name == "" {
		for _, s := range p.sheets {
			if s.Worksheet && !s.Hidden {
				name = s.Name
				break
			}
		}
		if name == "" {
			p.Close()
			return nil, "", fail(path, ErrNoSheets, "")
		}
	}
	if calc != nil {
		p.computed = calc.values
	}
	part, ok := p.parts[name]
	if !ok {
		p.Close()
		for _, s := range p.sheets {
			if s.Name == name {
				return nil, "", &Error{Path: path, Sheet: name, Cause: ErrNotWorksheet}
			}
		}
		return nil, "", &Error{Path: path, Sheet: name, Cause: ErrSheetNotFound, Detail: "the sheets are " + sheetList(p.sheets)}
	}
	tables, tableNotes := p.sheetTables(part)
	p.filter = &regionFilter{tables: tables}
	if opts.Table != "" {
		d, ok := findTable(tables, opts.Table)
		if !ok {
			p.Close()
			return nil, "", &Error{Path: path, Sheet: name, Cause: ErrTableNotFound, Detail: "the tables of this sheet are " + tableNames(tables)}
		}
		p.filter.region = &d
	} else if len(tables) == 1 {
		p.filter.auto = &tables[0]
	}
	p.tableNotes = tableNotes
	var src rowSource
	if fast {
		src, err = newFastSheet(p, part)
		if errors.Is(err, errFastFallback) {
			src, err = newSheetStream(p, part)
		}
	} else {
		src, err = newSheetStream(p, part)
	}
	if err != nil {
		p.Close()
		var e *Error
		if errors.As(err, &e) {
			e.Sheet = name
			return nil, "", e
		}
		return nil, "", &Error{Path: path, Sheet: name, Cause: ErrDamaged, Underlying: err}
	}
	return src, name, nil
}

func sheetList(sheets []SheetInfo) string {
	var names []string
	for _, s := range sheets {
		if s.Worksheet {
			names = append(names, strconv.Quote(s.Name))
		}
	}
	return strings.Join(names, ", ")
}
