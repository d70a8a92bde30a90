package workbook

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"slopewise/internal/io/iotest"
)

// refusal is one bad input: how to make it, what to do with it, and the
// whole message expected, with {path} standing for the quoted file name.
type refusal struct {
	name  string
	make  func(t *testing.T, dir string) string
	opts  Options
	write bool // write results into it instead of reading it
	copy  bool // with write: to a copy beside it
	cause error
	want  string
}

func msg(cause error, detail string) string {
	if detail == "" {
		return "{path}: " + cause.Error()
	}
	return "{path}: " + cause.Error() + " (" + detail + ")"
}

func fileMaker(name string, content func(t *testing.T) []byte) func(*testing.T, string) string {
	return func(t *testing.T, dir string) string { return iotest.WriteFile(t, dir, name, content(t)) }
}

func bytesOf(s string) func(*testing.T) []byte { return func(*testing.T) []byte { return []byte(s) } }

func bookMaker(name string, b func() *iotest.RawBook) func(*testing.T, string) string {
	return func(t *testing.T, dir string) string { return b().Write(t, dir, name) }
}

var refusals = []refusal{
	{name: "old binary workbook", make: fileMaker("old.xls", func(*testing.T) []byte { return iotest.OleFile("Workbook") }),
		cause: ErrOldExcel, want: msg(ErrOldExcel, "")},
	{name: "password-protected workbook", make: fileMaker("secret.xlsx", func(*testing.T) []byte { return iotest.OleFile("EncryptionInfo", "EncryptedPackage") }),
		cause: ErrEncrypted, want: msg(ErrEncrypted, "")},
	{name: "OLE file that is no workbook", make: fileMaker("memo.xlsx", func(*testing.T) []byte { return iotest.OleFile("WordDocument") }),
		cause: ErrUnknownFormat, want: msg(ErrUnknownFormat, "an OLE container holding neither a workbook nor an encrypted package, such as a Word document")},
	{name: "OpenDocument spreadsheet", make: fileMaker("calc.ods", func(t *testing.T) []byte {
		return iotest.ZipOf(t, "mimetype", "application/vnd.oasis.opendocument.spreadsheet", "content.xml", "<office:document-content/>")
	}), cause: ErrOpenDocument, want: msg(ErrOpenDocument, "")},
	{name: "Apple Numbers file", make: fileMaker("budget.numbers", func(t *testing.T) []byte {
		return iotest.ZipOf(t, "Index/Document.iwa", "\x00\x01", "Metadata/Properties.plist", "x")
	}), cause: ErrNumbers, want: msg(ErrNumbers, "")},
	{name: "binary workbook", make: fileMaker("fast.xlsb", func(t *testing.T) []byte {
		return iotest.ZipOf(t, "[Content_Types].xml", "<Types/>", "xl/workbook.bin", "\x83\x01")
	}), cause: ErrBinaryWorkbook, want: msg(ErrBinaryWorkbook, "")},
	{name: "zip archive of photos", make: fileMaker("photos.xlsx", func(t *testing.T) []byte { return iotest.ZipOf(t, "a.jpg", "jpeg") }),
		cause: ErrNotWorkbook, want: msg(ErrNotWorkbook, "")},
	{name: "Word document named as a workbook", make: fileMaker("report.xlsx", func(t *testing.T) []byte {
		return iotest.ZipOf(t, "[Content_Types].xml", "<Types/>", "word/document.xml", "<w:document/>")
	}), cause: ErrNotWorkbook, want: msg(ErrNotWorkbook, "it is a Word document")},
	{name: "truncated workbook", make: func(t *testing.T, dir string) string {
		b := iotest.SimpleBook().Bytes(t)
		return iotest.WriteFile(t, dir, "cut.xlsx", b[:len(b)/2])
	}, cause: ErrDamaged, want: msg(ErrDamaged, "")},
	{name: "text file named as a workbook", make: fileMaker("fake.xlsx", bytesOf("id,score\n1,2\n")),
		cause: ErrDamaged, want: msg(ErrDamaged, "it does not start like a workbook")},
	{name: "empty file", make: fileMaker("empty.csv", bytesOf("")),
		cause: ErrEmptyFile, want: msg(ErrEmptyFile, "")},
	{name: "text file of blank lines", make: fileMaker("blank.csv", bytesOf("\n\n  \n")),
		cause: ErrEmptyFile, want: msg(ErrEmptyFile, "it holds no text")},
	{name: "sheet with no cells", make: bookMaker("nothing.xlsx", func() *iotest.RawBook {
		return &iotest.RawBook{Sheets: []iotest.RawSheet{{Name: "Empty"}}}
	}), cause: ErrEmptySheet, want: `{path}, sheet "Empty": ` + ErrEmptySheet.Error()},
	{name: "header-only sheet", make: bookMaker("header.xlsx", func() *iotest.RawBook {
		return &iotest.RawBook{Sheets: []iotest.RawSheet{{Name: "Plan", Rows: []string{iotest.Row(2, iotest.Inl("A2", "id"), iotest.Inl("B2", "score"))}}}}
	}), cause: ErrNoDataRows, want: `{path}, sheet "Plan": ` + ErrNoDataRows.Error() + " (the header is row 2)"},
	{name: "header-only text file", make: fileMaker("header.csv", bytesOf("id,score,group\n")),
		cause: ErrNoDataRows, want: msg(ErrNoDataRows, "the header is row 1")},
	{name: "folder instead of a file", make: func(t *testing.T, dir string) string {
		p := filepath.Join(dir, "data.xlsx")
		if err := os.Mkdir(p, 0o755); err != nil {
			t.Fatal(err)
		}
		return p
	}, cause: ErrIsFolder, want: msg(ErrIsFolder, "")},
	{name: "file that does not exist", make: func(t *testing.T, dir string) string { return filepath.Join(dir, "gone.xlsx") },
		cause: ErrNotFound, want: msg(ErrNotFound, "")},
	{name: "ragged text row", make: fileMaker("ragged.csv", bytesOf("id,score\n1,2\n2,3,oops\n")),
		cause: ErrRaggedRow, want: `{path}, line 3: ` + ErrRaggedRow.Error() + " (the header has 2 columns; this row has a value in column 3)"},
	{name: "neither UTF-8 nor Windows-1252", make: fileMaker("bytes.csv", bytesOf("id,name\n1,caf\xc3\n2,\x81x\n")),
		cause: ErrNotText, want: msg(ErrNotText, "it is neither UTF-8 nor Windows-1252; the first byte that fits neither is on line 3")},
	{name: "binary file named .csv", make: fileMaker("image.csv", bytesOf("PK\x01\x02\x00\x00binary")),
		cause: ErrNotText, want: msg(ErrNotText, "it contains a zero byte at line 1")},
	{name: "unclosed quote", make: fileMaker("quote.csv", bytesOf("id,note\n1,\"open\n2,fine\n")),
		cause: ErrBadQuote, want: `{path}, line 2: ` + ErrBadQuote.Error()},
	{name: "sheet that does not exist", make: bookMaker("a.xlsx", iotest.SimpleBook), opts: Options{Sheet: "Visits"},
		cause: ErrSheetNotFound, want: `{path}, sheet "Visits": ` + ErrSheetNotFound.Error() + ` (the sheets are "Data")`},
	{name: "chart sheet", make: bookMaker("chart.xlsx", func() *iotest.RawBook {
		b := iotest.SimpleBook()
		b.Sheets = append(b.Sheets, iotest.RawSheet{Name: "Plot", Chart: true})
		return b
	}), opts: Options{Sheet: "Plot"}, cause: ErrNotWorksheet, want: `{path}, sheet "Plot": ` + ErrNotWorksheet.Error()},
	{name: "workbook past the size limit", make: bookMaker("big.xlsx", iotest.SimpleBook), opts: Options{UnzipSizeLimit: 1000},
		cause: ErrTooLarge, want: msg(ErrTooLarge, "the limit is 1000 bytes")},
	{name: "file of unknown kind", make: fileMaker("blob.bin", bytesOf("\x7fELF\x02\x01\x01\x00")),
		cause: ErrUnknownFormat, want: msg(ErrUnknownFormat, "")},
	{name: "broken sheet XML", make: bookMaker("broken.xlsx", func() *iotest.RawBook {
		b := iotest.SimpleBook()
		b.Sheets[0].Rows = append(b.Sheets[0].Rows, `<row r="4"><c r="A4"><v>1</v></row>`)
		return b
	}), cause: ErrDamaged, want: `{path}, sheet "Data", row 4: ` + ErrDamaged.Error()},
	{name: "shared text index out of range", make: bookMaker("sst.xlsx", func() *iotest.RawBook {
		b := iotest.SimpleBook()
		b.Sheets[0].Rows = append(b.Sheets[0].Rows, iotest.Row(4, iotest.Sst("A4", 7)))
		return b
	}), cause: ErrUnusual, want: `{path}, sheet "Data", cell A4: ` + ErrUnusual.Error() + ` (the cell names shared text number "7", but the workbook's table of shared text has 0 entries)`},
	{name: "a number cell holding text", make: bookMaker("nan.xlsx", func() *iotest.RawBook {
		b := iotest.SimpleBook()
		b.Sheets[0].Rows = append(b.Sheets[0].Rows, iotest.Row(4, iotest.Num("B4", "twelve")))
		return b
	}), cause: ErrUnusual, want: `{path}, sheet "Data", cell B4: ` + ErrUnusual.Error() + ` (the cell is stored as a number but holds "twelve")`},
	{name: "a cell type no workbook uses", make: bookMaker("type.xlsx", func() *iotest.RawBook {
		b := iotest.SimpleBook()
		b.Sheets[0].Rows = append(b.Sheets[0].Rows, iotest.Row(4, `<c r="B4" t="money"><v>1</v></c>`))
		return b
	}), cause: ErrUnusual, want: `{path}, sheet "Data", cell B4: ` + ErrUnusual.Error() + ` (the cell has the type "money", which is none of the types a workbook may use)`},
	{name: "header row below the data", make: bookMaker("a.xlsx", iotest.SimpleBook), opts: Options{HeaderRow: 9},
		cause: ErrHeaderOutside, want: `{path}, sheet "Data": ` + ErrHeaderOutside.Error() + " (row 9 was asked for; the last row with values is row 3)"},

	// Writing.
	{name: "workbook open in Excel", write: true, make: func(t *testing.T, dir string) string {
		iotest.WriteFile(t, dir, "~$book.xlsx", []byte("owner"))
		return iotest.SimpleBook().Write(t, dir, "book.xlsx")
	}, cause: ErrOpenElsewhere, want: msg(ErrOpenElsewhere, "a lock file is beside it: ~$book.xlsx")},
	{name: "workbook open in LibreOffice", write: true, make: func(t *testing.T, dir string) string {
		iotest.WriteFile(t, dir, ".~lock.book.xlsx#", []byte("owner"))
		return iotest.SimpleBook().Write(t, dir, "book.xlsx")
	}, cause: ErrOpenElsewhere, want: msg(ErrOpenElsewhere, "a lock file is beside it: .~lock.book.xlsx#")},
	{name: "read-only recommended", write: true, make: bookMaker("shared.xlsx", func() *iotest.RawBook {
		return iotest.WithWorkbookXML(`<fileSharing readOnlyRecommended="1"/>`)
	}), cause: ErrWouldLose, want: msg(ErrWouldLose, "it uses a read-only recommendation or a password to modify")},
	{name: "structure password", write: true, make: bookMaker("locked.xlsx", func() *iotest.RawBook {
		return iotest.WithWorkbookXML(`<workbookProtection workbookPassword="CC3D" lockStructure="1"/>`)
	}), cause: ErrWouldLose, want: msg(ErrWouldLose, "it uses the password that protects the workbook's structure")},
	{name: "Excel 4.0 macro names", write: true, make: bookMaker("xlm.xlsx", func() *iotest.RawBook {
		return iotest.WithWorkbookXML(`<definedName name="Auto_Open" xlm="1">Macro1!$A$1</definedName>`)
	}), cause: ErrWouldLose, want: msg(ErrWouldLose, "it uses Excel 4.0 macro names")},
	{name: "extended conditional format styles", write: true, make: func(t *testing.T, dir string) string {
		b := iotest.SimpleBook().Bytes(t)
		b = iotest.ReplacePart(t, b, "xl/styles.xml", func(s string) string {
			return strings.Replace(s, "</styleSheet>", `<dxfs count="1"><dxf><font><b/></font><extLst><ext uri="{x}"/></extLst></dxf></dxfs></styleSheet>`, 1)
		})
		return iotest.WriteFile(t, dir, "dxf.xlsx", b)
	}, cause: ErrWouldLose, want: msg(ErrWouldLose, "it uses extended formatting in conditional formats")},
	{name: "embedded object area", write: true, make: bookMaker("ole.xlsx", func() *iotest.RawBook {
		return iotest.WithWorkbookXML(`<oleSize ref="A1:D10"/>`)
	}), cause: ErrWouldLose, want: msg(ErrWouldLose, "it uses the display area of the embedded object")},
	{name: "digitally signed", write: true, make: bookMaker("signed.xlsx", func() *iotest.RawBook {
		b := iotest.SimpleBook()
		b.Extra = map[string]string{"_xmlsignatures/sig1.xml": "<Signature/>"}
		return b
	}), cause: ErrWouldLose, want: msg(ErrWouldLose, "it uses a digital signature (it would no longer be valid)")},
	{name: "Strict Open XML, even as a copy", write: true, copy: true, make: bookMaker("strict.xlsx", func() *iotest.RawBook {
		return iotest.WithWorkbookXML(`<fileVersion xmlns:s="http://purl.oclc.org/ooxml/spreadsheetml/main"/>`)
	}), cause: ErrCannotRewrite, want: msg(ErrCannotRewrite, "it uses the Strict Open XML format")},
	{name: "new sheet's part already used", write: true, make: func(t *testing.T, dir string) string {
		return iotest.WriteFile(t, dir, "odd.xlsx", iotest.SheetPartMoved(t, iotest.SimpleBook().Bytes(t)))
	}, cause: ErrSheetPartTaken, want: msg(ErrSheetPartTaken, "the part xl/worksheets/sheet2.xml is already used")},
	{name: "copy onto the original", write: true, copy: true, make: bookMaker("same.xlsx", iotest.SimpleBook),
		cause: ErrSameFile, want: msg(ErrSameFile, "")},
	{name: "writing into an old workbook", write: true, make: fileMaker("old.xls", func(*testing.T) []byte { return iotest.OleFile("Workbook") }),
		cause: ErrOldExcel, want: msg(ErrOldExcel, "")},
	{name: "results file beside a CSV exists", write: true, make: func(t *testing.T, dir string) string {
		iotest.WriteFile(t, dir, "survey results.xlsx", iotest.SimpleBook().Bytes(t))
		return iotest.WriteFile(t, dir, "survey.csv", []byte("a,b\n1,2\n"))
	}, cause: ErrTargetExists, want: `{dir:survey results.xlsx}: ` + ErrTargetExists.Error()},
}

