package xlsx

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
)

// SheetInfo describes one sheet of a workbook.
type SheetInfo struct {
	Name string
	// Hidden is true for sheets hidden from view in the workbook.
	Hidden bool
	// Worksheet is false for chart, dialog and macro sheets, which have
	// no cells to read.
	Worksheet bool
	// Rows is the number of rows of cells the sheet holds (the header and
	// any title rows included), counted by SheetsCounted only; RowsMore
	// says the count stopped after 256 MiB of the sheet's XML.
	Rows     int
	RowsMore bool
}

// Sheets lists a workbook's sheets in tab order. A text file has one
// sheet with an empty name.
func Sheets(path string) ([]SheetInfo, error) {
	return SheetsCounted(path, func(string) bool { return false })
}

// SheetsCounted is Sheets with the rows of the worksheets that count says
// to count counted (countRows reads each one's XML; a caller that reads a
// sheet anyway leaves it out).
func SheetsCounted(path string, count func(name string) bool) ([]SheetInfo, error) {
	f, err := sniff.File(path)
	if err != nil {
		return nil, err
	}
	if f == sniff.Text {
		return []SheetInfo{{Worksheet: true}}, nil
	}
	pkg, err := OpenPackage(path, table.Options{})
	if err != nil {
		return nil, err
	}
	defer pkg.Close()
	out := append([]SheetInfo(nil), pkg.Sheets...)
	for i := range out {
		if out[i].Worksheet && count(out[i].Name) {
			out[i].Rows, out[i].RowsMore = pkg.countRows(pkg.Parts[out[i].Name])
		}
	}
	return out, nil
}

// rowsCounted is how much of a worksheet's XML SheetsCounted reads to count its
// rows; past it, RowsMore is set.
const rowsCounted = 256 << 20

// countRows counts the <row> elements of a worksheet part (with or
// without a namespace prefix), reading at most rowsCounted bytes of it;
// more reports that it stopped there.
func (p *Package) countRows(part string) (rows int, more bool) {
	rc, err := p.OpenPart(part, 1<<62)
	if err != nil {
		return 0, false
	}
	defer rc.Close()
	buf := make([]byte, 1<<20)
	var carry []byte
	read := 0
	for {
		n, err := rc.Read(buf)
		if n > 0 {
			chunk := append(carry, buf[:n]...)
			rows += bytes.Count(chunk, []byte("<row ")) + bytes.Count(chunk, []byte("<row>")) + bytes.Count(chunk, []byte(":row ")) + bytes.Count(chunk, []byte(":row>"))
			// The last 5 bytes again with the next chunk, minus what they
			// already counted.
			tail := chunk[max(len(chunk)-5, 0):]
			rows -= bytes.Count(tail, []byte("<row ")) + bytes.Count(tail, []byte("<row>")) + bytes.Count(tail, []byte(":row ")) + bytes.Count(tail, []byte(":row>"))
			carry = append(carry[:0], tail...)
			read += n
		}
		if read > rowsCounted {
			return rows, true
		}
		if err != nil {
			return rows, false
		}
	}
}

// Package is an opened workbook: excelize has checked it and its size
// limits; the zip is kept open to stream worksheets from it.
type Package struct {
	Path         string
	zf           *os.File
	Zip          *zip.Reader
	Sheets       []SheetInfo
	Parts        map[string]string // sheet name → worksheet part name
	RIDs         map[string]string // sheet name → relationship id
	MaxID        int               // the largest sheetId
	WorkbookPart string
	date1904     bool
	dateXf       []bool // by cell style index: shown as a date or time
	sstPart      string
	// StylesPart is the styles part, empty when the workbook has none.
	StylesPart string
	Limit      int64
	LimitXML   int64
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
	filter     *table.RegionFilter
	tableNotes []string
}

// Close closes the workbook file, if the package was opened from one.
func (p *Package) Close() error {
	if p.zf == nil {
		return nil
	}
	return p.zf.Close()
}

