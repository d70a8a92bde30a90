package workbook

import (
	"context"
	"encoding/csv"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// soffice finds LibreOffice. In CI (CI=true) its absence is a failure:
// the Makefile installs it (Debian package libreoffice-calc-nogui).
func soffice(t *testing.T) string {
	t.Helper()
	p, err := exec.LookPath("soffice")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("soffice (LibreOffice) is missing; CI installs it with the Debian package libreoffice-calc-nogui")
		}
		t.Skip("soffice (LibreOffice) is not installed")
	}
	return p
}

// sheetAsCSV has LibreOffice open the workbook headless and write one
// sheet (1-based) as CSV. The filter options are, in order: field
// separator 44 (','), text delimiter 34 ('"'), character set 76 (UTF-8),
// first line 1, cell formats (none), language 0, quoted fields as text
// off, detect special numbers on, "save cell contents as shown" off (so
// stored values, not displayed ones), formulas off, trim spaces off, and
// the sheet number (LibreOffice 7.2 and later; the CSV filter's options
// as documented in LibreOffice's help, "CSV Filter Options", from memory).
func sheetAsCSV(t *testing.T, bin, path string, sheet int) [][]string {
	t.Helper()
	dir := t.TempDir()
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()
	filter := "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false," + strconv.Itoa(sheet)
	cmd := exec.CommandContext(ctx, bin, "-env:UserInstallation=file://"+filepath.Join(dir, "profile"),
		"--headless", "--convert-to", filter, "--outdir", filepath.Join(dir, "out"), path)
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("LibreOffice failed: %v\n%s", err, out)
	}
	files, _ := filepath.Glob(filepath.Join(dir, "out", "*.csv"))
	if len(files) != 1 {
		t.Fatalf("LibreOffice wrote %v\n%s", files, out)
	}
	f, err := os.Open(files[0])
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.FieldsPerRecord = -1
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

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
	bin := soffice(t)
	dir := t.TempDir()
	path := filepath.Join(dir, "visits.xlsx")
	richWorkbook(t, path)
	grid := resultsGrid(t)
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
	rows := sheetAsCSV(t, bin, w.Path, index)
	// The first block starts with its title in row 1, its rows below.
	if rows[0][0] != grid.Blocks[0].Title {
		t.Fatalf("first row %q", rows[0])
	}
	checked := 0
	for r, cells := range grid.Blocks[0].Rows {
		for c, cell := range cells {
			if !isNumeric(cell.Kind) {
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
	data := sheetAsCSV(t, bin, w.Path, 1)
	tab, err := Read(context.Background(), path, Options{Sheet: "Visits"})
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range tab.Column("Score").Numbers {
		closeTo(t, data[i+1][2], v)
	}
}

func TestLibreOfficeReadsCSVResults(t *testing.T) {
	bin := soffice(t)
	dir := t.TempDir()
	src := writeFile(t, dir, "survey.csv", []byte("id;score\n1;1,25\n2;-0,5\n3;1.234,75\n"))
	w, err := WriteResults(src, resultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	data := sheetAsCSV(t, bin, w.Path, 1)
	for i, want := range []float64{1.25, -0.5, 1234.75} {
		closeTo(t, data[i+1][1], want)
	}
}
