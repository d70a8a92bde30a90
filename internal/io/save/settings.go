package save

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"fmt"
	"io"
	"slices"
	"strings"

	"slopewise/internal/io/xlsx"
)

// keptSettings are the workbook-level elements whose attributes a save
// must keep. excelize v2.11.1 re-serialises workbook.xml from its own
// structures, which lack some attributes (xmlWorkbook.go: xlsxWorkbookPr
// has no dateCompatibility, which LibreOffice's "Office Open XML" filter
// writes on every workbook, seen in testdata/interop) and drop others
// that hold their default value. The attributes of these elements in the
// original that the new part lacks are put back as they were, and
// verifyRewrite checks that every one is there.
var keptSettings = []string{"workbookPr", "calcPr"}

// attrList is an element's attributes as written: the name with its
// prefix, and the value.
type attrList []struct{ name, value string }

func (l attrList) get(name string) (string, bool) {
	for _, a := range l {
		if a.name == name {
			return a.value, true
		}
	}
	return "", false
}

// settingTags finds the first start tag of each kept element: its
// attributes and the byte range of the tag.
func settingTags(body []byte) (map[string]attrList, map[string][2]int64) {
	attrs := map[string]attrList{}
	spans := map[string][2]int64{}
	dec := xml.NewDecoder(bytes.NewReader(body))
	for {
		start := dec.InputOffset()
		tok, err := dec.RawToken()
		if err != nil {
			return attrs, spans
		}
		t, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		for _, name := range keptSettings {
			if t.Name.Local != name {
				continue
			}
			if _, seen := attrs[name]; seen {
				continue
			}
			var l attrList
			for _, a := range t.Attr {
				n := a.Name.Local
				if a.Name.Space != "" {
					n = a.Name.Space + ":" + n
				}
				l = append(l, struct{ name, value string }{n, a.Value})
			}
			attrs[name] = l
			spans[name] = [2]int64{start, dec.InputOffset()}
		}
	}
}

// missingSettings lists, by element, the attributes of orig's kept
// elements that body lacks or holds with another value.
func missingSettings(orig, body []byte) map[string]attrList {
	want, _ := settingTags(orig)
	have, _ := settingTags(body)
	out := map[string]attrList{}
	for name, attrs := range want {
		for _, a := range attrs {
			if strings.HasPrefix(a.name, "xmlns") {
				continue
			}
			if v, ok := have[name].get(a.name); !ok || !sameSetting(v, a.value) {
				out[name] = append(out[name], a)
			}
		}
	}
	return out
}

// sameSetting compares two values of an attribute, reading XML Schema
// booleans by meaning ("1" is "true").
func sameSetting(a, b string) bool {
	norm := func(v string) string {
		switch strings.TrimSpace(v) {
		case "1", "true":
			return "true"
		case "0", "false":
			return "false"
		}
		return v
	}
	return a == b || norm(a) == norm(b)
}

// restoreSettings writes the attributes body lacks into its tags. An
// attribute body holds with another value is not changed: verifyRewrite
// then refuses the save.
func restoreSettings(orig, body []byte) ([]byte, bool) {
	missing := missingSettings(orig, body)
	if len(missing) == 0 {
		return body, false
	}
	have, spans := settingTags(body)
	type insert struct {
		at   int64
		text string
	}
	var ins []insert
	for name, attrs := range missing {
		var b strings.Builder
		for _, a := range attrs {
			if _, ok := have[name].get(a.name); ok {
				continue
			}
			b.WriteString(" " + a.name + `="`)
			xml.EscapeText(&b, []byte(a.value))
			b.WriteString(`"`)
		}
		if b.Len() == 0 {
			continue
		}
		span, ok := spans[name]
		if !ok {
			at, ok := settingPlace(body, name)
			if !ok {
				continue
			}
			ins = append(ins, insert{at, "<" + name + b.String() + "/>"})
			continue
		}
		end := span[1] - 1 // the tag's '>'
		if body[end-1] == '/' {
			end--
		}
		ins = append(ins, insert{end, b.String()})
	}
	if len(ins) == 0 {
		return body, false
	}
	out := append([]byte(nil), body...)
	// Insert from the end, so that earlier offsets stay right.
	for i := 0; i < len(ins); i++ {
		for j := i + 1; j < len(ins); j++ {
			if ins[j].at > ins[i].at {
				ins[i], ins[j] = ins[j], ins[i]
			}
		}
	}
	for _, x := range ins {
		out = append(out[:x.at], append([]byte(x.text), out[x.at:]...)...)
	}
	return out, true
}

