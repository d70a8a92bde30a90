package save

import (
	"bytes"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
	"slopewise/internal/io/iotest"
)

// These tests pin down what excelize v2.11.1 itself does to a workbook,
// the facts the writer is built around. If an upgrade changes one of
// them, the writer's guards can be revisited.

// excelizeResave opens a workbook's bytes with excelize, lets change act,
// and returns the saved bytes.
func excelizeResave(t *testing.T, b []byte, change func(*excelize.File)) []byte {
	t.Helper()
	f, err := excelize.OpenReader(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if change != nil {
		change(f)
	}
	var out bytes.Buffer
	if _, err := f.WriteTo(&out); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

func partOf(t *testing.T, b []byte, name string) string {
	t.Helper()
	dir := t.TempDir()
	return string(iotest.ZipParts(t, iotest.WriteFile(t, dir, "x.xlsx", b))[name])
}

// excelize v2.11.1 source, excelize.go workSheetReader and sheet.go
// workSheetWriter: a sheet read through a getter is kept in memory and
// written back re-serialised.
func TestExcelizeGetterRewritesSheet(t *testing.T) {
	orig := iotest.SimpleBook().Bytes(t)
	untouched := excelizeResave(t, orig, nil)
	read := excelizeResave(t, orig, func(f *excelize.File) {
		if _, err := f.GetCellValue("Data", "A1"); err != nil {
			t.Fatal(err)
		}
	})
	sheet := "xl/worksheets/sheet1.xml"
	if partOf(t, untouched, sheet) != partOf(t, orig, sheet) {
		t.Error("a save without getters changed the sheet")
	}
	if partOf(t, read, sheet) == partOf(t, orig, sheet) {
		t.Error("a getter no longer rewrites the sheet on save; the fresh-File rule may be relaxed")
	}
}

// excelize v2.11.1 source, xmlWorkbook.go and xmlStyles.go: the features
// that scanHazards refuses are lost by a plain open and save.
func TestExcelizeLosesFeatures(t *testing.T) {
	cases := []struct {
		name, part, marker string
		book               func(t *testing.T) []byte
	}{
		{"file sharing", "xl/workbook.xml", `readOnlyRecommended="1"`, func(t *testing.T) []byte {
			return iotest.WithWorkbookXML(`<fileSharing readOnlyRecommended="1"/>`).Bytes(t)
		}},
		{"structure password", "xl/workbook.xml", `workbookPassword="CC3D"`, func(t *testing.T) []byte {
			return iotest.WithWorkbookXML(`<workbookProtection workbookPassword="CC3D" lockStructure="1"/>`).Bytes(t)
		}},
		{"xlm names", "xl/workbook.xml", `xlm="1"`, func(t *testing.T) []byte {
			return iotest.WithWorkbookXML(`<definedName name="Auto_Open" xlm="1">Macro1!$A$1</definedName>`).Bytes(t)
		}},
		{"date compatibility", "xl/workbook.xml", `dateCompatibility="0"`, func(t *testing.T) []byte {
			return iotest.WithWorkbookXML(`<workbookPr dateCompatibility="0"/>`).Bytes(t)
		}},
		{"ole size", "xl/workbook.xml", `ref="A1:D10"`, func(t *testing.T) []byte {
			return iotest.WithWorkbookXML(`<oleSize ref="A1:D10"/>`).Bytes(t)
		}},
		{"dxf extension list", "xl/styles.xml", `uri="{x}"`, func(t *testing.T) []byte {
			return iotest.ReplacePart(t, iotest.SimpleBook().Bytes(t), "xl/styles.xml", func(s string) string {
				return strings.Replace(s, "</styleSheet>", `<dxfs count="1"><dxf><font><b/></font><extLst><ext uri="{x}"/></extLst></dxf></dxfs></styleSheet>`, 1)
			})
		}},
	}
	for _, c := range cases {
		orig := c.book(t)
		if !strings.Contains(partOf(t, orig, c.part), c.marker) {
			t.Fatalf("%s: fixture lacks %s", c.name, c.marker)
		}
		if strings.Contains(partOf(t, excelizeResave(t, orig, nil), c.part), c.marker) {
			t.Errorf("%s: excelize now keeps %s; the refusal may be dropped", c.name, c.marker)
		}
	}
	// A signed workbook: the signature covers workbook.xml, which excelize
	// re-serialises, so the signature no longer matches.
	b := iotest.SimpleBook()
	b.Extra = map[string]string{"_xmlsignatures/sig1.xml": "<Signature/>"}
	orig := b.Bytes(t)
	if partOf(t, excelizeResave(t, orig, nil), "xl/workbook.xml") == partOf(t, orig, "xl/workbook.xml") {
		t.Error("workbook.xml is no longer rewritten; a signature might survive")
	}
}

// excelize v2.11.1 source, sheet.go NewSheet: an existing name returns
// the existing sheet; a new part is named after the largest sheetId plus
// one without checking that the name is free.
func TestExcelizeNewSheet(t *testing.T) {
	f, err := excelize.OpenReader(bytes.NewReader(iotest.SimpleBook().Bytes(t)))
	if err != nil {
		t.Fatal(err)
	}
	idx, err := f.NewSheet("Data")
	if err != nil || idx != 0 || len(f.GetSheetList()) != 1 {
		t.Errorf("NewSheet on an existing name: index %d, sheets %v, %v", idx, f.GetSheetList(), err)
	}
	f.Close()

	moved := iotest.SheetPartMoved(t, iotest.SimpleBook().Bytes(t))
	out := excelizeResave(t, moved, func(f *excelize.File) {
		if _, err := f.NewSheet("Results"); err != nil {
			t.Fatal(err)
		}
	})
	if strings.Contains(partOf(t, out, "xl/worksheets/sheet2.xml"), "score") {
		t.Error("NewSheet no longer overwrites a part in use; checkFreeParts may be relaxed")
	}
}

// excelize v2.11.1 source, cell.go formatCellFloat and stream.go: the
// stream writer keeps 15 significant digits, and a flushed stream is
// written as it is, ignoring later changes to its sheet.
func TestExcelizeStreamWriter(t *testing.T) {
	f := excelize.NewFile()
	defer f.Close()
	sw, err := f.NewStreamWriter("Sheet1")
	if err != nil {
		t.Fatal(err)
	}
	if err := sw.SetRow("A1", []any{0.12345678901234567}); err != nil {
		t.Fatal(err)
	}
	if err := sw.Flush(); err != nil {
		t.Fatal(err)
	}
	if err := f.SetCellValue("Sheet1", "B1", 7); err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if _, err := f.WriteTo(&out); err != nil {
		t.Fatal(err)
	}
	sheet := partOf(t, out.Bytes(), "xl/worksheets/sheet1.xml")
	if !strings.Contains(sheet, "<v>0.123456789012345</v>") {
		t.Errorf("stream writer number: %s", sheet)
	}
	if strings.Contains(sheet, `r="B1"`) {
		t.Error("a change after Flush is now kept; the writer's second stage may be dropped")
	}
}
