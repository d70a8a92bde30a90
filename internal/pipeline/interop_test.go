package pipeline

import (
	"bytes"
	"context"
	"encoding/json"
	"encoding/xml"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"slopewise/internal/estimate"
	"slopewise/internal/io/iotest"
	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// corpusEntry is one file of testdata/interop/manifest.json: a workbook
// written by another program (openpyxl, xlsxwriter, LibreOffice,
// Gnumeric, exceljs, SheetJS; versions in the manifest), the model to
// fit, and what a correct reader gets: the effects of an independent fit
// (statsmodels 0.13 OLS with cov_type HC3, Debian 12, on the data as the
// file's author meant them; scripts/interop/expected.py), or a refusal
// and its reason.
type corpusEntry struct {
	File      string `json:"file"`
	Writer    string `json:"writer"`
	Family    string `json:"family"`
	Sheet     string `json:"sheet"`
	HeaderRow int    `json:"header_row"`
	Table     string `json:"table"`
	Spec      struct {
		Outcome, Treatment, Treated, Moderator string
		Controls                               []string
		Variance                               string
	} `json:"spec"`
	Expect         string            `json:"expect"`
	Reason         string            `json:"reason"`
	FormulaColumns map[string]string `json:"formula_columns"`
	N              int               `json:"n"`
	Effects        map[string]struct {
		Estimate float64 `json:"estimate"`
		SE       float64 `json:"se"`
	} `json:"effects"`
	Checks []struct {
		Column string `json:"column"`
		Row    int    `json:"row"`
		Date   string `json:"date"`
	} `json:"checks"`
}

func loadCorpus(t *testing.T, dir string) []corpusEntry {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var out []corpusEntry
	if err := json.Unmarshal(b, &out); err != nil {
		t.Fatal(err)
	}
	return out
}

// corpusRun fits a manifest entry's model to the file at path.
func corpusRun(e corpusEntry, path string) (*Analysis, error) {
	run := report.Run{File: path, Sheet: e.Sheet, HeaderRow: e.HeaderRow, Table: e.Table, Randomized: true, Version: "test", Time: time.Date(2026, 12, 3, 12, 0, 0, 0, time.UTC)}
	t, err := Read(context.Background(), run, nil)
	if err != nil {
		return nil, err
	}
	for _, name := range append([]string{e.Spec.Outcome, e.Spec.Treatment, e.Spec.Moderator}, e.Spec.Controls...) {
		if t.Column(name) == nil {
			return &Analysis{Table: t}, fmt.Errorf("no column %q", name)
		}
	}
	run.Spec = estimate.Spec{
		Outcome:  e.Spec.Outcome,
		Controls: e.Spec.Controls,
		Variance: estimate.VarianceType(e.Spec.Variance),
		Treatment: estimate.Treatment{Column: e.Spec.Treatment, Treated: e.Spec.Treated,
			Kind: TreatmentKind(t.Column(e.Spec.Treatment), e.Spec.Treated)},
		Moderator: estimate.Moderator{Column: e.Spec.Moderator, Kind: ModeratorKind(t.Column(e.Spec.Moderator))},
	}
	a, err := AnalyzeTable(context.Background(), run, t)
	if err != nil {
		return &Analysis{Table: t}, err
	}
	return a, nil
}

// refusalReasons are the manifest's reasons with the cause Slopewise must
// give for each.
var refusalReasons = map[string]error{
	"formula-no-result": workbook.ErrFormulaNoResult,
}

// TestInteropCorpus reads every file of the corpus, fits its model and
// compares with the independent fit to 1e-8 relative, or checks that it
// is refused for the reason the manifest gives. A sound file refused as
// damaged fails. Then each file that reads is written in place, with its
// results, and checked (checkWriteBack). SLOPEWISE_INTEROP_EXTRA names a
// further corpus directory with a manifest of its own (the 50,000-row
// files that make_corpus.sh makes and does not commit).
func TestInteropCorpus(t *testing.T) {
	dirs := []string{filepath.Join("..", "..", "testdata", "interop")}
	if extra := os.Getenv("SLOPEWISE_INTEROP_EXTRA"); extra != "" {
		dirs = append(dirs, extra)
	}
	var written []string
	out := t.TempDir() // the written copies, kept for LibreOffice until the end
	for _, dir := range dirs {
		for _, e := range loadCorpus(t, dir) {
			t.Run(e.File, func(t *testing.T) {
				src := filepath.Join(dir, e.File)
				a, err := corpusRun(e, src)
				if err != nil && errors.Is(err, workbook.ErrDamaged) {
					t.Fatalf("%s (%s): a sound file called damaged: %v", e.Writer, e.Family, err)
				}
				if a != nil && a.Table != nil {
					checkFormulaColumns(t, e, a.Table)
					checkDates(t, e, a.Table)
				}
				switch e.Expect {
				case "refuse":
					want := refusalReasons[e.Reason]
					if want == nil {
						t.Fatalf("the manifest's reason %q has no cause here", e.Reason)
					}
					if !errors.Is(err, want) {
						t.Fatalf("%s (%s): got %v, want a refusal: %v", e.Writer, e.Family, err, want)
					}
					return
				case "match":
					if err != nil {
						t.Fatalf("%s (%s): %v", e.Writer, e.Family, err)
					}
				default:
					t.Fatalf("expect %q", e.Expect)
				}
				checkEffects(t, e, a.Result)
				if p := checkWriteBack(t, e, src, filepath.Join(out, fmt.Sprint(len(written))), a); p != "" {
					written = append(written, p)
				}
			})
		}
	}
	convertAll(t, written)
}

func checkEffects(t *testing.T, e corpusEntry, res *estimate.Result) {
	t.Helper()
	if res.Rows.Used != e.N {
		t.Errorf("%d rows used, want %d (%s)", res.Rows.Used, e.N, e.Family)
	}
	if len(res.Effects) != len(e.Effects) {
		t.Errorf("%d groups, want %d", len(res.Effects), len(e.Effects))
	}
	for _, g := range res.Effects {
		w, ok := e.Effects[g.Group]
		if !ok {
			t.Errorf("group %q is not in the manifest", g.Group)
			continue
		}
		if !close8(g.Estimate, w.Estimate) || !close8(g.SE, w.SE) {
			t.Errorf("group %q: effect %.15g (SE %.15g), statsmodels %.15g (SE %.15g)", g.Group, g.Estimate, g.SE, w.Estimate, w.SE)
		}
	}
}

func close8(a, b float64) bool { return math.Abs(a-b) <= 1e-8*math.Max(math.Abs(b), 1e-300) }

// checkFormulaColumns compares where each formula column's values came
// from with the manifest: "saved", "computed" or "missing".
func checkFormulaColumns(t *testing.T, e corpusEntry, tab *workbook.Table) {
	t.Helper()
	for name, want := range e.FormulaColumns {
		c := tab.Column(name)
		if c == nil {
			t.Errorf("no column %q", name)
			continue
		}
		f := c.Formulas
		var got string
		switch {
		case f.Missing > 0:
			got = "missing"
		case f.Computed > 0:
			got = "computed"
		case f.Saved > 0:
			got = "saved"
		default:
			got = "no formulas"
		}
		if got != want {
			t.Errorf("column %q: formulas %s (%+v), want %s", name, got, f, want)
		}
	}
}

func checkDates(t *testing.T, e corpusEntry, tab *workbook.Table) {
	t.Helper()
	for _, c := range e.Checks {
		col := tab.Column(c.Column)
		if col == nil || col.Kind != workbook.Date {
			t.Errorf("column %q is not read as dates", c.Column)
			continue
		}
		d, ok := col.Time(c.Row - 1)
		if !ok || d.Format("2006-01-02") != c.Date {
			t.Errorf("column %q row %d: %v, want %s", c.Column, c.Row, d, c.Date)
		}
	}
}

// rewritten are the parts that excelize re-serialises when it saves
// (the workbook package's doc comment); every other part of the original
// must come back byte for byte.
func rewritten(name string) bool {
	n := strings.ToLower(name)
	return n == "xl/workbook.xml" || n == "xl/_rels/workbook.xml.rels" || n == "_rels/.rels" || n == "[content_types].xml" ||
		n == "xl/styles.xml" || strings.HasPrefix(n, "xl/theme/") || n == "xl/calcchain.xml" ||
		n == "docprops/app.xml" || n == "docprops/core.xml"
}

// checkWriteBack writes the results into a copy of the file in place and
// checks: every part of the original still there, byte for byte unless
// re-serialised; the workbook's settings (workbookPr and calcPr
// attributes, read here with encoding/xml, not with the writer's code)
// the same in meaning; the backup the original byte for byte. It returns
// the written file, for LibreOffice to open.
func checkWriteBack(t *testing.T, e corpusEntry, src, dir string, a *Analysis) string {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, filepath.Base(src))
	orig, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, orig, 0o644); err != nil {
		t.Fatal(err)
	}
	a.Run.File = path
	w, err := a.Save(workbook.WriteOptions{})
	if err != nil {
		t.Errorf("%s (%s): writing in place: %v", e.Writer, e.Family, err)
		return ""
	}
	back, err := os.ReadFile(w.Backup)
	if err != nil || !bytes.Equal(back, orig) {
		t.Errorf("the backup is not the original byte for byte (%v)", err)
	}
	before, after := iotest.ZipParts(t, src), iotest.ZipParts(t, path)
	for name, body := range before {
		got, ok := after[name]
		switch {
		case !ok:
			t.Errorf("part %s is gone", name)
		case rewritten(name):
		case !bytes.Equal(got, body):
			t.Errorf("part %s changed", name)
		}
	}
	wb := "xl/workbook.xml"
	for _, el := range []string{"workbookPr", "calcPr"} {
		wa, wb2 := settingAttrs(before[wb], el), settingAttrs(after[wb], el)
		for k, v := range wa {
			if got, ok := wb2[k]; !ok || xmlBool(got) != xmlBool(v) {
				t.Errorf("%s %s was %q, is %q", el, k, v, got)
			}
		}
	}
	return path
}

