package save

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"fmt"
	"io"
	"path"
	"slices"
	"strings"

	"slopewise/internal/io/xlsx"
)

// A styles part is optional (ECMA-376 Part 1, section 12.3.20), and its
// parts are too, but excelize v2.11.1 dereferences the fonts, fills,
// borders and cell formats of the styles when it adds a style (styles.go,
// NewStyle), and panics when one is missing. Before the results are
// drawn, ensureStyles gives the workbook a styles part that has them: a
// new part when there is none, and the missing elements, each with the
// defaults spreadsheet programs write, put into the existing part at
// their place in the schema's order. Nothing the original part holds is
// changed or dropped; excelize re-serialises the styles part anyway.

// styleOrder is the order of CT_Stylesheet's elements (ECMA-376 Part 1,
// section 18.8.39).
var styleOrder = []string{"numFmts", "fonts", "fills", "borders", "cellStyleXfs", "cellXfs", "cellStyles", "dxfs", "tableStyles", "colors", "extLst"}

// styleDefaults are the elements excelize needs, with the defaults that
// spreadsheet programs write for a new workbook (common practice).
var styleDefaults = map[string]string{
	"fonts":        `<fonts count="1"><font><sz val="11"/><name val="Calibri"/><family val="2"/></font></fonts>`,
	"fills":        `<fills count="2"><fill><patternFill patternType="none"/></fill><fill><patternFill patternType="gray125"/></fill></fills>`,
	"borders":      `<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders>`,
	"cellStyleXfs": `<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>`,
	"cellXfs":      `<cellXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/></cellXfs>`,
}

const stylesNamespace = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"

