package save

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"io"
	"strings"

	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// hazard is a feature of a workbook that excelize v2.11.1 does not carry
// through a save, found by reading the zip parts directly.
type hazard struct {
	feature string
	// breaks is true when a rewritten file would be broken rather than
	// merely lose the feature; then not even a copy is written.
	breaks bool
}

// scanHazards looks for the features that a save through excelize drops
// or breaks. Each was found in the excelize v2.11.1 source and is checked
// in write_test.go:
//   - xmlWorkbook.go maps workbook <fileSharing> and <oleSize> to an empty
//     extension list, so their attributes (read-only recommended, the
//     password to modify, the embedded-object area) are lost;
//   - xlsxWorkbookProtection has no workbookPassword attribute;
//   - xlsxDefinedName spells the xlm attribute "xml", so Excel 4.0 macro
//     names lose their mark;
//   - (xlsxWorkbookPr has no dateCompatibility attribute: settings.go puts
//     it back, with the other workbookPr and calcPr attributes;)
//   - xlsxDxf maps the extension list of differential formats to an
//     unrelated type, dropping its content;
//   - Strict Open XML namespaces are rewritten in some parts only, which
//     leaves a mixed, broken package;
//   - a digital signature (_xmlsignatures/) no longer matches the parts
//     that are re-serialised.
func scanHazards(zr *zip.Reader, limit int64) ([]hazard, error) {
	var out []hazard
	seen := map[string]bool{}
	add := func(h hazard) {
		if !seen[h.feature] {
			seen[h.feature] = true
			out = append(out, h)
		}
	}
	for _, f := range zr.File {
		name := strings.ToLower(strings.ReplaceAll(f.Name, "\\", "/"))
		switch {
		case strings.HasPrefix(name, "_xmlsignatures/"):
			add(hazard{feature: "a digital signature (it would no longer be valid)"})
		case name == "xl/workbook.xml":
			body, err := readLimited(f, limit)
			if err != nil {
				return nil, err
			}
			scanWorkbookXML(body, add)
		case name == "xl/styles.xml":
			body, err := readLimited(f, limit)
			if err != nil {
				return nil, err
			}
			scanStylesXML(body, add)
		}
	}
	return out, nil
}

func readLimited(f *zip.File, limit int64) ([]byte, error) {
	if f.UncompressedSize64 > uint64(limit) {
		return nil, table.ErrTooLarge
	}
	rc, err := f.Open()
	if err != nil {
		return nil, err
	}
	defer rc.Close()
	return io.ReadAll(io.LimitReader(rc, limit))
}

// strictNamespace starts every namespace of Strict Open XML (ECMA-376
// Part 1, 5th edition, Annex A).
const strictNamespace = "http://purl.oclc.org/ooxml/"

func scanWorkbookXML(body []byte, add func(hazard)) {
	if bytes.Contains(body, []byte(strictNamespace)) {
		add(hazard{feature: "the Strict Open XML format", breaks: true})
	}
	dec := xml.NewDecoder(bytes.NewReader(body))
	for {
		tok, err := dec.RawToken()
		if err != nil {
			return
		}
		t, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		switch t.Name.Local {
		case "fileSharing":
			add(hazard{feature: "a read-only recommendation or a password to modify"})
		case "workbookProtection":
			if xlsx.Attr(t, "workbookPassword") != "" {
				add(hazard{feature: "the password that protects the workbook's structure"})
			}
		case "definedName":
			if xlsx.Attr(t, "xlm") != "" {
				add(hazard{feature: "Excel 4.0 macro names"})
			}
		case "oleSize":
			add(hazard{feature: "the display area of the embedded object"})
		}
	}
}

func scanStylesXML(body []byte, add func(hazard)) {
	dec := xml.NewDecoder(bytes.NewReader(body))
	inDxf := 0
	for {
		tok, err := dec.RawToken()
		if err != nil {
			return
		}
		switch t := tok.(type) {
		case xml.StartElement:
			if t.Name.Local == "dxf" {
				inDxf++
			} else if t.Name.Local == "extLst" && inDxf > 0 {
				add(hazard{feature: "extended formatting in conditional formats"})
			}
		case xml.EndElement:
			if t.Name.Local == "dxf" && inDxf > 0 {
				inDxf--
			}
		}
	}
}