// settingAttrs are the attributes of the first element named el.
func settingAttrs(body []byte, el string) map[string]string {
	dec := xml.NewDecoder(bytes.NewReader(body))
	for {
		tok, err := dec.Token()
		if err != nil {
			return nil
		}
		if s, ok := tok.(xml.StartElement); ok && s.Name.Local == el {
			out := map[string]string{}
			for _, a := range s.Attr {
				out[a.Name.Local] = a.Value
			}
			return out
		}
	}
}

// xmlBool reads XML Schema booleans by meaning (W3C XML Schema Part 2,
// 3.2.2: "1" and "true" are the same value); other values as they are.
func xmlBool(v string) string {
	switch v {
	case "1":
		return "true"
	case "0":
		return "false"
	}
	return v
}

// convertAll has LibreOffice (Debian 12's 7.4, headless) open every
// written workbook and convert it to CSV, in one run: a file it cannot
// open is missing from the output.
func convertAll(t *testing.T, files []string) {
	if len(files) == 0 {
		return
	}
	bin, err := exec.LookPath("soffice")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("soffice (LibreOffice) is missing; CI installs it with the Debian package libreoffice-calc-nogui")
		}
		t.Log("soffice is not installed: the written files were not opened in LibreOffice")
		return
	}
	out := t.TempDir()
	// Two files may share a base name (one writer each): convert each
	// through a link of its own.
	var links []string
	for i, f := range files {
		l := filepath.Join(out, fmt.Sprintf("f%03d%s", i, filepath.Ext(f)))
		if err := os.Symlink(f, l); err != nil {
			t.Fatal(err)
		}
		links = append(links, l)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Minute)
	defer cancel()
	args := append([]string{"-env:UserInstallation=file://" + filepath.Join(out, "profile"), "--headless", "--convert-to", "csv", "--outdir", filepath.Join(out, "csv")}, links...)
	msg, err := exec.CommandContext(ctx, bin, args...).CombinedOutput()
	if err != nil {
		t.Fatalf("LibreOffice failed: %v\n%s", err, msg)
	}
	var missing []string
	for i, f := range files {
		if _, err := os.Stat(filepath.Join(out, "csv", fmt.Sprintf("f%03d.csv", i))); err != nil {
			missing = append(missing, f)
		}
	}
	sort.Strings(missing)
	if len(missing) > 0 {
		t.Errorf("LibreOffice did not convert %d of %d written workbooks: %s\n%s", len(missing), len(files), strings.Join(missing, ", "), msg)
	}
	t.Logf("LibreOffice opened and converted all %d written workbooks", len(files))
}
