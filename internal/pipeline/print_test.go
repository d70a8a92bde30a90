package pipeline

import (
	"bytes"
	"compress/zlib"
	"context"
	"fmt"
	"io"
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

// demoAnalysis is the analysis `make demo` runs, on a fresh copy of the
// demo workbook in dir.
func demoAnalysis(t *testing.T, dir string) *Analysis {
	t.Helper()
	path := writeDemo(t, filepath.Join(dir, "slopewise-demo.xlsx"))
	spec := estimate.Spec{Outcome: demo.ColEarnings, Treatment: estimate.Treatment{Column: demo.ColCoached},
		Moderator: estimate.Moderator{Column: demo.ColRegion, Kind: estimate.ModeratorCategorical},
		Controls:  []string{demo.ColAge, demo.ColBaselineScore}, Cluster: demo.ColSite}
	run := report.Run{File: path, Spec: spec, Randomized: true, Planned: true, Version: "test", Time: time.Date(2026, 12, 3, 12, 0, 0, 0, time.UTC)}
	a, err := Analyze(context.Background(), run, nil)
	if err != nil {
		t.Fatal(err)
	}
	return a
}

// TestResultsSheetPageSetup reads the demo's results sheet's page setup
// back from the written XML: one page wide and as many tall as needed,
// portrait, the title row repeated on every page, a footer with the
// workbook's name, the run's date and "page N of M", and page breaks only
// where a block of the sheet starts.
func TestResultsSheetPageSetup(t *testing.T) {
	a := demoAnalysis(t, t.TempDir())
	w, err := a.Save(workbook.WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	all := iotest.ZipParts(t, w.Path)
	sheet := string(all[sheetPart(t, all, w.Sheet)])
	for _, want := range []*regexp.Regexp{
		regexp.MustCompile(`<pageSetUpPr fitToPage="(true|1)"`),
		regexp.MustCompile(`<pageSetup [^>]*fitToHeight="0"`),
		regexp.MustCompile(`<pageSetup [^>]*fitToWidth="1"`),
		regexp.MustCompile(`<pageSetup [^>]*orientation="portrait"`),
		regexp.MustCompile(`<oddFooter>&amp;L&amp;F, run 2026-12-03 12:00 UTC&amp;RPage &amp;P of &amp;N</oddFooter>`),
	} {
		if !want.MatchString(sheet) {
			t.Errorf("the sheet's XML lacks %s", want)
		}
	}
	if !regexp.MustCompile(`<definedName [^>]*name="_xlnm.Print_Titles"[^>]*>&#39;Results&#39;!\$1:\$1</definedName>`).Match(all["xl/workbook.xml"]) {
		t.Errorf("no print titles for the sheet's first row in %s", all["xl/workbook.xml"])
	}
	titles := map[string]bool{}
	for _, b := range a.Sheet.Blocks {
		if b.Title != "" {
			titles[b.Title] = true
		}
	}
	titles["Settings of this run"] = true
	breaks := regexp.MustCompile(`<brk id="([0-9]+)"[^>]*man="(true|1)"`).FindAllStringSubmatch(sheet, -1)
	if len(breaks) == 0 {
		t.Fatal("no page breaks")
	}
	for _, b := range breaks {
		id, _ := strconv.Atoi(b[1])
		// A break with id n starts the next page at row n+1: a block's
		// title, or the heading of a table within a block, after a blank
		// row.
		text := cellText(sheet, fmt.Sprintf("A%d", id+1))
		blankBefore := !regexp.MustCompile(`<row r="` + b[1] + `"[^>]*>\s*<c `).MatchString(sheet)
		if !blankBefore || (!titles[text] && !tableHeading(a.Sheet, text)) {
			t.Errorf("a page break before row %d, which starts no block or table (its first cell holds %q; blank row before: %v)", id+1, text, blankBefore)
		}
	}
}

// tableHeading reports the first heading of a table within a block: a
// heading row that follows a blank row of the block.
func tableHeading(s *report.Sheet, text string) bool {
	for _, b := range s.Blocks {
		for i := 1; i < len(b.Rows); i++ {
			if len(b.Rows[i-1]) == 0 && len(b.Rows[i]) > 0 && b.Rows[i][0].Kind == report.Heading && b.Rows[i][0].Text == text {
				return true
			}
		}
	}
	return false
}

// cellText is the inline text of a cell of a sheet written by Slopewise.
func cellText(sheet, ref string) string {
	m := regexp.MustCompile(`<c r="` + ref + `"[^>]*t="inlineStr"[^>]*><is><t[^>]*>([^<]*)</t>`).FindStringSubmatch(sheet)
	if m == nil {
		return ""
	}
	return strings.NewReplacer("&amp;", "&", "&#34;", `"`, "&quot;", `"`, "&#39;", "'", "&lt;", "<", "&gt;", ">").Replace(m[1])
}

// TestResultsSheetPrintsLegibly has LibreOffice (7.4, headless) print the
// demo's results sheet to PDF — the sheet alone, in a workbook of its own
// — and reads the PDF: at most 4 pages, and text at least 8 points high
// (the font size of each piece of text as placed on the page, after the
// scaling that fits the sheet to the page's width). With RESULTS_PAGES
// set to a folder, the PDF is kept there as results.pdf, with the
// Moderators sheet of a screen of the demo as moderators.pdf
// (scripts/results-pages.sh makes the README's pictures of them).
func TestResultsSheetPrintsLegibly(t *testing.T) {
	bin := soffice(t)
	// The sheet's fonts are Calibri's; without it or Carlito (its
	// metrics), LibreOffice draws wider characters and shrinks the page.
	if font, err := exec.Command("fc-match", "Calibri").Output(); err != nil || !regexp.MustCompile(`(?i)carlito|calibri`).Match(font) {
		if os.Getenv("CI") == "true" {
			t.Fatalf("no font with Calibri's metrics (fc-match Calibri: %q, %v); CI installs the Debian package fonts-crosextra-carlito", font, err)
		}
		t.Skipf("no font with Calibri's metrics (fc-match Calibri: %q): install fonts-crosextra-carlito", font)
	}
	dir := t.TempDir()
	a := demoAnalysis(t, dir)
	pdf := printSheet(t, bin, filepath.Join(dir, "results"), a.Sheet)
	if keep := os.Getenv("RESULTS_PAGES"); keep != "" {
		if err := os.WriteFile(filepath.Join(keep, "results.pdf"), pdf, 0o644); err != nil {
			t.Fatal(err)
		}
		// The Moderators sheet of a screen of the demo, for the README.
		sr := report.ScreenRun{Base: a.Run}
		sr.Base.Spec.Controls = []string{demo.ColAge}
		for _, m := range []estimate.Moderator{{Column: demo.ColRegion, Kind: estimate.ModeratorCategorical},
			{Column: demo.ColFirstTime, Kind: estimate.ModeratorBinary}, {Column: demo.ColBaselineScore, Kind: estimate.ModeratorContinuous}} {
			sr.Candidates = append(sr.Candidates, report.Candidate{Moderator: m, Planned: m.Column == demo.ColRegion})
		}
		sa, err := Screen(context.Background(), sr, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(keep, "moderators.pdf"), printSheet(t, bin, filepath.Join(dir, "moderators"), sa.Sheet), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	pages := len(regexp.MustCompile(`/Type\s*/Page[^s]`).FindAll(pdf, -1))
	sizes := textSizes(t, pdf)
	body, smallest := mostCommon(sizes), math.Inf(1)
	for s := range sizes {
		if s > 0 { // text drawn at no size is not seen
			smallest = math.Min(smallest, s)
		}
	}
	t.Logf("%d pages; body text %.2f points high, the smallest %.2f", pages, body, smallest)
	if pages < 1 || pages > 4 {
		t.Errorf("the results sheet prints on %d pages, want 1 to 4", pages)
	}
	if body < 8 {
		t.Errorf("body text %.2f points high, want at least 8", body)
	}
}

// printSheet has LibreOffice print a results sheet to PDF: the sheet
// alone, in a workbook of its own written beside a text file without its
// data, in the folder dir.
func printSheet(t *testing.T, bin, dir string, sheet *report.Sheet) []byte {
	t.Helper()
	src := filepath.Join(dir, "slopewise-demo.csv")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(src, []byte("a\n1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	w, err := workbook.WriteResults(src, sheet, workbook.WriteOptions{CopyData: workbook.CopyDataNever})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
	defer cancel()
	out := filepath.Join(dir, "pdf")
	msg, err := exec.CommandContext(ctx, bin, "-env:UserInstallation=file://"+filepath.Join(dir, "profile"),
		"--headless", "--convert-to", "pdf", "--outdir", out, w.Path).CombinedOutput()
	if err != nil {
		t.Fatalf("LibreOffice failed: %v\n%s", err, msg)
	}
	files, _ := filepath.Glob(filepath.Join(out, "*.pdf"))
	if len(files) != 1 {
		t.Fatalf("LibreOffice wrote %v\n%s", files, msg)
	}
	pdf, err := os.ReadFile(files[0])
	if err != nil {
		t.Fatal(err)
	}
	return pdf
}

// textSizes counts the pieces of text of a PDF by the height at which
// they are drawn: the font size set by Tf times the vertical scale of the
// text matrix (Tm) and of the page's transformation (cm, with q and Q),
// rounded to a hundredth (PDF 1.7, ISO 32000-1, sections 8.4 and 9.4).
// Only content streams compressed with FlateDecode or not at all are read,
// as LibreOffice writes them.
func textSizes(t *testing.T, pdf []byte) map[float64]int {
	t.Helper()
	sizes := map[float64]int{}
	streams := regexp.MustCompile(`(?s)<<([^<>]*(?:<<[^<>]*>>[^<>]*)*)>>\s*stream\r?\n`)
	for _, loc := range streams.FindAllSubmatchIndex(pdf, -1) {
		dict := string(pdf[loc[2]:loc[3]])
		start := loc[1]
		end := bytes.Index(pdf[start:], []byte("endstream"))
		if end < 0 {
			continue
		}
		data := pdf[start : start+end]
		if strings.Contains(dict, "/FlateDecode") {
			r, err := zlib.NewReader(bytes.NewReader(data))
			if err != nil {
				continue
			}
			data, err = io.ReadAll(r)
			if err != nil && len(data) == 0 {
				continue
			}
		} else if strings.Contains(dict, "/Filter") {
			continue
		}
		if strings.Contains(dict, "/Subtype") { // fonts and images
			continue
		}
		contentSizes(data, sizes)
	}
	return sizes
}

// contentSizes adds the text heights of one content stream to sizes.
func contentSizes(data []byte, sizes map[float64]int) {
	type matrix [6]float64
	mul := func(a, b matrix) matrix {
		return matrix{a[0]*b[0] + a[1]*b[2], a[0]*b[1] + a[1]*b[3], a[2]*b[0] + a[3]*b[2], a[2]*b[1] + a[3]*b[3],
			a[4]*b[0] + a[5]*b[2] + b[4], a[4]*b[1] + a[5]*b[3] + b[5]}
	}
	identity := matrix{1, 0, 0, 1, 0, 0}
	ctm, tm := identity, identity
	var stack []matrix
	fontSize := 0.0
	var operands []float64
	tokens := regexp.MustCompile(`\((?:\\.|[^\\)])*\)|<[0-9A-Fa-f\s]*>|\[|\]|/[^\s/\[\]()<>]+|[-+]?(?:\d+\.?\d*|\.\d+)|[A-Za-z'"*]+`)
	for _, tok := range tokens.FindAll(data, -1) {
		s := string(tok)
		if v, err := strconv.ParseFloat(s, 64); err == nil {
			operands = append(operands, v)
			continue
		}
		switch s {
		case "q":
			stack = append(stack, ctm)
		case "Q":
			if n := len(stack); n > 0 {
				ctm, stack = stack[n-1], stack[:n-1]
			}
		case "cm":
			if n := len(operands); n >= 6 {
				var m matrix
				copy(m[:], operands[n-6:])
				ctm = mul(m, ctm)
			}
		case "BT":
			tm = identity
		case "Tm":
			if n := len(operands); n >= 6 {
				copy(tm[:], operands[n-6:])
			}
		case "Tf":
			if n := len(operands); n >= 1 {
				fontSize = operands[n-1]
			}
		case "Tj", "TJ", "'", "\"":
			m := mul(tm, ctm)
			h := math.Abs(fontSize) * math.Hypot(m[2], m[3])
			sizes[math.Round(h*100)/100]++
		}
		if !strings.HasPrefix(s, "/") && !strings.HasPrefix(s, "(") && !strings.HasPrefix(s, "<") && s != "[" && s != "]" {
			operands = operands[:0]
		}
	}
}

// mostCommon is the size drawn most often.
func mostCommon(sizes map[float64]int) float64 {
	keys := make([]float64, 0, len(sizes))
	for k := range sizes {
		keys = append(keys, k)
	}
	sort.Float64s(keys)
	best := 0.0
	for _, k := range keys {
		if sizes[k] > sizes[best] {
			best = k
		}
	}
	return best
}
