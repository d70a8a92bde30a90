package pipeline

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"slopewise/internal/demo"
	"slopewise/internal/estimate"
	"slopewise/internal/io/iotest"
	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// formulaCase is one analysis of the demo workbook whose results sheet is
// recalculated by LibreOffice.
type formulaCase struct {
	name      string
	moderator estimate.Moderator
	spec      func(*estimate.Spec)
	// screen, when set, runs a screen of these moderators instead.
	screen []estimate.Moderator
}

var formulaCases = []formulaCase{
	{name: "demo", moderator: estimate.Moderator{Column: demo.ColRegion, Kind: estimate.ModeratorCategorical},
		spec: func(s *estimate.Spec) {
			s.Controls = []string{demo.ColAge, demo.ColBaselineScore}
			s.Cluster = demo.ColSite
		}},
	{name: "weighted", moderator: estimate.Moderator{Column: demo.ColRegion, Kind: estimate.ModeratorCategorical},
		spec: func(s *estimate.Spec) { s.Weights = demo.ColAge }},
	{name: "clustered", moderator: estimate.Moderator{Column: demo.ColFirstTime, Kind: estimate.ModeratorBinary},
		spec: func(s *estimate.Spec) {
			s.Cluster = demo.ColSite
			s.Bootstrap.Off = true
			s.Controls = []string{demo.ColAge}
		}},
	{name: "number-moderator", moderator: estimate.Moderator{Column: demo.ColBaselineScore, Kind: estimate.ModeratorContinuous},
		spec: func(s *estimate.Spec) { s.Controls = []string{demo.ColAge} }},
	{name: "screen", screen: []estimate.Moderator{{Column: demo.ColRegion, Kind: estimate.ModeratorCategorical},
		{Column: demo.ColFirstTime, Kind: estimate.ModeratorBinary}, {Column: demo.ColBaselineScore, Kind: estimate.ModeratorContinuous}}},
}

