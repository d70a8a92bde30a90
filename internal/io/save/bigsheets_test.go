package save

import (
	"archive/zip"
	"bytes"
	"context"
	"fmt"
	"io"
	"path/filepath"
	"testing"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

// TestBigSheetsKept lowers the size from which worksheets are kept from
// excelize, so that small sheets take that path: the workbook reads as it
// did, and after the results are added in place every original sheet's
// part is the original's, byte for byte, still packed.
func TestBigSheetsKept(t *testing.T) {
	old := bigSheet
	bigSheet = 1 << 10
	defer func() { bigSheet = old }()
	rows := []string{iotest.Row(1, iotest.Inl("A1", "id"), iotest.Inl("B1", "score"), iotest.Inl("C1", "group"))}
	for i := 2; i < 400; i++ {
		rows = append(rows, iotest.Row(i, iotest.Num(fmt.Sprintf("A%d", i), fmt.Sprint(i)), iotest.Num(fmt.Sprintf("B%d", i), fmt.Sprint(i%17)), iotest.Sst(fmt.Sprintf("C%d", i), i%2)))
	}
	b := &iotest.RawBook{Shared: []string{"north", "south"}, Sheets: []iotest.RawSheet{{Name: "Visits", Rows: rows}, {Name: "Small", Rows: []string{iotest.Row(1, iotest.Num("A1", "1"))}}}}
	dir := t.TempDir()
	// Stored, not deflated, so that a part excelize packs again differs.
	path := iotest.WriteFile(t, dir, "big.xlsx", stored(t, b.Bytes(t)))
	before, err := Read(context.Background(), path, table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	bigSheet = old
	want, err := Read(context.Background(), path, table.Options{})
	bigSheet = 1 << 10
	if err != nil {
		t.Fatal(err)
	}
	if d := iotest.SameTables(before, want); d != "" {
		t.Fatalf("opened without its big sheets, the workbook reads differently: %s", d)
	}
	raw := func(p, part string) *zip.File {
		zr, err := zip.OpenReader(p)
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { zr.Close() })
		for _, f := range zr.File {
			if f.Name == part {
				return f
			}
		}
		t.Fatalf("%s has no part %s", p, part)
		return nil
	}
	orig := raw(path, "xl/worksheets/sheet1.xml")
	w, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{CopyTo: filepath.Join(dir, "copy.xlsx")})
	if err != nil {
		t.Fatal(err)
	}
	if !sameStoredPart(orig, raw(w.Path, "xl/worksheets/sheet1.xml")) {
		t.Error("the big sheet's part was not kept as it was")
	}
	after, err := Read(context.Background(), w.Path, table.Options{Sheet: "Visits"})
	if err != nil {
		t.Fatal(err)
	}
	if d := iotest.SameTables(before, after); d != "" {
		t.Errorf("the sheet reads differently after the results were added: %s", d)
	}
	if _, err := Read(context.Background(), w.Path, table.Options{Sheet: w.Sheet}); err != nil {
		t.Errorf("the results sheet: %v", err)
	}
}

// stored returns the zip with every entry stored without compression.
func stored(t *testing.T, data []byte) []byte {
	t.Helper()
	zr, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	for _, f := range zr.File {
		w, err := zw.CreateHeader(&zip.FileHeader{Name: f.Name, Method: zip.Store})
		if err != nil {
			t.Fatal(err)
		}
		r, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		io.Copy(w, r)
		r.Close()
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}