// OpenPackage opens a workbook for reading with our own bounded readers,
// not excelize: excelize parses every part whole when it opens a package
// (the workbook, its styles, and every other part it holds in memory),
// before any limit of ours applies, so a small crafted file could take
// all memory (issue 12's hostile files). Reading needs only the workbook
// part (sheets, date system), its relationships and the styles' number
// formats; each is bounded in size and in nesting depth before it is
// decoded, and Go's zip reader refuses a part that inflates past its
// declared size.
func OpenPackage(path string, opts table.Options) (p *Package, err error) {
	defer func() {
		if r := recover(); r != nil {
			if p != nil && p.zf != nil {
				p.zf.Close()
			}
			p, err = nil, table.Fail(path, table.ErrDamaged, fmt.Sprint("the workbook reader stopped: ", r))
		}
	}()
	limit, limitXML := SizeLimits(opts.UnzipSizeLimit, opts.UnzipXMLSizeLimit)
	p = &Package{Path: path, Parts: map[string]string{}, Limit: limit, LimitXML: limitXML}
	if p.zf, err = os.Open(path); err != nil {
		return nil, sniff.StatError(path, err)
	}
	info, err := p.zf.Stat()
	if err != nil {
		p.zf.Close()
		return nil, sniff.StatError(path, err)
	}
	p.size = info.Size()
	if p.Zip, err = zip.NewReader(p.zf, info.Size()); err != nil {
		p.zf.Close()
		return nil, &table.Error{Path: path, Cause: table.ErrDamaged, Underlying: err}
	}
	var total uint64
	for _, f := range p.Zip.File {
		total += f.UncompressedSize64
		if f.UncompressedSize64 > uint64(limit) || total > uint64(limit) {
			p.zf.Close()
			return nil, &table.Error{Path: path, Cause: table.ErrTooLarge, Detail: "the limit is " + ByteSize(limit)}
		}
	}
	if err := p.ReadWorkbook(); err != nil {
		p.zf.Close()
		return nil, err
	}
	if err := p.readStyles(); err != nil {
		p.zf.Close()
		return nil, err
	}
	return p, nil
}

// IsWorksheetPart reports the parts excelize treats as worksheets.
func IsWorksheetPart(name string) bool {
	return strings.HasPrefix(strings.ToLower(strings.ReplaceAll(name, "\\", "/")), "xl/worksheets/sheet")
}