// TestSheetFormulasRecalculated checks the live formulas of the results
// sheet (the effect in each group and each difference as a sum of
// coefficient cells, their standard errors as the square root of a sum of
// covariance cells) against an independent spreadsheet program: every
// formula's stored result is the engine's value, bit for bit; LibreOffice
// (7.4, headless), given the workbook with the stored results removed so
// that it must calculate every formula itself, gets the same value to
// 1e-9 relative — on the demo, on a weighted, a clustered and a
// number-moderator analysis, and on a screen of several moderators.
func TestSheetFormulasRecalculated(t *testing.T) {
	bin := soffice(t)
	dir := t.TempDir()
	type written struct {
		name, path, sheet string
		engine            map[float64]bool
	}
	var books []written
	for _, c := range formulaCases {
		path := writeDemo(t, filepath.Join(dir, c.name+".xlsx"))
		spec := estimate.Spec{Outcome: demo.ColEarnings, Treatment: estimate.Treatment{Column: demo.ColCoached}, Moderator: c.moderator}
		if c.spec != nil {
			c.spec(&spec)
		}
		run := report.Run{File: path, Spec: spec, Randomized: true, Planned: true, Version: "test", Time: time.Date(2026, 12, 3, 12, 0, 0, 0, time.UTC)}
		engine := map[float64]bool{}
		var w *workbook.Written
		if c.screen != nil {
			sr := report.ScreenRun{Base: run}
			for _, m := range c.screen {
				sr.Candidates = append(sr.Candidates, report.Candidate{Moderator: m, Planned: m.Column == demo.ColRegion})
			}
			a, err := Screen(context.Background(), sr, nil, nil)
			if err != nil {
				t.Fatalf("%s: %v", c.name, err)
			}
			for _, res := range a.Screen.Results {
				engineValues(res, engine)
			}
			w, err = a.Save(workbook.WriteOptions{})
			if err != nil {
				t.Fatalf("%s: %v", c.name, err)
			}
		} else {
			a, err := Analyze(context.Background(), run, nil)
			if err != nil {
				t.Fatalf("%s: %v", c.name, err)
			}
			engineValues(a.Result, engine)
			w, err = a.Save(workbook.WriteOptions{})
			if err != nil {
				t.Fatalf("%s: %v", c.name, err)
			}
		}
		books = append(books, written{name: c.name, path: w.Path, sheet: w.Sheet, engine: engine})
	}

	// The formulas and their stored results, read from the sheet's XML;
	// then a copy of each workbook without the stored results.
	stored := map[string][]storedFormula{}
	var copies []string
	for _, b := range books {
		fs, bare := sheetFormulas(t, b.path, b.sheet)
		if len(fs) == 0 {
			t.Fatalf("%s: the results sheet holds no formulas", b.name)
		}
		for _, f := range fs {
			if !b.engine[f.value] {
				t.Errorf("%s: %s = %s stores %.17g, which is none of the engine's effects, differences or standard errors", b.name, f.ref, f.formula, f.value)
			}
		}
		stored[b.name] = fs
		p := filepath.Join(dir, "bare", b.name+".xlsx")
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, bare, 0o644); err != nil {
			t.Fatal(err)
		}
		copies = append(copies, p)
	}
	sheets := map[string]int{}
	for _, b := range books {
		list, err := workbook.Sheets(b.path)
		if err != nil {
			t.Fatal(err)
		}
		for i, s := range list {
			if s.Name == b.sheet {
				sheets[b.name] = i + 1
			}
		}
	}
	bySheet := map[int][]string{}
	for _, b := range books {
		bySheet[sheets[b.name]] = append(bySheet[sheets[b.name]], filepath.Join(dir, "bare", b.name+".xlsx"))
	}
	csvs := map[string][][]string{}
	for sheet, paths := range bySheet {
		for p, rows := range libreOfficeSheets(t, bin, paths, sheet) {
			csvs[p] = rows
		}
	}
	for _, b := range books {
		rows := csvs[filepath.Join(dir, "bare", b.name+".xlsx")]
		checked, worst := 0, 0.0
		for _, f := range stored[b.name] {
			got := cellOf(rows, f.row, f.col)
			v, err := strconv.ParseFloat(got, 64)
			if err != nil {
				t.Errorf("%s: LibreOffice gives %q for %s = %s", b.name, got, f.ref, f.formula)
				continue
			}
			worst = math.Max(worst, math.Abs(v-f.value)/math.Abs(f.value))
			if math.Abs(v-f.value) > 1e-9*math.Abs(f.value) {
				t.Errorf("%s: %s = %s: LibreOffice %.17g, stored %.17g (relative difference %.2g)", b.name, f.ref, f.formula, v, f.value, math.Abs(v-f.value)/math.Abs(f.value))
			}
			checked++
		}
		t.Logf("%s: %d formulas recalculated by LibreOffice, largest relative difference from the engine %.2g", b.name, checked, worst)
	}
}

// soffice is LibreOffice's program, which CI must have.
func soffice(t *testing.T) string {
	t.Helper()
	bin, err := exec.LookPath("soffice")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("soffice (LibreOffice) is missing; CI installs it with the Debian package libreoffice-calc-nogui")
		}
		t.Skip("soffice (LibreOffice) is not installed")
	}
	return bin
}

