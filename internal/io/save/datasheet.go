package save

import (
	"archive/zip"
	"bufio"
	"bytes"
	"compress/flate"
	"encoding/xml"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf16"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// spliceDataSheet fills the empty data sheet of the workbook at tmp with
// the text file's records, each on the row a spreadsheet program would
// give it, and replaces tmp with the result. Every other part of the
// workbook is copied still compressed; the data sheet's XML is written
// straight into the zip, a row at a time, so memory stays flat and the
// rows are compressed once. A sheet holds excelize.TotalRows rows; cut
// counts the records past that, which are left out.
//
// Cells are written as excelize's stream writer writes them (v2.11.1
// source, stream.go, writeCell; cell.go, setInlineStr and trimCellValue):
// numbers in <v>, texts as inline strings. Numbers keep every digit
// (strconv's shortest form), where the stream writer keeps 15.
func spliceDataSheet(tmp string, rows table.RowSource, decimalComma bool, wide *wideCopy) (cut int, err error) {
	zf, err := os.Open(tmp)
	if err != nil {
		return 0, err
	}
	defer zf.Close()
	info, err := zf.Stat()
	if err != nil {
		return 0, err
	}
	zr, err := zip.NewReader(zf, info.Size())
	if err != nil {
		return 0, err
	}
	pkg := &xlsx.Package{Path: tmp, Zip: zr, Parts: map[string]string{}, Limit: table.DefaultUnzipSizeLimit, LimitXML: table.DefaultUnzipXMLSizeLimit}
	if err := pkg.ReadWorkbook(); err != nil {
		return 0, err
	}
	part := pkg.Parts[DataSheetName]
	out, err := os.CreateTemp(filepath.Dir(tmp), "."+filepath.Base(tmp)+"-*")
	if err != nil {
		return 0, err
	}
	defer func() {
		out.Close() // on a failure; closing twice is harmless
		os.Remove(out.Name())
	}()
	bw := bufio.NewWriterSize(out, 1<<20)
	zw := zip.NewWriter(bw)
	zw.RegisterCompressor(zip.Deflate, func(w io.Writer) (io.WriteCloser, error) {
		return flate.NewWriter(w, flate.BestSpeed)
	})
	for _, f := range zr.File {
		if !strings.EqualFold(f.Name, part) {
			if err := xlsx.CopyRaw(zw, f); err != nil {
				return 0, err
			}
			continue
		}
		empty, err := readLimited(f, table.DefaultUnzipXMLSizeLimit)
		if err != nil {
			return 0, err
		}
		w, err := zw.CreateHeader(&zip.FileHeader{Name: f.Name, Method: zip.Deflate, Modified: f.Modified})
		if err != nil {
			return 0, err
		}
		if cut, err = packedAlongside(w, func(pw io.Writer) (int, error) {
			return writeDataSheet(pw, empty, rows, decimalComma, wide)
		}); err != nil {
			return 0, err
		}
	}
	if err := zw.Close(); err != nil {
		return 0, err
	}
	if err := bw.Flush(); err != nil {
		return 0, err
	}
	if err := out.Close(); err != nil {
		return 0, err
	}
	// Windows renames over no file that is open (found under Wine).
	zf.Close()
	return cut, os.Rename(out.Name(), tmp)
}

// packedAlongside runs write with its output compressed into w by
// another goroutine, blocks of it handed over a channel, so that making
// the sheet's XML and deflating it run side by side.
func packedAlongside(w io.Writer, write func(io.Writer) (int, error)) (int, error) {
	blocks := make(chan []byte, 8)
	done := make(chan error, 1)
	go func() {
		var err error
		for b := range blocks {
			if err == nil {
				_, err = w.Write(b)
			}
		}
		done <- err
	}()
	cw := &chanWriter{blocks: blocks}
	bw := bufio.NewWriterSize(cw, 256<<10)
	n, err := write(bw)
	if err == nil {
		err = bw.Flush()
	}
	close(blocks)
	if perr := <-done; err == nil {
		err = perr
	}
	return n, err
}

// chanWriter sends a copy of each write on a channel.
type chanWriter struct{ blocks chan<- []byte }

func (c *chanWriter) Write(b []byte) (int, error) {
	c.blocks <- append([]byte(nil), b...)
	return len(b), nil
}

// writeDataSheet writes the worksheet: excelize's empty sheet with the
// records in its <sheetData/> and without its <dimension>, which would
// name the wrong range (it is optional; ECMA-376 Part 1, section 18.3.1.35).
// wideCopy keeps the data sheet within a sheet's columns: when the text
// file's header row is wider than maxColumns, the sheet holds the columns
// named in keep only, in their order, from column A on; cells past XFD
// above the header are left out. width and kept say what was done.
type wideCopy struct {
	keep        []string
	width, kept int
	mapped      bool
	to          map[int]int // text column → sheet column, when wide
}

// columns maps the cells of a row to the sheet's columns; nil when the
// file is not wider than a sheet.
func (wc *wideCopy) columns(num, headerRow int, cells []table.RawCell) []table.RawCell {
	if wc == nil {
		return cells
	}
	if !wc.mapped && num >= headerRow && len(cells) > 0 {
		wc.mapped = true
		wc.width = cells[len(cells)-1].Col + 1
		if wc.width > table.MaxColumns && headerRow == 0 {
			wc.kept = table.MaxColumns // no names: the first columns
		} else if wc.width > table.MaxColumns {
			wc.to = map[int]int{}
			if num == headerRow {
				header := make([]string, len(cells))
				idx := make([]int, len(cells))
				for i, c := range cells {
					header[i], idx[i] = table.HeaderText(c), c.Col
				}
				names, _ := table.NameColumns(header, idx, "", headerRow)
				for _, k := range wc.keep {
					for i, n := range names {
						if n == k {
							wc.to[idx[i]] = len(wc.to)
						}
					}
				}
			}
			wc.kept = len(wc.to)
		}
	}
	out := cells[:0:0]
	for _, c := range cells {
		switch {
		case wc.to != nil && num >= headerRow && headerRow > 0:
			if j, ok := wc.to[c.Col]; ok {
				c.Col = j
				out = append(out, c)
			}
		case c.Col < table.MaxColumns:
			out = append(out, c)
		}
	}
	return out
}

func writeDataSheet(w io.Writer, empty []byte, rows table.RowSource, decimalComma bool, wide *wideCopy) (int, error) {
	empty = cutElements(empty, func(t xml.StartElement) bool { return t.Name.Local == "dimension" })
	at, tag := -1, ""
	for _, tag = range []string{"<sheetData/>", "<sheetData></sheetData>"} {
		if at = bytes.Index(empty, []byte(tag)); at >= 0 {
			break
		}
	}
	if at < 0 {
		return 0, fmt.Errorf("the new data sheet has no empty sheetData")
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.Write(empty[:at])
	bw.WriteString("<sheetData>")
	cut := 0
	var buf []byte
	err := eachRecord(rows, func(num, headerRow int, cells []table.RawCell) error {
		if len(cells) == 0 {
			return nil
		}
		if num > excelize.TotalRows {
			cut++
			return nil
		}
		if cells = wide.columns(num, headerRow, cells); len(cells) == 0 {
			return nil
		}
		buf = append(buf[:0], `<row r="`...)
		buf = strconv.AppendInt(buf, int64(num), 10)
		buf = append(buf, `">`...)
		for _, c := range cells {
			buf = append(buf, `<c r="`...)
			buf = appendCellName(buf, c.Col, num)
			s := table.TrimSpace(c.Text)
			if v, ok := table.ParseNumber(s, decimalComma); ok && num > headerRow && !strings.HasSuffix(s, "%") && !leadingZero(s) {
				buf = append(buf, `"><v>`...)
				if _, plain := table.PlainDecimal(s, false); plain && !decimalComma {
					buf = append(buf, s...) // exactly v, unformatted
				} else {
					buf = strconv.AppendFloat(buf, v, 'f', -1, 64)
				}
				buf = append(buf, `</v></c>`...)
				continue
			}
			buf = appendInlineString(buf, c.Text)
		}
		buf = append(buf, `</row>`...)
		_, err := bw.Write(buf)
		return err
	})
	if err != nil {
		return 0, err
	}
	bw.WriteString("</sheetData>")
	bw.Write(empty[at+len(tag):])
	return cut, bw.Flush()
}

// eachRecord calls put with every record of a text file, its row number
// and the header row found as the reader finds it (0 for none), so that
// the rows down to the header stay text and a name such as "2024" or "00"
// keeps its form.
func eachRecord(rows table.RowSource, put func(num, headerRow int, cells []table.RawCell) error) error {
	var buf []table.BufRow
	for len(buf) < table.HeaderScanRows {
		num, cells, err := rows.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		if !table.IsBlankRow(cells) {
			buf = append(buf, table.BufRow{Num: num, Cells: table.KeptCells(rows, cells)})
		}
	}
	headerRow := 0
	if hi := table.DetectHeader(buf); hi >= 0 {
		headerRow = buf[hi].Num
	}
	for _, r := range buf {
		if err := put(r.Num, headerRow, r.Cells); err != nil {
			return err
		}
	}
	for {
		num, cells, err := rows.Next()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
		if err := put(num, headerRow, cells); err != nil {
			return err
		}
	}
}

// appendCellName appends the A1 name of a 0-based column and a row.
func appendCellName(buf []byte, col, row int) []byte {
	var letters [4]byte
	n := len(letters)
	for col++; col > 0; col = (col - 1) / 26 {
		n--
		letters[n] = byte('A' + (col-1)%26)
	}
	buf = append(buf, letters[n:]...)
	return strconv.AppendInt(buf, int64(row), 10)
}

// appendInlineString finishes a cell holding text as excelize's
// setInlineStr does: at most 32,767 UTF-16 units, xml:space="preserve"
// when it starts or ends with white space, XML-escaped (line feeds kept),
// and _xHHHH_ sequences escaped.
func appendInlineString(buf []byte, s string) []byte {
	if len(s) > excelize.TotalCellChars {
		s = truncateUTF16(s, excelize.TotalCellChars)
	}
	buf = append(buf, `" t="inlineStr"><is><t`...)
	if s != "" {
		for _, b := range []byte{9, 10, 13, 32} {
			if s[0] == b || s[len(s)-1] == b {
				buf = append(buf, ` xml:space="preserve"`...)
				break
			}
		}
	}
	buf = append(buf, '>')
	var esc bytes.Buffer
	xml.EscapeText(&esc, []byte(s))
	v := strings.ReplaceAll(esc.String(), "&#xA;", "\n")
	if strings.Contains(v, "_x") {
		v = bstrMarshal(v)
	}
	buf = append(buf, v...)
	return append(buf, `</t></is></c>`...)
}

// truncateUTF16 cuts s to at most n UTF-16 units.
func truncateUTF16(s string, n int) string {
	units := 0
	for i, r := range s {
		units += len(utf16.Encode([]rune{r}))
		if units > n {
			return s[:i]
		}
	}
	return s
}

var (
	bstrExp       = regexp.MustCompile(`_x[a-fA-F\d]{4}_`)
	bstrEscapeExp = regexp.MustCompile(`x[a-fA-F\d]{4}_`)
)

// bstrMarshal escapes the _xHHHH_ sequences that a spreadsheet program
// would read as a character code, as excelize does (v2.11.1 source,
// lib.go, bstrMarshal, ported line for line).
func bstrMarshal(s string) (result string) {
	matches, l, cursor := bstrExp.FindAllStringSubmatchIndex(s, -1), len(s), 0
	for _, match := range matches {
		result += s[cursor:match[0]]
		subStr := s[match[0]:match[1]]
		if subStr == "_x005F_" {
			cursor = match[1]
			if match[1]+6 <= l && bstrEscapeExp.MatchString(s[match[1]:match[1]+6]) {
				if _, err := strconv.Unquote(`"\u` + s[match[1]+1:match[1]+5] + `"`); err == nil {
					result += subStr + "x005F" + subStr
					continue
				}
			}
			result += subStr + "x005F_"
			continue
		}
		cursor = match[1]
		if _, err := strconv.Unquote(`"\u` + s[match[0]+2:match[1]-1] + `"`); err == nil {
			result += "_x005F" + subStr
		}
	}
	if cursor < l {
		result += s[cursor:]
	}
	return result
}