// ByteSize writes a size for people.
func ByteSize(n int64) string {
	switch {
	case n >= 1<<30:
		return fmt.Sprintf("%.1f GiB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20))
	}
	return fmt.Sprintf("%d bytes", n)
}

// SizeLimits applies the defaults to the size limits asked for.
func SizeLimits(limit, limitXML int64) (int64, int64) {
	if limit <= 0 {
		limit = table.DefaultUnzipSizeLimit
	}
	if limitXML <= 0 {
		limitXML = min(table.DefaultUnzipXMLSizeLimit, limit)
	}
	return limit, limitXML
}

// ExcelizeOpenError maps what excelize says on open to our causes.
func ExcelizeOpenError(path string, err error, limit int64) error {
	msg := err.Error()
	switch {
	case strings.Contains(msg, "unzip size exceeds"):
		return &table.Error{Path: path, Cause: table.ErrTooLarge, Detail: "the limit is " + ByteSize(limit), Underlying: err}
	case errors.Is(err, excelize.ErrWorkbookFileFormat), errors.Is(err, excelize.ErrWorkbookPassword):
		return &table.Error{Path: path, Cause: table.ErrEncrypted, Underlying: err}
	case errors.Is(err, zip.ErrFormat), errors.Is(err, io.ErrUnexpectedEOF), errors.Is(err, zip.ErrChecksum), errors.Is(err, zip.ErrAlgorithm):
		return &table.Error{Path: path, Cause: table.ErrDamaged, Underlying: err}
	}
	var se *xml.SyntaxError
	if errors.As(err, &se) {
		return &table.Error{Path: path, Cause: table.ErrDamaged, Underlying: err}
	}
	return &table.Error{Path: path, Cause: table.ErrDamaged, Underlying: err}
}

// isBuiltinDate reports the built-in number formats that show dates or
// times: 14–22 and 45–47 (ECMA-376 Part 1, section 18.8.30), and the
// East Asian date formats 27–36 and 50–58 (same section, from memory).
func isBuiltinDate(id int) bool {
	return id >= 14 && id <= 22 || id >= 27 && id <= 36 || id >= 45 && id <= 47 || id >= 50 && id <= 58
}

// IsDateFormat reports whether a custom number format shows a date or
// time: it has y, m, d, h or s outside quoted text, escapes and brackets
// (a bracketed [h], [m] or [s] is an elapsed time, which counts).
func IsDateFormat(code string) bool {
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

type XMLRels struct {
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

// ReadWorkbook finds the workbook part, its sheets and their parts.
func (p *Package) ReadWorkbook() error {
	wbPart := "xl/workbook.xml"
	var root XMLRels
	if err := p.DecodePart("_rels/.rels", &root); err == nil {
		for _, r := range root.Rels {
			if strings.HasSuffix(r.Type, relOfficeDocument) {
				wbPart = strings.TrimPrefix(r.Target, "/")
			}
		}
	}
	var wb xmlWorkbook
	if err := p.DecodePart(wbPart, &wb); err != nil {
		var e *table.Error
		if errors.As(err, &e) {
			return e
		}
		return &table.Error{Path: p.Path, Cause: table.ErrDamaged, Detail: "the workbook part cannot be read", Underlying: err}
	}
	var rels XMLRels
	relsPart := path.Join(path.Dir(wbPart), "_rels", path.Base(wbPart)+".rels")
	if err := p.DecodePart(relsPart, &rels); err != nil {
		var e *table.Error
		if errors.As(err, &e) {
			return e
		}
		return &table.Error{Path: p.Path, Cause: table.ErrDamaged, Detail: "the workbook's relationships cannot be read", Underlying: err}
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
			p.StylesPart = target
		}
		if strings.HasSuffix(r.Type, relWorksheet) {
			targets["ws:"+r.ID] = target
		}
	}
	p.WorkbookPart = wbPart
	p.staleResults = xmlTrue(wb.CalcPr.FullCalcOnLoad)
	p.date1904 = xmlTrue(wb.WorkbookPr.Date1904)
	p.RIDs = map[string]string{}
	for _, s := range wb.Sheets {
		rid := s.RID
		if rid == "" {
			rid = s.RIDs
		}
		p.RIDs[s.Name] = rid
		p.MaxID = max(p.MaxID, s.SheetID)
		_, isWS := targets["ws:"+rid]
		p.Sheets = append(p.Sheets, SheetInfo{Name: s.Name, Hidden: s.State == "hidden" || s.State == "veryHidden", Worksheet: isWS})
		if isWS {
			p.Parts[s.Name] = targets[rid]
		}
	}
	return nil
}

// xmlTrue reads an XML Schema boolean ("1" or "true").
func xmlTrue(v string) bool {
	v = strings.TrimSpace(v)
	return v == "1" || v == "true"
}

// File finds a zip entry by part name, ignoring case and slash direction
// as spreadsheet programs do.
func (p *Package) File(name string) *zip.File {
	for _, f := range p.Zip.File {
		if strings.EqualFold(strings.ReplaceAll(f.Name, "\\", "/"), name) {
			return f
		}
	}
	return nil
}

// OpenPart opens a part for streaming, refusing parts past the size limit.
func (p *Package) OpenPart(name string, limit int64) (io.ReadCloser, error) {
	f := p.File(name)
	if f == nil {
		return nil, fmt.Errorf("part %s is missing: %w", name, os.ErrNotExist)
	}
	if f.UncompressedSize64 > uint64(limit) {
		return nil, &table.Error{Path: p.Path, Cause: table.ErrTooLarge, Detail: fmt.Sprintf("part %s unpacks to %s; the limit is %s", name, ByteSize(int64(min(f.UncompressedSize64, 1<<62))), ByteSize(limit))}
	}
	return f.Open()
}

// DecodePart decodes a small part, after checking that it nests no
// deeper than maxXMLDepth: encoding/xml keeps a record of every open
// element, so a part of millions of nested elements would take gigabytes
// while it is decoded.
func (p *Package) DecodePart(name string, v any) error {
	if err := p.checkDepth(name); err != nil {
		return err
	}
	rc, err := p.OpenPart(name, p.LimitXML)
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
func (p *Package) checkDepth(name string) (err error) {
	defer func() {
		var e *table.Error
		if err != nil && !errors.As(err, &e) {
			err = &table.Error{Path: p.Path, Cause: table.ErrDamaged, Detail: "the part " + name + " cannot be read", Underlying: err}
		}
	}()
	rc, err := p.OpenPart(name, p.LimitXML)
	if err != nil {
		return err
	}
	defer rc.Close()
	dec := NewXMLDecoder(rc)
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
				return &table.Error{Path: p.Path, Cause: table.ErrUnusual, Detail: fmt.Sprintf("the part %s nests elements more than %d deep", name, maxXMLDepth)}
			}
		case xml.EndElement:
			depth--
		}
	}
}