// settingPlace is where a kept element the new part lacks goes, in the
// order of CT_Workbook (ECMA-376 Part 1, section 18.2.27): workbookPr
// after fileVersion and fileSharing; calcPr after the elements that
// precede it, which excelize writes in order, so before the first of the
// elements that follow it.
func settingPlace(body []byte, name string) (int64, bool) {
	var before, after []string
	switch name {
	case "workbookPr":
		after = []string{"workbookProtection", "bookViews", "sheets"}
	case "calcPr":
		after = []string{"oleSize", "customWorkbookViews", "pivotCaches", "smartTagPr", "smartTagTypes", "webPublishing", "fileRecoveryPr", "webPublishObjects", "extLst"}
		before = []string{"definedNames", "sheets"}
	}
	dec := xml.NewDecoder(bytes.NewReader(body))
	depth := 0
	var lastEnd int64 = -1
	for {
		start := dec.InputOffset()
		tok, err := dec.RawToken()
		if err != nil {
			if lastEnd >= 0 {
				return lastEnd, true
			}
			return 0, false
		}
		switch t := tok.(type) {
		case xml.StartElement:
			depth++
			if depth == 2 && slices.Contains(after, t.Name.Local) {
				return start, true
			}
		case xml.EndElement:
			depth--
			if depth == 1 && slices.Contains(before, t.Name.Local) {
				lastEnd = dec.InputOffset()
			}
			if depth == 0 {
				if lastEnd >= 0 {
					return lastEnd, true
				}
				return start, true
			}
		}
	}
}

// keepSettings rewrites the workbook part of the file at tmp with the
// original's settings put back (restoreSettings); other parts are copied
// without unpacking.
func keepSettings(tmp, wbPart string, orig []byte) error {
	zr, err := zip.OpenReader(tmp)
	if err != nil {
		return err
	}
	defer zr.Close()
	var wb *zip.File
	for _, f := range zr.File {
		if strings.EqualFold(strings.ReplaceAll(f.Name, "\\", "/"), wbPart) {
			wb = f
		}
	}
	if wb == nil {
		return fmt.Errorf("the new file has no part %s", wbPart)
	}
	rc, err := wb.Open()
	if err != nil {
		return err
	}
	body, err := io.ReadAll(io.LimitReader(rc, 64<<20))
	rc.Close()
	if err != nil {
		return err
	}
	fixed, changed := restoreSettings(orig, body)
	if !changed {
		return nil
	}
	return rewritePart(tmp, zr, &zr.Reader, wb, fixed)
}

// rewritePart rewrites the zip file at tmp, read as zr through src, with
// the part's content replaced by body; every other part is copied
// unchanged. src is closed before the rename (replaceZipFile).
func rewritePart(tmp string, src io.Closer, zr *zip.Reader, part *zip.File, body []byte) error {
	return replaceZipFile(tmp, src, func(zw *zip.Writer) error {
		for _, f := range zr.File {
			if f != part {
				if err := xlsx.CopyRaw(zw, f); err != nil {
					return err
				}
				continue
			}
			hdr := f.FileHeader
			hdr.CompressedSize64, hdr.UncompressedSize64, hdr.CRC32 = 0, 0, 0
			hdr.Method = zip.Deflate
			w, err := zw.CreateHeader(&hdr)
			if err == nil {
				_, err = w.Write(body)
			}
			if err != nil {
				return err
			}
		}
		return nil
	})
}
