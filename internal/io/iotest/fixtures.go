package iotest

import (
	"archive/zip"
	"bytes"
	"encoding/binary"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf16"

	"github.com/xuri/excelize/v2"
	"slopewise/internal/io/sniff"
)

// rawBook builds a minimal workbook part by part, so that a test controls
// every cell's XML exactly (error cells, formulas without results, styles,
// the 1904 date system). The parts follow ECMA-376 Part 1; the minimal set
// that spreadsheet programs accept is common practice.
type RawBook struct {
	Sheets   []RawSheet
	Shared   []string
	numFmts  map[int]string // custom number formats by id
	Xfs      []int          // cellXfs: number format id of each style
	Date1904 bool
	Extra    map[string]string // additional parts, verbatim
	WbExtra  string            // XML inserted into <workbook> before <sheets>
	WbAfter  string            // XML inserted into <workbook> after <sheets>
}

type RawSheet struct {
	Name  string
	Rows  []string // each: the inner XML of a <row>, r attributes included
	Chart bool     // a chart sheet instead of a worksheet
	Tail  string   // XML after <sheetData>, such as <tableParts>
	Rels  string   // the sheet's relationships (inner XML), if any
}

// row makes a <row r="n"> with the given cells.
func Row(n int, cells ...string) string {
	return fmt.Sprintf(`<row r="%d">%s</row>`, n, strings.Join(cells, ""))
}

// num, str, inl, errc, formulaNoValue make <c> elements.
func Num(ref string, v string) string { return fmt.Sprintf(`<c r="%s"><v>%s</v></c>`, ref, v) }
func NumS(ref string, s int, v string) string {
	return fmt.Sprintf(`<c r="%s" s="%d"><v>%s</v></c>`, ref, s, v)
}
func Inl(ref, v string) string {
	return fmt.Sprintf(`<c r="%s" t="inlineStr"><is><t>%s</t></is></c>`, ref, v)
}
func Errc(ref, v string) string { return fmt.Sprintf(`<c r="%s" t="e"><v>%s</v></c>`, ref, v) }
func FormulaNoValue(ref, f string) string {
	return fmt.Sprintf(`<c r="%s"><f>%s</f></c>`, ref, f)
}
func Boolc(ref string, v bool) string {
	b := "0"
	if v {
		b = "1"
	}
	return fmt.Sprintf(`<c r="%s" t="b"><v>%s</v></c>`, ref, b)
}
func Sst(ref string, i int) string { return fmt.Sprintf(`<c r="%s" t="s"><v>%d</v></c>`, ref, i) }

