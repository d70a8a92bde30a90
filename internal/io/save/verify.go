package save

import (
	"archive/zip"
	"bytes"
	"crypto/sha256"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"sort"
	"strings"

	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// verifyRewrite re-opens the rewritten file and checks that every sheet of
// the original (but the replaced results sheet) is still there, in order,
// with the same cell values and formulas.
func verifyRewrite(orig []byte, tmpPath string, replaced string, limit, limitXML int64) error {
	before, err := zip.NewReader(bytes.NewReader(orig), int64(len(orig)))
	if err != nil {
		return &table.Error{Cause: table.ErrVerifyFailed, Underlying: err}
	}
	f, err := os.Open(tmpPath)
	if err != nil {
		return &table.Error{Cause: table.ErrVerifyFailed, Underlying: err}
	}
	defer f.Close()
	info, err := f.Stat()
	if err != nil {
		return &table.Error{Cause: table.ErrVerifyFailed, Underlying: err}
	}
	after, err := zip.NewReader(f, info.Size())
	if err != nil {
		return &table.Error{Cause: table.ErrVerifyFailed, Detail: "the new file is not a readable workbook", Underlying: err}
	}
	a := &xlsx.Package{Zip: before, Parts: map[string]string{}, Limit: limit, LimitXML: limitXML}
	b := &xlsx.Package{Zip: after, Parts: map[string]string{}, Limit: limit, LimitXML: limitXML}
	if err := a.ReadWorkbook(); err != nil {
		return err
	}
	if err := b.ReadWorkbook(); err != nil {
		return &table.Error{Cause: table.ErrVerifyFailed, Detail: "the new file's sheet list cannot be read", Underlying: err}
	}
	wbA, errA := readLimited(a.File(a.WorkbookPart), limitXML)
	wbB, errB := readLimited(b.File(b.WorkbookPart), limitXML)
	if errA != nil || errB != nil {
		return &table.Error{Cause: table.ErrVerifyFailed, Detail: "the workbook part cannot be read", Underlying: errors.Join(errA, errB)}
	}
	if lost := missingSettings(wbA, wbB); len(lost) > 0 {
		var names []string
		for el, attrs := range lost {
			for _, at := range attrs {
				names = append(names, el+" "+at.name)
			}
		}
		sort.Strings(names)
		return &table.Error{Cause: table.ErrVerifyFailed, Detail: "the workbook settings " + strings.Join(names, ", ") + " were not kept"}
	}
	sstA, err := xlsx.ReadSharedStrings(a)
	if err != nil {
		return err
	}
	sstB, err := xlsx.ReadSharedStrings(b)
	if err != nil {
		return &table.Error{Cause: table.ErrVerifyFailed, Underlying: err}
	}
	j := 0
	for _, s := range a.Sheets {
		if s.Name == replaced {
			continue
		}
		for j < len(b.Sheets) && b.Sheets[j].Name != s.Name {
			j++
		}
		if j == len(b.Sheets) {
			return &table.Error{Sheet: s.Name, Cause: table.ErrVerifyFailed, Detail: "the sheet is missing or out of order in the new file"}
		}
		if !s.Worksheet {
			continue
		}
		if sameStoredPart(a.File(a.Parts[s.Name]), b.File(b.Parts[s.Name])) && isPrefix(sstA, sstB) {
			continue // the same bytes, and every string they name unchanged
		}
		da, err := sheetDigest(a, a.Parts[s.Name], sstA)
		if err != nil {
			return &table.Error{Sheet: s.Name, Cause: table.ErrDamaged, Underlying: err}
		}
		db, err := sheetDigest(b, b.Parts[s.Name], sstB)
		if err != nil {
			return &table.Error{Sheet: s.Name, Cause: table.ErrVerifyFailed, Underlying: err}
		}
		if da != db {
			return &table.Error{Sheet: s.Name, Cause: table.ErrVerifyFailed, Detail: "its cells differ"}
		}
	}
	return nil
}

// sheetDigest hashes every cell of a worksheet: its reference, its type,
// its value (shared strings resolved, so a renumbered table still
// compares equal) and its formula with the formula's attributes.
func sheetDigest(p *xlsx.Package, part string, sst []string) ([32]byte, error) {
	h := sha256.New()
	rc, err := p.OpenPart(part, p.Limit)
	if err != nil {
		return [32]byte{}, err
	}
	defer rc.Close()
	dec := xlsx.NewXMLDecoder(rc)
	var typ string
	var in string // the element whose text is being read: "v", "f" or "t"
	var text bytes.Buffer
	for {
		tok, err := dec.RawToken()
		if err == io.EOF {
			break
		}
		if err != nil {
			return [32]byte{}, err
		}
		switch t := tok.(type) {
		case xml.StartElement:
			switch t.Name.Local {
			case "c":
				typ = xlsx.Attr(t, "t")
				fmt.Fprintf(h, "\x00c %s %s", xlsx.Attr(t, "r"), typ)
			case "f":
				fmt.Fprintf(h, "\x00f %s %s %s %s", xlsx.Attr(t, "t"), xlsx.Attr(t, "ref"), xlsx.Attr(t, "si"), xlsx.Attr(t, "ca"))
				in = "f"
				text.Reset()
			case "v", "t":
				in = t.Name.Local
				text.Reset()
			}
		case xml.CharData:
			if in != "" {
				text.Write(t)
			}
		case xml.EndElement:
			if t.Name.Local != in {
				continue
			}
			v := text.String()
			if in == "v" && typ == "s" {
				var i int
				if _, err := fmt.Sscan(v, &i); err == nil && i >= 0 && i < len(sst) {
					v = "s:" + sst[i]
				}
			}
			fmt.Fprintf(h, "\x00%s=%s", in, v)
			in = ""
		}
	}
	var sum [32]byte
	copy(sum[:], h.Sum(nil))
	return sum, nil
}

// sameStoredPart reports two zip entries whose stored (compressed) bytes
// are the same, as when a part is copied without being unpacked: then
// their content is the same, and the sheet need not be read cell by cell.
func sameStoredPart(a, b *zip.File) bool {
	if a == nil || b == nil || a.CRC32 != b.CRC32 || a.UncompressedSize64 != b.UncompressedSize64 ||
		a.CompressedSize64 != b.CompressedSize64 || a.Method != b.Method {
		return false
	}
	ra, err := a.OpenRaw()
	if err != nil {
		return false
	}
	rb, err := b.OpenRaw()
	if err != nil {
		return false
	}
	bufA, bufB := make([]byte, 1<<16), make([]byte, 1<<16)
	for {
		na, errA := io.ReadFull(ra, bufA)
		nb, errB := io.ReadFull(rb, bufB)
		if na != nb || !bytes.Equal(bufA[:na], bufB[:nb]) {
			return false
		}
		if errA != nil || errB != nil {
			return (errA == io.EOF || errA == io.ErrUnexpectedEOF) && (errB == io.EOF || errB == io.ErrUnexpectedEOF)
		}
	}
}

// isPrefix reports whether the shared strings a are the first ones of b,
// so that every index into a names the same string in b.
func isPrefix(a, b []string) bool {
	if len(a) > len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
