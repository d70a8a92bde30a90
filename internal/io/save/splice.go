package save

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"fmt"
	"path"
	"strconv"
	"strings"

	"slopewise/internal/io/xlsx"
)

// removeSheet returns the workbook's bytes without the named worksheet,
// which must be the last sheet: its entry in the workbook, its sheet-scoped
// names, its relationship and content type, its part, and the drawing and
// pictures only it uses. Every other zip entry is copied unchanged, still
// compressed. excelize's DeleteSheet is not used because it re-selects the
// active sheet by loading every worksheet, which rewrites them on save
// (excelize v2.11.1 source: sheet.go DeleteSheet and SetActiveSheet).
func removeSheet(p *xlsx.Package, orig []byte, name string) ([]byte, error) {
	idx := -1
	for i, s := range p.Sheets {
		if s.Name == name {
			idx = i
		}
	}
	if idx != len(p.Sheets)-1 {
		return nil, fmt.Errorf("sheet %q is not the last sheet", name)
	}
	part, rid := p.Parts[name], p.RIDs[name]
	drop := map[string]bool{strings.ToLower(part): true}
	relsOf := func(part string) string {
		return path.Join(path.Dir(part), "_rels", path.Base(part)+".rels")
	}
	// The sheet's own relationships: drawings, and through them pictures.
	var sheetRels xlsx.XMLRels
	if err := p.DecodePart(relsOf(part), &sheetRels); err == nil {
		drop[strings.ToLower(relsOf(part))] = true
		for _, r := range sheetRels.Rels {
			target := path.Join(path.Dir(part), r.Target)
			if !strings.HasSuffix(r.Type, "/drawing") {
				continue
			}
			drop[strings.ToLower(target)] = true
			var drawingRels xlsx.XMLRels
			if err := p.DecodePart(relsOf(target), &drawingRels); err == nil {
				drop[strings.ToLower(relsOf(target))] = true
				for _, dr := range drawingRels.Rels {
					if strings.HasSuffix(dr.Type, "/image") {
						drop[strings.ToLower(path.Join(path.Dir(target), dr.Target))] = true
					}
				}
			}
		}
	}
	// A picture that another part still uses stays.
	for _, f := range p.Zip.File {
		lower := strings.ToLower(f.Name)
		if drop[lower] || !strings.HasSuffix(lower, ".rels") {
			continue
		}
		var rels xlsx.XMLRels
		if err := p.DecodePart(f.Name, &rels); err != nil {
			continue
		}
		for _, r := range rels.Rels {
			owner := path.Dir(path.Dir(f.Name))
			target := strings.ToLower(path.Join(owner, r.Target))
			if strings.HasPrefix(target, "xl/media/") {
				delete(drop, target)
			}
		}
	}
	wbRels := relsOf(p.WorkbookPart)
	edits := map[string]func([]byte) []byte{
		strings.ToLower(p.WorkbookPart): func(b []byte) []byte {
			return cutElements(b, func(t xml.StartElement) bool {
				switch t.Name.Local {
				case "sheet":
					return xlsx.Attr(t, "name") == name
				case "definedName":
					return xlsx.Attr(t, "localSheetId") == strconv.Itoa(idx)
				}
				return false
			})
		},
		strings.ToLower(wbRels): func(b []byte) []byte {
			return cutElements(b, func(t xml.StartElement) bool {
				return t.Name.Local == "Relationship" && xlsx.Attr(t, "Id") == rid
			})
		},
		"[content_types].xml": func(b []byte) []byte {
			return cutElements(b, func(t xml.StartElement) bool {
				return t.Name.Local == "Override" && drop[strings.ToLower(strings.TrimPrefix(xlsx.Attr(t, "PartName"), "/"))]
			})
		},
	}
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	for _, f := range p.Zip.File {
		lower := strings.ToLower(strings.ReplaceAll(f.Name, "\\", "/"))
		if drop[lower] {
			continue
		}
		if edit, ok := edits[lower]; ok {
			body, err := readLimited(f, p.LimitXML)
			if err != nil {
				return nil, err
			}
			w, err := zw.CreateHeader(&zip.FileHeader{Name: f.Name, Method: zip.Deflate, Modified: f.Modified})
			if err != nil {
				return nil, err
			}
			if _, err := w.Write(edit(body)); err != nil {
				return nil, err
			}
			continue
		}
		if err := xlsx.CopyRaw(zw, f); err != nil {
			return nil, err
		}
	}
	if err := zw.Close(); err != nil {
		return nil, err
	}
	return out.Bytes(), nil
}

// cutElements removes, byte for byte, each element for which match is
// true, leaving the rest of the document exactly as it was.
func cutElements(body []byte, match func(xml.StartElement) bool) []byte {
	dec := xml.NewDecoder(bytes.NewReader(body))
	var out bytes.Buffer
	last := int64(0)
	for {
		start := dec.InputOffset()
		tok, err := dec.RawToken()
		if err != nil {
			break
		}
		t, ok := tok.(xml.StartElement)
		if !ok || !match(t) {
			continue
		}
		depth := 1
		for depth > 0 {
			tok, err := dec.RawToken()
			if err != nil {
				return body
			}
			switch tok.(type) {
			case xml.StartElement:
				depth++
			case xml.EndElement:
				depth--
			}
		}
		out.Write(body[last:start])
		last = dec.InputOffset()
	}
	out.Write(body[last:])
	return out.Bytes()
}
