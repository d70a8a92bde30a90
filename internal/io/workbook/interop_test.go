package workbook

import (
	"context"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"slopewise/internal/io/draw"

	"slopewise/internal/io/iotest"
)

// closeTo compares a number LibreOffice wrote with the one we stored.
// LibreOffice 7.4 writes at most 15 significant digits with "as shown"
// off (observed with LibreOffice 7.4.7 headless conversion), hence the
// relative tolerance; a percentage comes out with its % sign.
func closeTo(t *testing.T, got string, want float64) {
	t.Helper()
	scale := 1.0
	if strings.HasSuffix(got, "%") {
		got, scale = strings.TrimSuffix(got, "%"), 0.01
	}
	v, err := strconv.ParseFloat(got, 64)
	if err != nil {
		t.Errorf("LibreOffice wrote %q where %v was stored", got, want)
		return
	}
	v *= scale
	if math.Abs(v-want) > 1e-14*math.Max(1, math.Abs(want)) {
		t.Errorf("LibreOffice read %v (%q), we wrote %v", v, got, want)
	}
}

func TestLibreOfficeReadsResults(t *testing.T) {
	bin := iotest.Soffice(t)
	dir := t.TempDir()
	path := filepath.Join(dir, "visits.xlsx")
	iotest.RichWorkbook(t, path)
	grid := iotest.ResultsGrid(t)
	w, err := WriteResults(path, grid, WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	sheets, err := Sheets(w.Path)
	if err != nil {
		t.Fatal(err)
	}
	index := 0
	for i, s := range sheets {
		if s.Name == w.Sheet {
			index = i + 1
		}
	}
	rows := iotest.SheetAsCSV(t, bin, w.Path, index)
	// The first block starts with its title in row 1, its rows below.
	if rows[0][0] != grid.Blocks[0].Title {
		t.Fatalf("first row %q", rows[0])
	}
	checked := 0
	for r, cells := range grid.Blocks[0].Rows {
		for c, cell := range cells {
			if !draw.IsNumeric(cell.Kind) {
				if rows[r+1][c] != cell.Text {
					t.Errorf("row %d col %d: %q, want %q", r+2, c+1, rows[r+1][c], cell.Text)
				}
				continue
			}
			closeTo(t, rows[r+1][c], cell.Value)
			checked++
		}
	}
	if checked != 6 {
		t.Errorf("checked %d numbers, want 6", checked)
	}
	last := rows[len(rows)-1]
	if last[0] != SpecMarker || last[1] != string(grid.Spec) {
		t.Errorf("spec row as LibreOffice reads it: %q", last)
	}
	// The data sheet is still what it was.
	data := iotest.SheetAsCSV(t, bin, w.Path, 1)
	tab, err := Read(context.Background(), path, Options{Sheet: "Visits"})
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range tab.Column("Score").Numbers {
		closeTo(t, data[i+1][2], v)
	}
}

func TestLibreOfficeReadsCSVResults(t *testing.T) {
	bin := iotest.Soffice(t)
	dir := t.TempDir()
	src := iotest.WriteFile(t, dir, "survey.csv", []byte("id;score\n1;1,25\n2;-0,5\n3;1.234,75\n"))
	w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	data := iotest.SheetAsCSV(t, bin, w.Path, 1)
	for i, want := range []float64{1.25, -0.5, 1234.75} {
		closeTo(t, data[i+1][1], want)
	}
}