// openXLSXSheet opens the worksheet to read: the one named, or the first
// visible one.
func openXLSXSheet(path string, opts table.Options, calc *formulaResults, fast bool) (table.RowSource, string, error) {
	p, err := OpenPackage(path, opts)
	if err != nil {
		return nil, "", err
	}
	name := opts.Sheet
	if name == "" && opts.Table != "" {
		for _, s := range p.Sheets {
			if !s.Worksheet {
				continue
			}
			if tables, _ := p.sheetTables(p.Parts[s.Name]); len(tables) > 0 {
				if _, ok := table.FindTable(tables, opts.Table); ok {
					name = s.Name
					break
				}
			}
		}
		if name == "" {
			p.Close()
			return nil, "", &table.Error{Path: path, Cause: table.ErrTableNotFound, Detail: fmt.Sprintf("no sheet holds a table named %q", opts.Table)}
		}
	}
	if name == "" {
		for _, s := range p.Sheets {
			if s.Worksheet && !s.Hidden {
				name = s.Name
				break
			}
		}
		if name == "" {
			p.Close()
			return nil, "", table.Fail(path, table.ErrNoSheets, "")
		}
	}
	if calc != nil {
		p.computed = calc.values
	}
	part, ok := p.Parts[name]
	if !ok {
		p.Close()
		for _, s := range p.Sheets {
			if s.Name == name {
				return nil, "", &table.Error{Path: path, Sheet: name, Cause: table.ErrNotWorksheet}
			}
		}
		return nil, "", &table.Error{Path: path, Sheet: name, Cause: table.ErrSheetNotFound, Detail: "the sheets are " + SheetList(p.Sheets)}
	}
	tables, tableNotes := p.sheetTables(part)
	p.filter = &table.RegionFilter{Tables: tables}
	if opts.Table != "" {
		d, ok := table.FindTable(tables, opts.Table)
		if !ok {
			p.Close()
			return nil, "", &table.Error{Path: path, Sheet: name, Cause: table.ErrTableNotFound, Detail: "the tables of this sheet are " + table.TableNames(tables)}
		}
		p.filter.Region = &d
	} else if len(tables) == 1 {
		p.filter.Auto = &tables[0]
	}
	p.tableNotes = tableNotes
	var src table.RowSource
	if fast {
		src, err = newFastSheet(p, part)
		if errors.Is(err, errFastFallback) {
			src, err = NewSheetStream(p, part)
		}
	} else {
		src, err = NewSheetStream(p, part)
	}
	if err != nil {
		p.Close()
		var e *table.Error
		if errors.As(err, &e) {
			e.Sheet = name
			return nil, "", e
		}
		return nil, "", &table.Error{Path: path, Sheet: name, Cause: table.ErrDamaged, Underlying: err}
	}
	return src, name, nil
}

func SheetList(sheets []SheetInfo) string {
	var names []string
	for _, s := range sheets {
		if s.Worksheet {
			names = append(names, strconv.Quote(s.Name))
		}
	}
	return strings.Join(names, ", ")
}