func (b *RawBook) Bytes(t testing.TB) []byte {
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
	for i, s := range b.Sheets {
		kind, dir, root := "worksheet", "worksheets", "worksheet"
		ctype := "application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"
		if s.Chart {
			kind, dir, root = "chartsheet", "chartsheets", "chartsheet"
			ctype = "application/vnd.openxmlformats-officedocument.spreadsheetml.chartsheet+xml"
		}
		fmt.Fprintf(&ct, `<Override PartName="/xl/%s/sheet%d.xml" ContentType="%s"/>`, dir, i+1, ctype)
		fmt.Fprintf(&rels, `<Relationship Id="rId%d" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/%s" Target="%s/sheet%d.xml"/>`, i+1, kind, dir, i+1)
		fmt.Fprintf(&sheets, `<sheet name="%s" sheetId="%d" r:id="rId%d"/>`, s.Name, i+1, i+1)
		body := fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><%s %s><sheetData>%s</sheetData>%s</%s>`, root, ns, strings.Join(s.Rows, ""), s.Tail, root)
		if s.Rels != "" {
			put(fmt.Sprintf("xl/%s/_rels/sheet%d.xml.rels", dir, i+1), `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">`+s.Rels+`</Relationships>`)
		}
		if s.Chart {
			body = fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><chartsheet %s><sheetViews><sheetView workbookViewId="0"/></sheetViews></chartsheet>`, ns)
		}
		put(fmt.Sprintf("xl/%s/sheet%d.xml", dir, i+1), body)
	}
	ct.WriteString(`</Types>`)
	rels.WriteString(`</Relationships>`)
	put("[Content_Types].xml", ct.String())
	put("_rels/.rels", `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>`)
	pr := ""
	if b.Date1904 {
		pr = `<workbookPr date1904="1"/>`
	}
	put("xl/workbook.xml", fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><workbook %s>%s%s<sheets>%s</sheets>%s</workbook>`, ns, pr, b.WbExtra, sheets.String(), b.WbAfter))
	put("xl/_rels/workbook.xml.rels", rels.String())
	var nf, xf strings.Builder
	if len(b.numFmts) > 0 {
		fmt.Fprintf(&nf, `<numFmts count="%d">`, len(b.numFmts))
		for id, code := range b.numFmts {
			fmt.Fprintf(&nf, `<numFmt numFmtId="%d" formatCode="%s"/>`, id, code)
		}
		nf.WriteString(`</numFmts>`)
	}
	xfs := append([]int{0}, b.Xfs...)
	fmt.Fprintf(&xf, `<cellXfs count="%d">`, len(xfs))
	for _, id := range xfs {
		fmt.Fprintf(&xf, `<xf numFmtId="%d" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1"/>`, id)
	}
	xf.WriteString(`</cellXfs>`)
	put("xl/styles.xml", fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8" standalone="yes"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">%s<fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts><fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders><cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>%s</styleSheet>`, nf.String(), xf.String()))
	var ss strings.Builder
	fmt.Fprintf(&ss, `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="%d" uniqueCount="%d">`, len(b.Shared), len(b.Shared))
	for _, s := range b.Shared {
		fmt.Fprintf(&ss, `<si><t xml:space="preserve">%s</t></si>`, s)
	}
	ss.WriteString(`</sst>`)
	put("xl/sharedStrings.xml", ss.String())
	for name, body := range b.Extra {
		put(name, body)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// write saves the workbook into dir under name and returns its path.
func (b *RawBook) Write(t testing.TB, dir, name string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, b.Bytes(t), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// writeFile writes content to dir/name and returns the path.
func WriteFile(t testing.TB, dir, name string, content []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, content, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// simpleBook is a small valid workbook with one data sheet.
func SimpleBook() *RawBook {
	return &RawBook{Sheets: []RawSheet{{Name: "Data", Rows: []string{
		Row(1, Inl("A1", "id"), Inl("B1", "score")),
		Row(2, Num("A2", "1"), Num("B2", "2.5")),
		Row(3, Num("A3", "2"), Num("B3", "3.5")),
	}}}}
}

// withWorkbookXML returns a simple workbook whose workbook.xml gets extra
// XML before <sheets>.
func WithWorkbookXML(extra string) *RawBook {
	b := SimpleBook()
	b.WbExtra = extra
	return b
}

// visitsBook is a messy evaluator's sheet: a title in row 1, the header in
// row 3, numbers stored as text, hand-typed markers, error values and a
// formula that was never calculated.
func VisitsBook() *RawBook {
	b := &RawBook{
		Shared:  []string{"Site", "treated", "control", "North", "South", "East"},
		numFmts: map[int]string{164: `yyyy\-mm\-dd`},
		Xfs:     []int{164, 4}, // style 1: a custom date format; style 2: "#,##0.00"
	}
	rows := []string{
		Row(1, Inl("A1", "Home visits, spring round")),
		Row(3, Inl("A3", "ID"), Inl("B3", "Arm"), Sst("C3", 0), Inl("D3", "Score"), Inl("E3", ""), Inl("F3", "Visit date"), Inl("G3", "Score"), Inl("H3", "Flag")),
	}
	sites := []int{3, 4, 5}
	for i := 0; i < 12; i++ {
		r := 4 + i
		ref := func(col string) string { return fmt.Sprintf("%s%d", col, r) }
		arm := Sst(ref("B"), 1+i%2)
		score := NumS(ref("D"), 2, fmt.Sprintf("%.7f", 10+float64(i)*0.1234567))
		switch i {
		case 2:
			score = Inl(ref("D"), "N/A")
		case 3:
			score = Errc(ref("D"), "#DIV/0!")
		case 4:
			score = Inl(ref("D"), " 12.5 ") // a number stored as text
		case 5:
			score = Inl(ref("D"), "pending")
		case 6:
			score = FormulaNoValue(ref("D"), "INDIRECT(\"A6\")*2")
		case 7:
			score = ""
		}
		cells := []string{Num(ref("A"), fmt.Sprint(100+i)), arm, Sst(ref("C"), sites[i%3]), score, Errc(ref("E"), "#N/A"),
			NumS(ref("F"), 1, fmt.Sprint(45000+i)), Num(ref("G"), fmt.Sprint(i%4)), Boolc(ref("H"), i%3 == 0)}
		rows = append(rows, Row(r, cells...))
	}
	b.Sheets = []RawSheet{{Name: "Visits", Rows: rows}}
	return b
}

// oleFile builds a minimal OLE compound file holding the named streams,
// each 4096 bytes so that they sit in regular sectors. The layout follows
// "[MS-CFB] Compound File Binary File Format", sections 2.2 (header), 2.3
// (FAT) and 2.6 (directory entries), version 3 with 512-byte sectors.
func OleFile(streams ...string) []byte {
	const (
		sector     = 512
		streamSize = 4096
		endOfChain = 0xFFFFFFFE
		freeSect   = 0xFFFFFFFF
		fatSect    = 0xFFFFFFFD
		noStream   = 0xFFFFFFFF
	)
	perStream := streamSize / sector
	// Sector 0: FAT; sector 1: directory; then the streams.
	nSectors := 2 + perStream*len(streams)
	out := make([]byte, sector*(1+nSectors))
	le := binary.LittleEndian
	h := out[:sector]
	copy(h, sniff.OleSignature)
	le.PutUint16(h[24:], 0x003E) // minor version
	le.PutUint16(h[26:], 3)      // major version
	le.PutUint16(h[28:], 0xFFFE) // byte order
	le.PutUint16(h[30:], 9)      // sector shift: 512
	le.PutUint16(h[32:], 6)      // mini sector shift: 64
	le.PutUint32(h[44:], 1)      // FAT sectors
	le.PutUint32(h[48:], 1)      // first directory sector
	le.PutUint32(h[56:], 4096)   // mini stream cutoff
	le.PutUint32(h[60:], endOfChain)
	le.PutUint32(h[68:], endOfChain)
	le.PutUint32(h[76:], 0) // DIFAT[0]: the FAT is sector 0
	for i := 1; i < 109; i++ {
		le.PutUint32(h[76+4*i:], freeSect)
	}
	sec := func(i int) []byte { return out[sector*(1+i) : sector*(2+i)] }
	fat := sec(0)
	for i := 0; i < sector/4; i++ {
		le.PutUint32(fat[4*i:], freeSect)
	}
	le.PutUint32(fat[0:], fatSect)
	le.PutUint32(fat[4:], endOfChain)
	for s := range streams {
		first := 2 + s*perStream
		for k := 0; k < perStream; k++ {
			next := uint32(first + k + 1)
			if k == perStream-1 {
				next = endOfChain
			}
			le.PutUint32(fat[4*(first+k):], next)
		}
	}
	dir := sec(1)
	entry := func(i int, name string, typ byte, child, right uint32, start uint32, size uint64) {
		e := dir[128*i : 128*(i+1)]
		u := utf16.Encode([]rune(name))
		for j, c := range u {
			le.PutUint16(e[2*j:], c)
		}
		le.PutUint16(e[64:], uint16(2*(len(u)+1)))
		e[66] = typ
		e[67] = 1 // black
		le.PutUint32(e[68:], noStream)
		le.PutUint32(e[72:], right)
		le.PutUint32(e[76:], child)
		le.PutUint32(e[116:], start)
		le.PutUint64(e[120:], size)
	}
	entry(0, "Root Entry", 5, 1, noStream, endOfChain, 0)
	for s, name := range streams {
		right := uint32(noStream)
		if s+1 < len(streams) {
			right = uint32(s + 2)
		}
		entry(s+1, name, 2, noStream, right, uint32(2+s*perStream), streamSize)
	}
	for i := len(streams) + 1; i < 4; i++ {
		e := dir[128*i : 128*(i+1)]
		le.PutUint32(e[68:], noStream)
		le.PutUint32(e[72:], noStream)
		le.PutUint32(e[76:], noStream)
	}
	return out
}

// richWorkbook makes, with excelize, a workbook that uses what evaluators'
// workbooks use: several sheets, styles, merged cells, formulas with saved
// results, defined names, data validation, comments, a chart, a picture, a
// table, a pivot table, a protected sheet, cells whose display format
// hides digits and a macro project.
func RichWorkbook(t testing.TB, path string) {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	must(f.SetSheetName("Sheet1", "Visits"))
	_, err := f.NewSheet("Lookup")
	must(err)
	_, err = f.NewSheet("Locked")
	must(err)
	bold, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{"DDEBF7"}}})
	must(err)
	threeDec, err := f.NewStyle(&excelize.Style{CustomNumFmt: Ptr("0.000")})
	must(err)
	must(f.SetSheetRow("Visits", "A1", &[]any{"Person", "Arm", "Score", "Double"}))
	must(f.SetCellStyle("Visits", "A1", "D1", bold))
	for i := 0; i < 20; i++ {
		r := i + 2
		must(f.SetSheetRow("Visits", fmt.Sprintf("A%d", r), &[]any{i + 1, []string{"control", "treated"}[i%2], 0.1234567 + float64(i)/7}))
		must(f.SetCellFormula("Visits", fmt.Sprintf("D%d", r), fmt.Sprintf("C%d*2", r)))
		must(f.SetCellFloat("Visits", fmt.Sprintf("D%d", r), 2*(0.1234567+float64(i)/7), -1, 64))
		must(f.SetCellFormula("Visits", fmt.Sprintf("D%d", r), fmt.Sprintf("C%d*2", r)))
	}
	must(f.SetCellStyle("Visits", "C2", "C21", threeDec))
	must(f.MergeCell("Lookup", "A1", "C1"))
	must(f.SetCellValue("Lookup", "A1", "Arms and their labels"))
	must(f.SetSheetRow("Lookup", "A2", &[]any{"control", 0}))
	must(f.SetSheetRow("Lookup", "A3", &[]any{"treated", 1}))
	must(f.SetDefinedName(&excelize.DefinedName{Name: "Arms", RefersTo: "Lookup!$A$2:$A$3"}))
	dv := excelize.NewDataValidation(true)
	dv.Sqref = "B2:B21"
	must(dv.SetDropList([]string{"control", "treated"}))
	must(f.AddDataValidation("Visits", dv))
	must(f.AddComment("Visits", excelize.Comment{Cell: "C1", Author: "Evaluator", Text: "Scores from the spring round"}))
	must(f.AddChart("Visits", "F2", &excelize.Chart{
		Type:   excelize.Col,
		Series: []excelize.ChartSeries{{Name: "Visits!$C$1", Categories: "Visits!$A$2:$A$21", Values: "Visits!$C$2:$C$21"}},
	}))
	must(f.AddPictureFromBytes("Lookup", "E2", &excelize.Picture{Extension: ".png", File: PNG(t, 40, 30)}))
	must(f.AddTable("Lookup", &excelize.Table{Range: "A2:B3", Name: "ArmTable", ShowHeaderRow: Ptr(false)}))
	must(f.SetCellValue("Locked", "A1", "Do not edit"))
	must(f.ProtectSheet("Locked", &excelize.SheetProtectionOptions{Password: "secret", EditScenarios: false}))
	must(f.SetConditionalFormat("Visits", "C2:C21", []excelize.ConditionalFormatOptions{{Type: "data_bar", Criteria: "=", MinType: "min", MaxType: "max", BarColor: "#638EC6"}}))
	_, err = f.NewSheet("Pivot")
	must(err)
	must(f.AddPivotTable(&excelize.PivotTableOptions{
		DataRange:       "Visits!A1:C21",
		PivotTableRange: "Pivot!A1:D10",
		Rows:            []excelize.PivotTableField{{Data: "Arm"}},
		Data:            []excelize.PivotTableField{{Data: "Score", Subtotal: "Average", Name: "Mean score"}},
	}))
	vba := append(append([]byte{}, sniff.OleSignature...), make([]byte, 504)...)
	must(f.AddVBAProject(vba))
	must(f.SaveAs(path))
}

// Ptr returns a pointer to a copy of v.
func Ptr[T any](v T) *T { return &v }