// writeDemo writes the demo workbook at path.
func writeDemo(t *testing.T, path string) string {
	t.Helper()
	book, err := demo.Workbook()
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, book, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// engineValues collects the engine's effects, differences and their
// standard errors.
func engineValues(res *estimate.Result, into map[float64]bool) {
	for _, e := range res.Effects {
		into[e.Estimate], into[e.SE] = true, true
	}
	for _, d := range res.Differences {
		into[d.Estimate], into[d.SE] = true, true
	}
}

// storedFormula is a formula cell as written: where, what, and its
// stored result.
type storedFormula struct {
	ref, formula string
	row, col     int
	value        float64
}

var formulaCell = regexp.MustCompile(`<c r="([A-Z]+)([0-9]+)"([^>]*)><f>([^<]*)</f><v>([^<]*)</v></c>`)

// sheetFormulas reads the formula cells of a sheet from its XML, checks
// that each stores its result as a number, and returns them with the
// workbook's bytes with those results removed.
func sheetFormulas(t *testing.T, path, sheet string) ([]storedFormula, []byte) {
	t.Helper()
	all := iotest.ZipParts(t, path)
	part := sheetPart(t, all, sheet)
	body := all[part]
	var fs []storedFormula
	for _, m := range formulaCell.FindAllSubmatch(body, -1) {
		if strings.Contains(string(m[3]), `t="`) {
			t.Errorf("%s: formula cell %s%s is stored with a type (%s), not as a number", sheet, m[1], m[2], m[3])
		}
		v, err := strconv.ParseFloat(string(m[5]), 64)
		if err != nil {
			t.Fatal(err)
		}
		row, _ := strconv.Atoi(string(m[2]))
		fs = append(fs, storedFormula{ref: string(m[1]) + string(m[2]), formula: string(m[4]), row: row - 1, col: columnIndex(string(m[1])), value: v})
	}
	if n := strings.Count(string(body), "<f>"); n != len(fs) {
		t.Errorf("%s: %d formulas, %d with a stored result", sheet, n, len(fs))
	}
	all[part] = formulaCell.ReplaceAll(body, []byte(`<c r="$1$2"$3><f>$4</f></c>`))
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	names := make([]string, 0, len(all))
	for name := range all {
		names = append(names, name)
	}
	sort.Strings(names) // "[Content_Types].xml" first
	for _, name := range names {
		w, err := zw.Create(name)
		if err == nil {
			_, err = w.Write(all[name])
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return fs, out.Bytes()
}

// sheetPart is the zip part of a sheet, through the workbook's
// relationships.
func sheetPart(t *testing.T, all map[string][]byte, sheet string) string {
	t.Helper()
	m := regexp.MustCompile(`<sheet [^>]*name="` + regexp.QuoteMeta(sheet) + `"[^>]*r:id="([^"]+)"`).FindSubmatch(all["xl/workbook.xml"])
	if m == nil {
		t.Fatalf("no sheet %q in the workbook", sheet)
	}
	target := regexp.MustCompile(`<Relationship [^>]*Id="` + string(m[1]) + `"[^>]*Target="([^"]+)"|<Relationship [^>]*Target="([^"]+)"[^>]*Id="` + string(m[1]) + `"`).FindSubmatch(all["xl/_rels/workbook.xml.rels"])
	if target == nil {
		t.Fatalf("no relationship %s", m[1])
	}
	p := string(target[1]) + string(target[2])
	if strings.HasPrefix(p, "/") {
		return strings.TrimPrefix(p, "/")
	}
	return "xl/" + p
}

func columnIndex(letters string) int {
	n := 0
	for _, c := range letters {
		n = n*26 + int(c-'A') + 1
	}
	return n - 1
}

func cellOf(rows [][]string, r, c int) string {
	if r < len(rows) && c < len(rows[r]) {
		return rows[r][c]
	}
	return ""
}

// libreOfficeSheets has LibreOffice open workbooks headless and write
// one sheet (1-based) of each as CSV with stored values, not displayed
// ones; it returns each workbook's rows by its path. The filter options
// are, in order: field separator 44, text delimiter 34, character set 76
// (UTF-8), first line 1, cell formats, language 0, quoted as text off,
// special numbers on, "as shown" off, formulas off, trim off, and the
// sheet (LibreOffice's help, "CSV Filter Options", from memory).
func libreOfficeSheets(t *testing.T, bin string, paths []string, sheet int) map[string][][]string {
	t.Helper()
	dir := t.TempDir()
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Minute)
	defer cancel()
	filter := fmt.Sprintf("csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,%d", sheet)
	args := append([]string{"-env:UserInstallation=file://" + filepath.Join(dir, "profile"), "--headless", "--convert-to", filter, "--outdir", dir}, paths...)
	msg, err := exec.CommandContext(ctx, bin, args...).CombinedOutput()
	if err != nil {
		t.Fatalf("LibreOffice failed: %v\n%s", err, msg)
	}
	out := map[string][][]string{}
	for _, p := range paths {
		// LibreOffice names the file after the workbook and the sheet.
		stem := strings.TrimSuffix(filepath.Base(p), filepath.Ext(p))
		files, _ := filepath.Glob(filepath.Join(dir, stem+"*.csv"))
		if len(files) != 1 {
			t.Fatalf("LibreOffice wrote %v for %s\n%s", files, p, msg)
		}
		body, err := os.ReadFile(files[0])
		if err != nil {
			t.Fatal(err)
		}
		r := csv.NewReader(bytes.NewReader(body))
		r.FieldsPerRecord = -1
		rows, err := r.ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		out[p] = rows
	}
	return out
}
