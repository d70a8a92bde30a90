package save

import (
	"context"
	"fmt"
	"strings"
	"testing"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

// TestWriteWithoutStyles: a workbook without a styles part, with an empty
// one, or with one that lacks its fonts (all valid: ECMA-376 Part 1,
// 12.3.20 makes the part optional) is written in place; the original's
// style elements are kept and the sheet reads as before.
func TestWriteWithoutStyles(t *testing.T) {
	cases := map[string]func(b *iotest.RawBook) []byte{
		"no styles part": func(b *iotest.RawBook) []byte {
			return withoutStylesPart(t, b.Bytes(t))
		},
		"empty styleSheet": func(b *iotest.RawBook) []byte {
			return iotest.ReplacePart(t, b.Bytes(t), "xl/styles.xml", func(string) string {
				return `<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"/>`
			})
		},
		"no fonts": func(b *iotest.RawBook) []byte {
			return iotest.ReplacePart(t, b.Bytes(t), "xl/styles.xml", func(string) string {
				return `<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><numFmts count="1"><numFmt numFmtId="164" formatCode="0.000"/></numFmts><fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders><cellXfs count="2"><xf numFmtId="0"/><xf numFmtId="164" applyNumberFormat="1"/></cellXfs></styleSheet>`
			})
		},
	}
	for name, make := range cases {
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			path := iotest.WriteFile(t, dir, "s.xlsx", make(iotest.SimpleBook()))
			before, err := Read(context.Background(), path, table.Options{})
			if err != nil {
				t.Fatal(err)
			}
			if _, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{}); err != nil {
				t.Fatalf("writing: %v", err)
			}
			after, err := Read(context.Background(), path, table.Options{Sheet: before.Sheet})
			if err != nil {
				t.Fatal(err)
			}
			if d := iotest.SameTables(before, after); d != "" {
				t.Errorf("the data sheet reads differently: %s", d)
			}
			styles := string(iotest.ZipParts(t, path)["xl/styles.xml"])
			if name == "no fonts" && !strings.Contains(styles, `formatCode="0.000"`) {
				t.Errorf("the original number format is gone:\n%s", styles)
			}
		})
	}
}

// withoutStylesPart removes the styles part, its relationship and its
// content type.
func withoutStylesPart(t *testing.T, b []byte) []byte {
	b = iotest.ReplacePart(t, b, "xl/_rels/workbook.xml.rels", func(s string) string {
		return strings.Replace(s, `<Relationship Id="rIdS" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/>`, "", 1)
	})
	b = iotest.ReplacePart(t, b, "[Content_Types].xml", func(s string) string {
		return strings.Replace(s, `<Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>`, "", 1)
	})
	// The part itself becomes one no relationship names, then is dropped.
	return iotest.RewriteZip(t, b, func(name, content string) (string, string) {
		if name == "xl/styles.xml" {
			return "docProps/unused.xml", "<unused/>"
		}
		return name, content
	})
}

// TestWriteBesideWideCSV: a text file of more columns than a sheet holds
// (16,384, Excel's limit, from memory) gets a data sheet of the columns
// the analysis used, in the order given, from column A on, and the
// result says so.
func TestWriteBesideWideCSV(t *testing.T) {
	const width = table.MaxColumns + 20
	var b strings.Builder
	for j := 0; j < width; j++ {
		if j > 0 {
			b.WriteByte(',')
		}
		fmt.Fprintf(&b, "c%d", j)
	}
	b.WriteString("\n")
	for i := 0; i < 3; i++ {
		for j := 0; j < width; j++ {
			if j > 0 {
				b.WriteByte(',')
			}
			fmt.Fprintf(&b, "%d", i*width+j)
		}
		b.WriteString("\n")
	}
	dir := t.TempDir()
	src := iotest.WriteFile(t, dir, "wide.csv", []byte(b.String()))
	w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{KeepColumns: []string{fmt.Sprintf("c%d", width-1), "c3"}})
	if err != nil {
		t.Fatal(err)
	}
	data, err := Read(context.Background(), w.Path, table.Options{Sheet: DataSheetName})
	if err != nil {
		t.Fatal(err)
	}
	if len(data.Columns) != 2 || data.Columns[0].Name != fmt.Sprintf("c%d", width-1) || data.Columns[1].Name != "c3" || data.Columns[1].Letter != "B" {
		t.Fatalf("data sheet columns %q %q", data.Columns[0].Name, data.Columns[1].Name)
	}
	if got := data.Columns[0].Numbers[2]; got != float64(3*width-1) {
		t.Errorf("last value %v", got)
	}
	if len(w.Lost) != 1 || !strings.Contains(w.Lost[0], fmt.Sprintf("%d of the text file's %d columns", width-2, width)) {
		t.Errorf("lost %q", w.Lost)
	}
}
