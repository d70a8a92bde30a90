package workbook

import (
	"context"
	"strings"
	"testing"
)

// TestWriteWithoutStyles: a workbook without a styles part, with an empty
// one, or with one that lacks its fonts (all valid: ECMA-376 Part 1,
// 12.3.20 makes the part optional) is written in place; the original's
// style elements are kept and the sheet reads as before.
func TestWriteWithoutStyles(t *testing.T) {
	cases := map[string]func(b *rawBook) []byte{
		"no styles part": func(b *rawBook) []byte {
			return withoutStylesPart(t, b.bytes(t))
		},
		"empty styleSheet": func(b *rawBook) []byte {
			return replacePart(t, b.bytes(t), "xl/styles.xml", func(string) string {
				return `<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"/>`
			})
		},
		"no fonts": func(b *rawBook) []byte {
			return replacePart(t, b.bytes(t), "xl/styles.xml", func(string) string {
				return `<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><numFmts count="1"><numFmt numFmtId="164" formatCode="0.000"/></numFmts><fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders><cellXfs count="2"><xf numFmtId="0"/><xf numFmtId="164" applyNumberFormat="1"/></cellXfs></styleSheet>`
			})
		},
	}
	for name, make := range cases {
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			path := writeFile(t, dir, "s.xlsx", make(simpleBook()))
			before, err := Read(context.Background(), path, Options{})
			if err != nil {
				t.Fatal(err)
			}
			if _, err := WriteResults(path, resultsGrid(t), WriteOptions{}); err != nil {
				t.Fatalf("writing: %v", err)
			}
			after, err := Read(context.Background(), path, Options{Sheet: before.Sheet})
			if err != nil {
				t.Fatal(err)
			}
			if d := sameTables(before, after); d != "" {
				t.Errorf("the data sheet reads differently: %s", d)
			}
			styles := string(zipParts(t, path)["xl/styles.xml"])
			if name == "no fonts" && !strings.Contains(styles, `formatCode="0.000"`) {
				t.Errorf("the original number format is gone:\n%s", styles)
			}
		})
	}
}

// withoutStylesPart removes the styles part, its relationship and its
// content type.
func withoutStylesPart(t *testing.T, b []byte) []byte {
	b = replacePart(t, b, "xl/_rels/workbook.xml.rels", func(s string) string {
		return strings.Replace(s, `<Relationship Id="rIdS" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/>`, "", 1)
	})
	b = replacePart(t, b, "[Content_Types].xml", func(s string) string {
		return strings.Replace(s, `<Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>`, "", 1)
	})
	// The part itself becomes one no relationship names, then is dropped.
	return rewriteZip(t, b, func(name, content string) (string, string) {
		if name == "xl/styles.xml" {
			return "docProps/unused.xml", "<unused/>"
		}
		return name, content
	})
}