// ensureStyles returns base with a styles part excelize can add styles
// to, and whether it had to change anything.
func ensureStyles(base []byte, pkg *xlsx.Package) ([]byte, bool, error) {
	zr, err := zip.NewReader(bytes.NewReader(base), int64(len(base)))
	if err != nil {
		return nil, false, err
	}
	find := func(name string) *zip.File {
		for _, f := range zr.File {
			if strings.EqualFold(strings.ReplaceAll(f.Name, "\\", "/"), name) {
				return f
			}
		}
		return nil
	}
	replace := map[string][]byte{}
	var add []string
	if pkg.StylesPart != "" && find(pkg.StylesPart) != nil {
		f := find(pkg.StylesPart)
		body, err := readLimited(f, pkg.LimitXML)
		if err != nil {
			return nil, false, err
		}
		fixed, changed := completeStyles(body)
		if !changed {
			return base, false, nil
		}
		replace[f.Name] = fixed
	} else {
		name := "xl/styles.xml"
		for i := 1; find(name) != nil; i++ {
			name = fmt.Sprintf("xl/styles%d.xml", i)
		}
		var b strings.Builder
		b.WriteString(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?>` + "\n")
		b.WriteString(`<styleSheet xmlns="` + stylesNamespace + `">`)
		for _, el := range styleOrder {
			b.WriteString(styleDefaults[el])
		}
		b.WriteString(`</styleSheet>`)
		add = append(add, name)
		replace[name] = []byte(b.String())
		relsName := path.Join(path.Dir(pkg.WorkbookPart), "_rels", path.Base(pkg.WorkbookPart)+".rels")
		rels := find(relsName)
		if rels == nil {
			return nil, false, fmt.Errorf("the workbook has no relationships part %s", relsName)
		}
		body, err := readLimited(rels, pkg.LimitXML)
		if err != nil {
			return nil, false, err
		}
		target, _ := relTarget(pkg.WorkbookPart, name)
		rel := `<Relationship Id="` + freeRelID(body) + `" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="` + target + `"/>`
		if replace[rels.Name], err = insertBefore(body, "</Relationships>", rel); err != nil {
			return nil, false, err
		}
		ct := find("[Content_Types].xml")
		if ct == nil {
			return nil, false, fmt.Errorf("the workbook has no [Content_Types].xml")
		}
		body, err = readLimited(ct, pkg.LimitXML)
		if err != nil {
			return nil, false, err
		}
		over := `<Override PartName="/` + name + `" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>`
		if replace[ct.Name], err = insertBefore(body, "</Types>", over); err != nil {
			return nil, false, err
		}
	}
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	for _, f := range zr.File {
		body, ok := replace[f.Name]
		if !ok {
			if err := xlsx.CopyRaw(zw, f); err != nil {
				return nil, false, err
			}
			continue
		}
		if err := writeDeflated(zw, f.Name, body); err != nil {
			return nil, false, err
		}
	}
	for _, name := range add {
		if err := writeDeflated(zw, name, replace[name]); err != nil {
			return nil, false, err
		}
	}
	if err := zw.Close(); err != nil {
		return nil, false, err
	}
	return buf.Bytes(), true, nil
}

func writeDeflated(zw *zip.Writer, name string, body []byte) error {
	w, err := zw.CreateHeader(&zip.FileHeader{Name: name, Method: zip.Deflate})
	if err != nil {
		return err
	}
	_, err = w.Write(body)
	return err
}

// relTarget is the target of a relationship from part from to part to,
// relative to from's folder when to lies below it.
func relTarget(from, to string) (string, bool) {
	dir := path.Dir(from) + "/"
	if rest, ok := strings.CutPrefix(to, dir); ok {
		return rest, true
	}
	return "/" + to, false
}

// freeRelID is a relationship id the part does not use yet.
func freeRelID(rels []byte) string {
	id := "rIdSlopewiseStyles"
	for i := 2; bytes.Contains(rels, []byte(`"`+id+`"`)); i++ {
		id = fmt.Sprintf("rIdSlopewiseStyles%d", i)
	}
	return id
}

// insertBefore puts text before the last occurrence of end.
func insertBefore(body []byte, end, text string) ([]byte, error) {
	i := bytes.LastIndex(body, []byte(end))
	if i < 0 {
		return nil, fmt.Errorf("no %s to add to", end)
	}
	return slices.Concat(body[:i], []byte(text), body[i:]), nil
}

// completeStyles adds the elements of styleDefaults that a styles part
// lacks, each before the first element that follows it in styleOrder
// (or at the end), and expands a self-closing <styleSheet/>.
func completeStyles(body []byte) ([]byte, bool) {
	dec := xml.NewDecoder(bytes.NewReader(body))
	depth := 0
	present := map[string]bool{}
	type mark struct {
		name string
		at   int64
	}
	var children []mark
	var rootStart, rootEnd int64 = -1, -1
	selfClosing := false
	prefix := ""
	for {
		start := dec.InputOffset()
		tok, err := dec.RawToken()
		if err == io.EOF {
			break
		}
		if err != nil {
			return body, false
		}
		switch t := tok.(type) {
		case xml.StartElement:
			depth++
			if depth == 1 {
				rootStart = dec.InputOffset()
				prefix = t.Name.Space
				selfClosing = bytes.HasSuffix(bytes.TrimSpace(body[start:dec.InputOffset()]), []byte("/>"))
			}
			if depth == 2 {
				present[t.Name.Local] = true
				children = append(children, mark{t.Name.Local, start})
			}
		case xml.EndElement:
			if depth == 1 {
				rootEnd = start
			}
			depth--
		}
	}
	if rootStart < 0 {
		return body, false
	}
	var missing []string
	for _, el := range styleOrder {
		if styleDefaults[el] != "" && !present[el] {
			missing = append(missing, el)
		}
	}
	if len(missing) == 0 {
		return body, false
	}
	withPrefix := func(s string) string {
		if prefix == "" {
			return s
		}
		s = strings.ReplaceAll(s, "</", "</"+prefix+":")
		s = strings.ReplaceAll(s, "<", "<"+prefix+":")
		return strings.ReplaceAll(s, "<"+prefix+":/", "</")
	}
	out := append([]byte(nil), body...)
	if selfClosing {
		// <styleSheet .../> becomes <styleSheet ...></styleSheet>.
		tag := out[:rootStart]
		j := bytes.LastIndex(tag, []byte("/>"))
		name := "styleSheet"
		if prefix != "" {
			name = prefix + ":" + name
		}
		out = slices.Concat(out[:j], []byte("></"+name+">"), out[rootStart:])
		rootEnd = int64(j) + 1
	}
	// Insert from the end, so that earlier offsets stay right.
	type insert struct {
		at   int64
		text string
	}
	var ins []insert
	for _, el := range missing {
		at := rootEnd
		after := styleOrder[slices.Index(styleOrder, el)+1:]
		for _, c := range children {
			if slices.Contains(after, c.name) {
				at = c.at
				break
			}
		}
		ins = append(ins, insert{at, withPrefix(styleDefaults[el])})
	}
	for i := len(ins) - 1; i >= 0; i-- {
		x := ins[i]
		out = slices.Concat(out[:x.at], []byte(x.text), out[x.at:])
	}
	return out, true
}
