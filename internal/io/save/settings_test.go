package save

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/xlsx"
)

// TestInPlaceKeepsWorkbookSettings: a workbook with the settings that
// LibreOffice's Office Open XML filter writes (dateCompatibility="false",
// backupFile, seen in testdata/interop) and xlsxwriter's calcPr
// (fullCalcOnLoad) is written in place; every attribute of workbookPr and
// calcPr is in the new workbook part as it was, the backup is the
// original byte for byte.
func TestInPlaceKeepsWorkbookSettings(t *testing.T) {
	b := iotest.SimpleBook()
	b.WbExtra = `<workbookPr backupFile="false" showObjects="all" dateCompatibility="false"/>`
	b.WbAfter = `<calcPr calcId="124519" fullCalcOnLoad="1" iterate="false" iterateCount="100"/>`
	dir := t.TempDir()
	path := b.Write(t, dir, "lo.xlsx")
	orig, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	w, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{Now: func() time.Time { return time.Date(2026, 12, 3, 10, 0, 0, 0, time.UTC) }})
	if err != nil {
		t.Fatal(err)
	}
	wb := string(iotest.ZipParts(t, path)["xl/workbook.xml"])
	for _, want := range []string{`dateCompatibility="false"`, `backupFile="false"`, `showObjects="all"`, `fullCalcOnLoad="true"`, `calcId="124519"`, `iterate="false"`, `iterateCount="100"`} {
		if !strings.Contains(wb, want) {
			t.Errorf("the new workbook part lacks %s:\n%s", want, wb)
		}
	}
	if lost := missingSettings([]byte(b.WbExtra+b.WbAfter), []byte(wb)); len(lost) > 0 {
		t.Errorf("settings not kept: %v", lost)
	}
	back, err := os.ReadFile(w.Backup)
	if err != nil || !bytes.Equal(back, orig) {
		t.Errorf("the backup %s is not the original (%v)", w.Backup, err)
	}
	if _, err := xlsx.Sheets(path); err != nil {
		t.Errorf("the result does not open: %v", err)
	}
}

// TestRestoreSettings covers the cases excelize does not produce today:
// an element it left out altogether, a self-closing tag, a value it
// changed (kept as changed, so that verifyRewrite refuses the save).
func TestRestoreSettings(t *testing.T) {
	orig := []byte(`<workbook><fileVersion appName="x"/><workbookPr dateCompatibility="0"/><sheets><sheet name="a"/></sheets><calcPr calcId="1" refMode="R1C1"/></workbook>`)
	body := []byte(`<workbook><fileVersion appName="x"></fileVersion><bookViews/><sheets><sheet name="a"/></sheets><calcPr calcId="2"/></workbook>`)
	got, changed := restoreSettings(orig, body)
	want := `<workbook><fileVersion appName="x"></fileVersion><workbookPr dateCompatibility="0"/><bookViews/><sheets><sheet name="a"/></sheets><calcPr calcId="2" refMode="R1C1"/></workbook>`
	if !changed || string(got) != want {
		t.Fatalf("got  %s\nwant %s", got, want)
	}
	lost := missingSettings(orig, got)
	if len(lost) != 1 || len(lost["calcPr"]) != 1 || lost["calcPr"][0].name != "calcId" {
		t.Errorf("a changed value must remain a difference for the check: %v", lost)
	}
}

// TestBackupNamedWhenWhole: the backup is complete under a temporary name
// before it gets its own, so a save stopped at that moment leaves no file
// that looks like a backup; after the save no temporary file is left.
func TestBackupNamedWhenWhole(t *testing.T) {
	dir := t.TempDir()
	path := iotest.SimpleBook().Write(t, dir, "b.xlsx")
	orig, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	seen := false
	beforeBackupNamed = func(tmp string) {
		seen = true
		body, err := os.ReadFile(tmp)
		if err != nil || !bytes.Equal(body, orig) {
			t.Errorf("the temporary backup is not the whole original (%v)", err)
		}
		names, _ := filepath.Glob(filepath.Join(dir, "b (before Slopewise*"))
		if len(names) > 0 {
			t.Errorf("a backup has its name before it is complete: %v", names)
		}
	}
	defer func() { beforeBackupNamed = func(string) {} }()
	w, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !seen {
		t.Fatal("the backup was not made through its temporary name")
	}
	if back, err := os.ReadFile(w.Backup); err != nil || !bytes.Equal(back, orig) {
		t.Errorf("the backup is not the original (%v)", err)
	}
	left, _ := filepath.Glob(filepath.Join(dir, ".*"))
	if len(left) > 0 {
		t.Errorf("temporary files left: %v", left)
	}
}
