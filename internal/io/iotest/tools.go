package iotest

import (
	"context"
	"encoding/csv"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"testing"
	"time"
)

// soffice finds LibreOffice. In CI (CI=true) its absence is a failure:
// the Makefile installs it (Debian package libreoffice-calc-nogui).
func Soffice(t *testing.T) string {
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
func SheetAsCSV(t *testing.T, bin, path string, sheet int) [][]string {
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
