package iotest

import (
	"archive/zip"
	"bytes"
	"crypto/sha256"
	"io"
	"os"
	"strings"
	"testing"
)

// zipOf builds a zip archive from name → content pairs.
func ZipOf(t testing.TB, parts ...string) []byte {
	t.Helper()
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	for i := 0; i+1 < len(parts); i += 2 {
		w, err := zw.Create(parts[i])
		if err != nil {
			t.Fatal(err)
		}
		w.Write([]byte(parts[i+1]))
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// sheetPartMoved stores the one sheet (sheetId 1) as sheet2.xml, the part
// name excelize's NewSheet would give a new sheet.
func SheetPartMoved(t testing.TB, b []byte) []byte {
	t.Helper()
	return RewriteZip(t, b, func(name, content string) (string, string) {
		switch name {
		case "xl/worksheets/sheet1.xml":
			name = "xl/worksheets/sheet2.xml"
		case "xl/_rels/workbook.xml.rels", "[Content_Types].xml":
			content = strings.ReplaceAll(content, "sheet1.xml", "sheet2.xml")
		}
		return name, content
	})
}

// replacePart changes one part of a workbook.
func ReplacePart(t testing.TB, b []byte, part string, edit func(string) string) []byte {
	t.Helper()
	return RewriteZip(t, b, func(name, content string) (string, string) {
		if name == part {
			content = edit(content)
		}
		return name, content
	})
}

// rewriteZip copies a zip archive, passing each entry through edit.
func RewriteZip(t testing.TB, b []byte, edit func(name, content string) (string, string)) []byte {
	t.Helper()
	zr, err := zip.NewReader(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		var body bytes.Buffer
		if _, err := body.ReadFrom(rc); err != nil {
			t.Fatal(err)
		}
		rc.Close()
		name, content := edit(f.Name, body.String())
		w, err := zw.Create(name)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := w.Write([]byte(content)); err != nil {
			t.Fatal(err)
		}
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

func HashIfFile(path string) [32]byte {
	b, err := os.ReadFile(path)
	if err != nil {
		return [32]byte{}
	}
	return SHA(b)
}

func ZipParts(t testing.TB, path string) map[string][]byte {
	t.Helper()
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer zr.Close()
	out := map[string][]byte{}
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		b, err := io.ReadAll(rc)
		rc.Close()
		if err != nil {
			t.Fatal(err)
		}
		out[f.Name] = b
	}
	return out
}

func SHA(b []byte) [32]byte { return sha256.Sum256(b) }

func FileHash(t testing.TB, path string) [32]byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return SHA(b)
}
