package workbook

import (
	"archive/zip"
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// rawBook builds a minimal workbook part by part, so that a test controls
// every cell's XML exactly (error cells, formulas without results, styles,
// the 1904 date system). The parts follow ECMA-376 Part 1; the minimal set
// that spreadsheet programs accept is common practice.
type rawBook struct {
	sheets   []rawSheet
	shared   []string
	numFmts  map[int]string // custom number formats by id
	xfs      []int          // cellXfs: number format id of each style
	date1904 bool
	extra    map[string]string // additional parts, verbatim
	wbExtra  string            // XML inserted into <workbook> before <sheets>
	wbAfter  string            // XML inserted into <workbook> after <sheets>
}

type rawSheet struct {
	name  string
	rows  []string // each: the inner XML of a <row>, r attributes included
	chart bool     // a chart sheet instead of a worksheet
	tail  string   // XML after <sheetData>, such as <tableParts>
	rels  string   // the sheet's relationships (inner XML), if any
}

// row makes a <row r="n"> with the given cells.
func row(n int, cells ...string) string {
	return fmt.Sprintf(`<row r="%d">%s</row>`, n, strings.Join(cells, ""))
}

// num, str, inl, errc, formulaNoValue make <c> elements.
func num(ref string, v string) string { return fmt.Sprintf(`<c r="%s"><v>%s</v></c>`, ref, v) }
func numS(ref string, s int, v string) string {
	return fmt.Sprintf(`<c r="%s" s="%d"><v>%s</v></c>`, ref, s, v)
}
func inl(ref, v string) string {
	return fmt.Sprintf(`<c r="%s" t="inlineStr"><is><t>%s</t></is></c>`, ref, v)
}
func errc(ref, v string) string { return fmt.Sprintf(`<c r="%s" t="e"><v>%s</v></c>`, ref, v) }
func formulaNoValue(ref, f string) string {
	return fmt.Sprintf(`<c r="%s"><f>%s</f></c>`, ref, f)
}
func boolc(ref string, v bool) string {
	b := "0"
	if v {
		b = "1"
	}
	return fmt.Sprintf(`<c r="%s" t="b"><v>%s</v></c>`, ref, b)
}
func sst(ref string, i int) string { return fmt.Sprintf(`<c r="%s" t="s"><v>%d</v></c>`, ref, i) }

func (b *rawBook) bytes(t testing.TB) []byte {
	t.Helper()
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	put := func(name, body string) {
		w, err := zw.Create(name)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := w.Write([]byte(body)); err != nil {
			t.Fatal(err)
		}
	}
	const ns = `xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"`
	var ct, rels, sheets strings.Builder
	ct.WriteString(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/><Override PartName="/xl/sharedStrings.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/>`)
	rels.WriteString(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rIdS" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/><Relationship Id="rIdT" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.xml"/>`)
	for i, s := range b.sheets {
		kind, dir, root := "worksheet", "worksheets", "worksheet"
		ctype := "application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"
		if s.chart {
			kind, dir, root = "chartsheet", "chartsheets", "chartsheet"
			ctype = "application/vnd.openxmlformats-officedocument.spreadsheetml.chartsheet+xml"
		}
		fmt.Fprintf(&ct, `<Override PartName="/xl/%s/sheet%d.xml" ContentType="%s"/>`, dir, i+1, ctype)
		fmt.Fprintf(&rels, `<Relationship Id="rId%d" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/%s" Target="%s/sheet%d.xml"/>`, i+1, kind, dir, i+1)
		fmt.Fprintf(&sheets, `<sheet name="%s" sheetId="%d" r:id="rId%d"/>`, s.name, i+1, i+1)
		body := fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><%s %s><sheetData>%s</sheetData>%s</%s>`, root, ns, strings.Join(s.rows, ""), s.tail, root)
		if s.rels != "" {
			put(fmt.Sprintf("xl/%s/_rels/sheet%d.xml.rels", dir, i+1), `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">`+s.rels+`</Relationships>`)
		}
		if s.chart {
			body = fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><chartsheet %s><sheetViews><sheetView workbookViewId="0"/></sheetViews></chartsheet>`, ns)
		}
		put(fmt.Sprintf("xl/%s/sheet%d.xml", dir, i+1), body)
	}
	ct.WriteString(`</Types>`)
	rels.WriteString(`</Relationships>`)
	put("[Content_Types].xml", ct.String())
	put("_rels/.rels", `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>`)
	pr := ""
	if b.date1904 {
		pr = `<workbookPr date1904="1"/>`
	}
	put("xl/workbook.xml", fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><workbook %s>%s%s<sheets>%s</sheets>%s</workbook>`, ns, pr, b.wbExtra, sheets.String(), b.wbAfter))
	put("xl/_rels/workbook.xml.rels", rels.String())
	var nf, xf strings.Builder
	if len(b.numFmts) > 0 {
		fmt.Fprintf(&nf, `<numFmts count="%d">`, len(b.numFmts))
		for id, code := range b.numFmts {
			fmt.Fprintf(&nf, `<numFmt numFmtId="%d" formatCode="%s"/>`, id, code)
		}
		nf.WriteString(`</numFmts>`)
	}
	xfs := append([]int{0}, b.xfs...)
	fmt.Fprintf(&xf, `<cellXfs count="%d">`, len(xfs))
	for _, id := range xfs {
		fmt.Fprintf(&xf, `<xf numFmtId="%d" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1"/>`, id)
	}
	xf.WriteString(`</cellXfs>`)
	put("xl/styles.xml", fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">%s<fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts><fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders><cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>%s</styleSheet>`, nf.String(), xf.String()))
	var ss strings.Builder
	fmt.Fprintf(&ss, `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="%d" uniqueCount="%d">`, len(b.shared), len(b.shared))
	for _, s := range b.shared {
		fmt.Fprintf(&ss, `<si><t xml:space="preserve">%s</t></si>`, s)
	}
	ss.WriteString(`</sst>`)
	put("xl/sharedStrings.xml", ss.String())
	for name, body := range b.extra {
		put(name, body)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// write saves the workbook into dir under name and returns its path.
func (b *rawBook) write(t testing.TB, dir, name string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, b.bytes(t), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// writeFile writes content to dir/name and returns the path.
func writeFile(t testing.TB, dir, name string, content []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, content, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}