func TestRefusals(t *testing.T) {
	if len(refusals) < 25 {
		t.Fatalf("only %d bad inputs", len(refusals))
	}
	for _, c := range refusals {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			path := c.make(t, dir)
			before := iotest.HashIfFile(path)
			var err error
			func() {
				defer func() {
					if r := recover(); r != nil {
						t.Fatalf("panic: %v", r)
					}
				}()
				switch {
				case c.write && c.copy && strings.Contains(c.name, "original"):
					_, err = WriteResults(path, iotest.ResultsGrid(t), WriteOptions{CopyTo: path})
				case c.write && c.copy:
					_, err = WriteResults(path, iotest.ResultsGrid(t), WriteOptions{CopyTo: filepath.Join(dir, "copy.xlsx")})
				case c.write:
					_, err = WriteResults(path, iotest.ResultsGrid(t), WriteOptions{})
				default:
					_, err = Read(context.Background(), path, c.opts)
				}
			}()
			if !errors.Is(err, c.cause) {
				t.Fatalf("error %v, want cause %v", err, c.cause)
			}
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("error %T is not an *Error", err)
			}
			want := strings.ReplaceAll(c.want, "{path}", fmt.Sprintf("%q", path))
			want = strings.ReplaceAll(want, "{dir:survey results.xlsx}", fmt.Sprintf("%q", filepath.Join(dir, "survey results.xlsx")))
			if err.Error() != want {
				t.Errorf("message\n got: %s\nwant: %s", err, want)
			}
			if after := iotest.HashIfFile(path); after != before {
				t.Error("the file's bytes changed")
			}
			if c.write {
				leftovers, _ := filepath.Glob(filepath.Join(dir, ".*.slopewise-*.tmp"))
				if len(leftovers) > 0 {
					t.Errorf("temporary files left behind: %v", leftovers)
				}
			}
		})
	}
}

// TestColumnAllErrors is a bad column rather than a bad file: the read
// succeeds and says what is wrong.
func TestColumnAllErrors(t *testing.T) {
	b := iotest.SimpleBook()
	b.Sheets[0].Rows = []string{
		iotest.Row(1, iotest.Inl("A1", "id"), iotest.Inl("B1", "ratio")),
		iotest.Row(2, iotest.Num("A2", "1"), iotest.Errc("B2", "#DIV/0!")),
		iotest.Row(3, iotest.Num("A3", "2"), iotest.Errc("B3", "#REF!")),
	}
	tab, err := Read(context.Background(), b.Write(t, t.TempDir(), "e.xlsx"), Options{})
	if err != nil {
		t.Fatal(err)
	}
	c := tab.Column("ratio")
	if c.Kind != Empty || c.MissingCount[ErrorValue] != 2 {
		t.Errorf("kind %v, missing %v", c.Kind, c.MissingCount)
	}
	want := `sheet "Data", column "ratio": every cell with a value is an error value (such as #DIV/0!), so the column has no usable values; check the formulas that fill it`
	if !strings.Contains(iotest.NoteTexts(tab), want) {
		t.Errorf("notes:\n%s\nwant %s", iotest.NoteTexts(tab), want)
	}
}
