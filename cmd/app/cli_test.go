package main

import (
	"bufio"
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"

	demodata "slopewise/internal/demo"
	"slopewise/internal/estimate"
	"slopewise/internal/report"
)

// runCLI runs the command line in-process and returns its exit code and
// both outputs.
func runCLI(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := cli(context.Background(), args, &out, &errb)
	if strings.Contains(errb.String(), "goroutine ") || strings.Contains(errb.String(), "panic") {
		t.Fatalf("a stack trace reached the user:\n%s", errb.String())
	}
	return code, out.String(), errb.String()
}

// copyFile copies a fixture into a temporary folder so that tests never
// write next to the committed fixtures.
func copyFile(t *testing.T, src string) string {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	dst := filepath.Join(t.TempDir(), filepath.Base(src))
	if err := os.WriteFile(dst, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return dst
}

func hashFile(t *testing.T, path string) [32]byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return sha256.Sum256(b)
}

const rDir = "../../testdata/r"

// TestIdleBootstrapOptions: bootstrap options that change nothing (no
// --cluster; --draws or --seed with --no-bootstrap) are accepted, so that
// a script may pass them for every file, and noted in one line.
func TestIdleBootstrapOptions(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "warp_cat.csv"))
	base := []string{"analyze", csv, "--outcome", "breaks", "--treatment", "wool", "--treated", "B", "--moderator", "tension", "--dry-run"}
	for _, c := range []struct {
		extra []string
		words string
	}{
		{[]string{"--no-bootstrap"}, "Note: --no-bootstrap changes nothing here: there is no --cluster"},
		{[]string{"--seed", "4", "--draws", "999"}, "Note: --draws and --seed change nothing here: there is no --cluster"},
	} {
		code, out, errs := runCLI(t, append(append([]string{}, base...), c.extra...)...)
		if code != exitOK || !strings.Contains(out+errs, c.words) {
			t.Errorf("%v: exit %d, want 0 and %q:\n%s%s", c.extra, code, c.words, out, errs)
		}
	}
	co2 := copyFile(t, filepath.Join(rDir, "co2_cluster.csv"))
	code, out, errs := runCLI(t, "analyze", co2, "--outcome", "uptake", "--treatment", "Treatment", "--treated", "chilled", "--moderator", "Type", "--cluster", "Plant", "--no-bootstrap", "--seed", "3", "--dry-run")
	if want := "Note: --seed changes nothing here: --no-bootstrap is given"; code != exitOK || !strings.Contains(out+errs, want) {
		t.Errorf("exit %d, want 0 and %q:\n%s%s", code, want, out, errs)
	}
}

// TestUsageErrors checks that every malformed command line exits with 2
// and a message that says what to fix.
func TestUsageErrors(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "warp_cat.csv"))
	base := []string{"analyze", csv, "--outcome", "breaks", "--treatment", "wool", "--treated", "B", "--moderator", "tension"}
	with := func(extra ...string) []string { return append(append([]string{}, base...), extra...) }
	cases := []struct {
		name  string
		args  []string
		words string
	}{
		{"no command", nil, "Usage"},
		{"unknown command", []string{"analyse"}, `no command "analyse"`},
		{"help for unknown command", []string{"help", "fit"}, `no command "fit"`},
		{"no file", []string{"analyze", "--outcome", "y"}, "give the workbook"},
		{"two files", with(csv), "one file at a time"},
		{"missing outcome", []string{"analyze", csv, "--treatment", "wool", "--moderator", "tension"}, "--outcome is required"},
		{"missing treatment", []string{"analyze", csv, "--outcome", "breaks", "--moderator", "tension"}, "--treatment is required"},
		{"missing moderator", []string{"analyze", csv, "--outcome", "breaks", "--treatment", "wool"}, "--moderator is required"},
		{"unknown flag", with("--colour", "red"), "flag provided but not defined: -colour"},
		{"bad moderator type", with("--moderator-type", "ordinal"), "binary, category or number"},
		{"reference with number", with("--moderator-type", "number", "--reference", "L"), "cannot go with --moderator-type number"},
		{"values with category", with("--moderator-type", "category", "--moderator-values", "1,2"), "are for a number moderator"},
		{"center with reference", with("--reference", "L", "--center", "2"), "are for a number moderator"},
		{"values not numbers", with("--moderator-values", "1,two"), `"two" is not a number`},
		{"values not finite", with("--moderator-values", "NaN,Inf"), `"NaN" is not a number`},
		{"center not finite", with("--center", "Inf"), `--center must be a number`},
		{"center not a number", with("--center", "middle"), `--center must be a number`},
		{"bad se", with("--se", "hc4"), "classical, hc0, hc1, hc2, hc3 or cluster"},
		{"cluster se without cluster", with("--se", "cluster"), "needs --cluster"},
		{"cluster with other se", with("--cluster", "wool", "--se", "hc1"), "ignores it"},
		{"alpha too large", with("--alpha", "0.7"), "--alpha must be between 0 and 0.5"},
		{"alpha not a number", with("--alpha", "five"), "invalid value"},
		{"negative header row", with("--header-row", "-3"), "--header-row must be a row number"},
		{"dry run with out", with("--dry-run", "--out", "x.xlsx"), "--dry-run writes nothing"},
		{"out with a text name", with("--out", "results.csv"), "--out must name an Excel workbook (.xlsx)"},
		{"bad copy-data", with("--copy-data", "sometimes"), `--copy-data must be auto, yes or no, not "sometimes"`},
		{"too few draws", with("--cluster", "wool", "--draws", "10"), "--draws must be a whole number from 99 to 999999"},
		{"too many draws", with("--cluster", "wool", "--draws", "1000000"), "--draws must be a whole number from 99"},
		{"draws not a number", with("--cluster", "wool", "--draws", "many"), "invalid value"},
		{"negative seed", with("--cluster", "wool", "--seed", "-1"), "invalid value"},
		{"zero margin", with("--equivalence-margin", "0"), "--equivalence-margin must be a positive number"},
		{"negative margin", with("--equivalence-margin", "-2"), "--equivalence-margin must be a positive number"},
		{"infinite margin", with("--equivalence-margin", "Inf"), "--equivalence-margin must be a positive number"},
		{"margin not a number", with("--equivalence-margin", "small"), "invalid value"},
		{"bad grouping", with("--grouping", "stop"), `--grouping must be warn or refuse, not "stop"`},
		{"demo without folder", []string{"demo"}, "give one folder"},
		{"demo with two folders", []string{"demo", "a", "b"}, "give one folder"},
		{"demo unknown flag", []string{"demo", "--force", "x"}, "flag provided but not defined"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, errs := runCLI(t, c.args...)
			if code != exitUsage {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, exitUsage, errs)
			}
			if !strings.Contains(errs, c.words) {
				t.Errorf("stderr does not say %q:\n%s", c.words, errs)
			}
		})
	}
}

// TestHelp checks the help texts and the version.
func TestHelp(t *testing.T) {
	for _, c := range []struct {
		args  []string
		words string
	}{
		{[]string{"help"}, "slopewise analyze FILE"},
		{[]string{"--help"}, "slopewise analyze FILE"},
		{[]string{"-h"}, "slopewise demo DIR"},
		{[]string{"help", "analyze"}, "--moderator-values"},
		{[]string{"analyze", "--help"}, "--moderator-values"},
		{[]string{"help", "analyze"}, "--no-bootstrap"},
		{[]string{"help", "screen"}, "--moderators A,B"},
		{[]string{"help", "analyze"}, "--equivalence-margin D"},
		{[]string{"help", "screen"}, "--equivalence-margin"},
		{[]string{"screen", "--help"}, "--planned A"},
		{[]string{"help"}, "slopewise screen FILE"},
		{[]string{"help", "analyze"}, "--draws B"},
		{[]string{"help", "analyze"}, "--seed N"},
		{[]string{"help", "analyze"}, "--period COL"},
		{[]string{"help", "analyze"}, "--unit-effects"},
		{[]string{"help", "demo"}, "known"},
		{[]string{"demo", "-h"}, "known"},
		{[]string{"version"}, "slopewise " + version},
		{[]string{"--version"}, "slopewise " + version},
	} {
		code, out, errs := runCLI(t, c.args...)
		if code != exitOK || !strings.Contains(out, c.words) {
			t.Errorf("%v: exit %d, stdout %q, stderr %q; want 0 and %q", c.args, code, out, errs, c.words)
		}
	}
}

// TestDataErrors checks that problems with the data exit with 1 and a
// message that names the file, column or sheet.
func TestDataErrors(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "warp_cat.csv"))
	dir := t.TempDir()
	xls := filepath.Join(dir, "old.xls")
	if err := os.WriteFile(xls, []byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1, 0, 0, 0, 0}, 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name  string
		args  []string
		words []string
	}{
		{"no such column", []string{"analyze", csv, "--outcome", "breaks", "--treatment", "wool", "--treated", "B", "--moderator", "tensoin"},
			[]string{`no column "tensoin"`, `"tension"`}},
		{"labels without --treated", []string{"analyze", csv, "--outcome", "breaks", "--treatment", "wool", "--moderator", "tension"},
			[]string{"--treated LABEL", "A, B"}},
		{"treated label absent", []string{"analyze", csv, "--outcome", "breaks", "--treatment", "wool", "--treated", "C", "--moderator", "tension"},
			[]string{`"C"`, "does not appear"}},
		{"no such file", []string{"analyze", filepath.Join(dir, "gone.xlsx"), "--outcome", "y", "--treatment", "t", "--moderator", "m"},
			[]string{"gone.xlsx"}},
		{"old format", []string{"analyze", xls, "--outcome", "y", "--treatment", "t", "--moderator", "m"},
			[]string{"old.xls"}},
		{"no such sheet", []string{"analyze", writeDemo(t), "--sheet", "Visits", "--outcome", "y", "--treatment", "t", "--moderator", "m"},
			[]string{`"Visits"`}},
		{"text outcome", []string{"analyze", csv, "--outcome", "tension", "--treatment", "wool", "--treated", "B", "--moderator", "breaks"},
			[]string{`"tension"`, "holds text"}},
		{"demo into an existing file", []string{"demo", filepath.Dir(writeDemo(t))}, []string{"already exists"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, errs := runCLI(t, c.args...)
			if code != exitData {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, exitData, errs)
			}
			for _, w := range c.words {
				if !strings.Contains(errs, w) {
					t.Errorf("stderr does not say %q:\n%s", w, errs)
				}
			}
		})
	}
}

// writeDemo writes the demo workbook with the demo command and returns
// its path.
func writeDemo(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	if code, _, errs := runCLI(t, "demo", dir); code != exitOK {
		t.Fatalf("demo: exit %d: %s", code, errs)
	}
	return filepath.Join(dir, "slopewise-demo.xlsx")
}

// TestDryRunAndOut checks that --dry-run writes nothing and --out writes a
// copy, leaving the source's bytes as they were.
func TestDryRunAndOut(t *testing.T) {
	path := writeDemo(t)
	before := hashFile(t, path)
	args := []string{"analyze", path, "--outcome", "earnings_6m", "--treatment", "coached", "--moderator", "first_time", "--randomized"}
	code, out, errs := runCLI(t, append(args, "--dry-run")...)
	if code != exitOK || !strings.Contains(out, "nothing was written") {
		t.Fatalf("dry run: exit %d\n%s\n%s", code, out, errs)
	}
	entries, _ := os.ReadDir(filepath.Dir(path))
	if hashFile(t, path) != before || len(entries) != 2 { // the two demo workbooks
		t.Fatalf("dry run changed the folder: %d entries", len(entries))
	}
	copyPath := filepath.Join(t.TempDir(), "copy.xlsx")
	code, out, errs = runCLI(t, append(args, "--out", copyPath)...)
	if code != exitOK || !strings.Contains(out, copyPath) {
		t.Fatalf("--out: exit %d\n%s\n%s", code, out, errs)
	}
	if hashFile(t, path) != before {
		t.Error("--out changed the source")
	}
	if _, err := os.Stat(copyPath); err != nil {
		t.Error(err)
	}
}

// TestJSONAgainstR runs analyze --json on the R reference cases and
// compares the printed numbers with R 4.2.2 lm + sandwich 3.0.2
// (testdata/r/reference.txt, produced by testdata/r/make_reference.R).
func TestJSONAgainstR(t *testing.T) {
	ref := readReference(t, "reference.txt")
	// The before-and-after cases of testdata/r/make_did.R (R 4.2.2 lm +
	// sandwich 3.0.2), in did.txt.
	for name, values := range readReference(t, "did.txt") {
		ref[name] = values
	}
	// The three-arm case of testdata/r/make_arms.R, in arms.txt.
	for name, values := range readReference(t, "arms.txt") {
		ref[name] = values
	}
	cases := []struct {
		name, file, vtype string
		args              []string
	}{
		{"arms3", "arms.csv", "HC3", []string{"--outcome", "earnings", "--treatment", "arm", "--control-arm", "waitlist", "--moderator", "region", "--controls", "age"}},
		{"did_cat", "did_panel.csv", "CR1", []string{"--outcome", "earnings", "--treatment", "programme", "--treated", "coached", "--period", "year", "--after", "2024",
			"--unit", "person", "--cluster", "site", "--moderator", "region", "--no-bootstrap"}},
		{"did_cat", "did_panel.csv", "HC3", []string{"--outcome", "earnings", "--treatment", "programme", "--treated", "coached", "--period", "year", "--after", "2024",
			"--unit", "person", "--se", "hc3", "--moderator", "region"}},
		{"did_fe", "did_panel.csv", "CR1", []string{"--outcome", "earnings", "--treatment", "coached", "--period", "post", "--unit", "person", "--unit-effects",
			"--moderator", "region", "--controls", "age"}},
		{"did_cont", "did_panel.csv", "HC1", []string{"--outcome", "earnings", "--treatment", "coached", "--period", "post", "--unit", "person", "--se", "hc1",
			"--moderator", "score", "--controls", "age", "--weights", "weight"}},
		{"warp_cat", "warp_cat.csv", "HC3", []string{"--outcome", "breaks", "--treatment", "wool", "--treated", "B", "--moderator", "tension"}},
		{"warp_cat", "warp_cat.csv", "HC1", []string{"--outcome", "breaks", "--treatment", "wool", "--treated", "B", "--moderator", "tension", "--se", "hc1"}},
		{"mtcars_bin", "mtcars_bin.csv", "classical", []string{"--outcome", "mpg", "--treatment", "am", "--moderator", "vs", "--controls", "wt,hp", "--se", "classical"}},
		{"mtcars_cont", "mtcars_cont.csv", "HC2", []string{"--outcome", "mpg", "--treatment", "am", "--moderator", "wt", "--moderator-type", "number", "--center", "3", "--controls", "hp", "--se", "hc2"}},
		{"co2_cluster", "co2_cluster.csv", "CR1", []string{"--outcome", "uptake", "--treatment", "Treatment", "--treated", "chilled", "--moderator", "Type", "--controls", "conc", "--cluster", "Plant"}},
		{"airq_weighted78", "airq_weighted78.csv", "HC3", []string{"--outcome", "Ozone", "--treatment", "hot", "--moderator", "Month", "--moderator-type", "category", "--controls", "Wind,Solar.R", "--weights", "w"}},
	}
	for _, c := range cases {
		t.Run(c.name+" "+c.vtype, func(t *testing.T) {
			csv := copyFile(t, filepath.Join(rDir, c.file))
			code, out, errs := runCLI(t, append([]string{"analyze", csv, "--json", "--dry-run"}, c.args...)...)
			if code != exitOK {
				t.Fatalf("exit %d: %s", code, errs)
			}
			var o report.Output
			if err := json.Unmarshal([]byte(out), &o); err != nil {
				t.Fatalf("stdout is not the JSON contract: %v\n%s", err, out)
			}
			want := ref[c.name]
			near := func(what string, got float64, key string) {
				w, ok := want[c.vtype+" "+key]
				if !ok {
					w, ok = want["- "+key]
				}
				if !ok {
					t.Errorf("no reference for %s", key)
					return
				}
				if math.Abs(got-w) > 1e-8*math.Abs(w) {
					t.Errorf("%s: %.17g, R gives %.17g", what, got, w)
				}
			}
			near("n_used", float64(o.NUsed), "n")
			near("df", o.DF, "df")
			probe := map[string]string{}
			for _, p := range []string{"p10", "p25", "p50", "p75", "p90"} {
				if v, ok := want["- probe["+p+"].value"]; ok {
					probe[strconv.FormatFloat(v, 'g', -1, 64)] = p
				}
			}
			key := func(label string) string {
				if p, ok := probe[label]; ok {
					return p
				}
				return label
			}
			arm := func(a string) string {
				if a == "" {
					return ""
				}
				return a + "|"
			}
			for _, g := range o.Groups {
				k := "effect[" + arm(g.Arm) + key(g.Label) + "]"
				near(g.Label+" estimate", g.Estimate, k+".est")
				near(g.Label+" se", g.SE, k+".se")
				near(g.Label+" ci_low", g.CILow, k+".lo")
				near(g.Label+" ci_high", g.CIHigh, k+".hi")
				near(g.Label+" p", g.P, k+".p")
			}
			for _, d := range o.Differences {
				var k string
				if strings.HasPrefix(d.Label, "per 1 unit") {
					k = "diff[unit]"
				} else {
					to, from, _ := strings.Cut(d.Label, " vs ")
					k = "diff[" + arm(d.Arm) + key(from) + "|" + key(to) + "]"
				}
				near(d.Label+" estimate", d.Estimate, k+".est")
				near(d.Label+" se", d.SE, k+".se")
				near(d.Label+" p", d.P, k+".p")
				near(d.Label+" mdd", d.MDD, k+".mdd")
			}
			for _, a := range o.Arms {
				near(a.Arm+" F", a.Heterogeneity.F, "armhet["+a.Arm+"].F")
				near(a.Arm+" Holm p", a.HolmP, "armhet["+a.Arm+"].holm")
			}
			if (c.name == "arms3") != (len(o.Arms) == 2) {
				t.Errorf("%d arms in the JSON", len(o.Arms))
			}
			near("F", o.Heterogeneity.F, "het.F")
			near("F p", o.Heterogeneity.P, "het.p")
			if o.JN != nil {
				lo, hi := want["- mod.min"], want["- mod.max"]
				var inside []string // the keys of R's roots inside the range
				for _, r := range []string{"jn.root1", "jn.root2"} {
					if v, ok := want[c.vtype+" "+r]; ok && v > lo && v < hi {
						inside = append(inside, r)
					}
				}
				if len(o.JN.Bounds) != len(inside) {
					t.Errorf("JN bounds %v, R's roots inside the range %v", o.JN.Bounds, inside)
				}
				for i, r := range inside {
					near("JN bound", o.JN.Bounds[i], r)
				}
			}
			if o.Note == "" || len(o.Cautions) == 0 {
				t.Error("the JSON lacks the note or the cautions")
			}
		})
	}
}

// readReference reads a file of testdata/r in reference.txt's grammar into
// case → "vtype key" → value.
func readReference(t *testing.T, name string) map[string]map[string]float64 {
	t.Helper()
	fh, err := os.Open(filepath.Join(rDir, name))
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	ref := map[string]map[string]float64{}
	sc := bufio.NewScanner(fh)
	for sc.Scan() {
		f := strings.Fields(sc.Text())
		if len(f) != 4 || strings.HasPrefix(f[0], "#") {
			continue
		}
		v, err := strconv.ParseFloat(f[3], 64)
		if err != nil {
			continue
		}
		if ref[f[0]] == nil {
			ref[f[0]] = map[string]float64{}
		}
		ref[f[0]][f[1]+" "+f[2]] = v
	}
	return ref
}

// TestDemoEndToEnd writes the demo, analyzes it for each of its three
// moderators, reads the results sheet back from the saved workbook and
// checks that its numbers are the engine's (as printed in the JSON) and
// that the demo's known true effects lie inside the reported intervals.
func TestDemoEndToEnd(t *testing.T) {
	cases := []struct {
		moderator string
		truth     func(label string) float64
	}{
		{demodata.ColFirstTime, func(l string) float64 { return demodata.TrueEffects(demodata.ColFirstTime)[l] }},
		{demodata.ColRegion, func(l string) float64 { return demodata.TrueEffects(demodata.ColRegion)[l] }},
		{demodata.ColBaselineScore, func(l string) float64 {
			v, _ := strconv.ParseFloat(l, 64)
			return demodata.TrueEffectAt(v)
		}},
	}
	for _, c := range cases {
		t.Run(c.moderator, func(t *testing.T) {
			path := writeDemo(t)
			code, out, errs := runCLI(t, "analyze", path, "--outcome", demodata.ColEarnings, "--treatment", demodata.ColCoached,
				"--moderator", c.moderator, "--controls", demodata.ColAge, "--cluster", demodata.ColSite, "--randomized", "--planned", "--json")
			if code != exitOK {
				t.Fatalf("exit %d: %s", code, errs)
			}
			var o report.Output
			if err := json.Unmarshal([]byte(out), &o); err != nil {
				t.Fatal(err)
			}
			// 7 unusable outcomes and 1 unusable age (assets/README.md); the
			// 2 error values in baseline_score count only when it is used.
			want := 8
			if c.moderator == demodata.ColBaselineScore {
				want = 10
			}
			if o.NDropped != want {
				t.Errorf("%d rows left out, want %d", o.NDropped, want)
			}
			for _, g := range o.Groups {
				if truth := c.truth(g.Label); truth < g.CILow || truth > g.CIHigh {
					t.Errorf("group %s: true effect %g outside the reported CI %g to %g", g.Label, truth, g.CILow, g.CIHigh)
				}
			}
			sheetEffects := readEffects(t, path)
			if len(sheetEffects) != len(o.Groups) {
				t.Fatalf("sheet has %d effect rows, JSON %d", len(sheetEffects), len(o.Groups))
			}
			for i, g := range o.Groups {
				got := sheetEffects[i]
				for j, want := range []float64{g.Estimate, g.SE, g.CILow, g.CIHigh, g.P} {
					if got[j] != want {
						t.Errorf("group %s column %d: sheet %.17g, engine %.17g", g.Label, j, got[j], want)
					}
				}
			}
		})
	}
}

// readEffects reads the effect table of the results sheet back from the
// saved workbook: estimate, SE, CI low, CI high and p of each row, as
// stored (not as displayed).
func readEffects(t *testing.T, path string) [][5]float64 {
	t.Helper()
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := f.GetRows("Results", excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	var out [][5]float64
	for i, r := range rows {
		if len(r) < 9 || (r[4] != "Effect" && r[4] != "Difference associated") {
			continue
		}
		for _, row := range rows[i+1:] {
			if len(row) < 9 {
				break
			}
			var v [5]float64
			for j := range v {
				v[j], err = strconv.ParseFloat(row[4+j], 64)
				if err != nil {
					t.Fatalf("row %v: %v", row, err)
				}
			}
			out = append(out, v)
		}
		break
	}
	return out
}

// TestRemainingFlags exercises the options the other tests only refuse:
// --sheet, --header-row, --reference, --alpha and --moderator-values.
func TestRemainingFlags(t *testing.T) {
	path := writeDemo(t)
	base := []string{"analyze", path, "--dry-run", "--json", "--sheet", "Participants", "--header-row", "3",
		"--outcome", demodata.ColEarnings, "--treatment", demodata.ColCoached, "--controls", demodata.ColAge}
	get := func(extra ...string) report.Output {
		t.Helper()
		code, out, errs := runCLI(t, append(append([]string{}, base...), extra...)...)
		if code != exitOK {
			t.Fatalf("%v: exit %d: %s", extra, code, errs)
		}
		var o report.Output
		if err := json.Unmarshal([]byte(out), &o); err != nil {
			t.Fatal(err)
		}
		return o
	}
	o95 := get("--moderator", demodata.ColRegion, "--reference", "North")
	if o95.Groups[0].Label != "North" || o95.Differences[0].Label != "Harbour vs North" {
		t.Errorf("--reference North: groups start %q, differences %q", o95.Groups[0].Label, o95.Differences[0].Label)
	}
	o90 := get("--moderator", demodata.ColRegion, "--reference", "North", "--alpha", "0.1")
	w95 := o95.Groups[0].CIHigh - o95.Groups[0].CILow
	w90 := o90.Groups[0].CIHigh - o90.Groups[0].CILow
	if o90.Groups[0].Estimate != o95.Groups[0].Estimate || !(w90 < w95) {
		t.Errorf("--alpha 0.1: interval width %g, want narrower than the 95%% one %g", w90, w95)
	}
	probes := get("--moderator", demodata.ColBaselineScore, "--moderator-values", "20,50,80")
	var labels []string
	for _, g := range probes.Groups {
		labels = append(labels, g.Label)
	}
	if strings.Join(labels, ",") != "20,50,80" || probes.JN == nil {
		t.Errorf("--moderator-values: groups %v, JN %v", labels, probes.JN)
	}
	if want := demodata.TrueEffectAt(50); want < probes.Groups[1].CILow || want > probes.Groups[1].CIHigh {
		t.Errorf("true effect at 50 (%g) outside the CI %g to %g", want, probes.Groups[1].CILow, probes.Groups[1].CIHigh)
	}
	bin := get("--moderator", demodata.ColFirstTime, "--moderator-type", "binary", "--reference", "yes")
	if bin.Groups[0].Label != "yes" {
		t.Errorf("binary with --reference yes: first group %q", bin.Groups[0].Label)
	}
}

// TestCopyDataOfBigCSV runs analyze on a CSV of 100,001 rows (and a header): by default
// the results workbook holds the results only and the command says where
// the data stay; --copy-data yes copies them.
func TestCopyDataOfBigCSV(t *testing.T) {
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("y,t,g\n")
	for i := range 100_001 {
		fmt.Fprintf(&b, "%d,%d,%c\n", (i*7919)%101, i%2, 'a'+byte(i%3))
	}
	src := filepath.Join(dir, "big.csv")
	if err := os.WriteFile(src, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	args := []string{"analyze", src, "--outcome", "y", "--treatment", "t", "--moderator", "g"}
	code, out, errs := runCLI(t, args...)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "The data stay in "+src+" only: at more than 100,000 rows") {
		t.Errorf("no word of the data left out:\n%s", out)
	}
	sheets := func(path string) []string {
		f, err := excelize.OpenFile(path)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		return f.GetSheetList()
	}
	results := filepath.Join(dir, "big results.xlsx")
	if got := sheets(results); len(got) != 1 {
		t.Errorf("sheets %v, want the results only", got)
	}
	copyTo := filepath.Join(dir, "with data.xlsx")
	code, out, errs = runCLI(t, append(args, "--copy-data", "yes", "--out", copyTo)...)
	if code != exitOK || strings.Contains(out, "The data stay") {
		t.Fatalf("exit %d: %s\n%s", code, out, errs)
	}
	if got := sheets(copyTo); len(got) != 2 || got[0] != "Data" {
		t.Errorf("sheets %v, want Data and the results", got)
	}
}

// TestBootstrapFlags runs analyze on data with 12 clusters (R's CO2, 12
// plants): the wild cluster bootstrap is on by default and shows in the
// JSON; --seed and --draws change it, the same seed repeats it exactly,
// and --no-bootstrap turns it off.
func TestBootstrapFlags(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "co2_cluster.csv"))
	base := []string{"analyze", csv, "--json", "--dry-run", "--outcome", "uptake", "--treatment", "Treatment", "--treated", "chilled",
		"--moderator", "Type", "--controls", "conc", "--cluster", "Plant"}
	run := func(extra ...string) (string, map[string]any) {
		t.Helper()
		code, out, errs := runCLI(t, append(append([]string{}, base...), extra...)...)
		if code != exitOK {
			t.Fatalf("%v: exit %d: %s", extra, code, errs)
		}
		var m map[string]any
		if err := json.Unmarshal([]byte(out), &m); err != nil {
			t.Fatal(err)
		}
		return out, m
	}
	_, def := run()
	boot, _ := def["bootstrap"].(map[string]any)
	if boot == nil || boot["draws"] != 9999.0 || boot["weights"] != "webb" || boot["enumerated"] != false || boot["seed"] != 0.0 {
		t.Errorf("default bootstrap %v; want 9999 Webb draws, seed 0", def["bootstrap"])
	}
	for _, key := range []string{"groups", "differences"} {
		for _, it := range def[key].([]any) {
			row := it.(map[string]any)
			lo, okLo := row["ci_boot_low"].(float64)
			hi, okHi := row["ci_boot_high"].(float64)
			p, okP := row["p_boot"].(float64)
			if !okLo || !okHi || !okP || !(lo < row["estimate"].(float64) && row["estimate"].(float64) < hi) || p <= 0 || p > 1 {
				t.Errorf("%s %v: bootstrap fields missing or wrong", key, row["label"])
			}
		}
	}
	if h := def["heterogeneity"].(map[string]any); h["p_boot"] == nil {
		t.Error("heterogeneity lacks p_boot")
	}
	if note := def["note"].(string); !strings.Contains(note, "wild cluster bootstrap") || !strings.Contains(note, "bootstrap p") {
		t.Errorf("the note does not say the bootstrap was used:\n%s", note)
	}

	a, seeded := run("--seed", "5", "--draws", "999")
	b, _ := run("--seed", "5", "--draws", "999")
	if a != b {
		t.Error("the same seed gave different output")
	}
	if sb := seeded["bootstrap"].(map[string]any); sb["draws"] != 999.0 || sb["seed"] != 5.0 {
		t.Errorf("--seed 5 --draws 999: bootstrap %v", sb)
	}
	if seeded["groups"].([]any)[0].(map[string]any)["p_boot"] == def["groups"].([]any)[0].(map[string]any)["p_boot"] &&
		seeded["differences"].([]any)[0].(map[string]any)["ci_boot_low"] == def["differences"].([]any)[0].(map[string]any)["ci_boot_low"] {
		t.Error("another seed and number of draws gave the same bootstrap answers")
	}

	raw, off := run("--no-bootstrap")
	if off["bootstrap"] != nil || strings.Contains(raw, "p_boot") || !strings.Contains(raw, `"bootstrap": null`) {
		t.Errorf("--no-bootstrap: bootstrap %v, p_boot in output: %v", off["bootstrap"], strings.Contains(raw, "p_boot"))
	}
	if note := off["note"].(string); strings.Contains(note, "bootstrap") {
		t.Errorf("--no-bootstrap: the note speaks of the bootstrap:\n%s", note)
	}
}

// TestScreenUsageErrors checks that every malformed screen command line
// exits with 2 and a message that says what to fix.
func TestScreenUsageErrors(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "warp_cat.csv"))
	base := []string{"screen", csv, "--outcome", "breaks", "--treatment", "wool", "--treated", "B"}
	with := func(extra ...string) []string { return append(append([]string{}, base...), extra...) }
	cases := []struct {
		name  string
		args  []string
		words string
	}{
		{"no file", []string{"screen", "--outcome", "y"}, "give the workbook to screen"},
		{"missing outcome", []string{"screen", csv, "--treatment", "wool", "--moderators", "a,b"}, "--outcome is required"},
		{"no moderators", with(), "--moderators needs at least two columns"},
		{"one moderator", with("--moderators", "tension"), "for one moderator use analyze"},
		{"moderator twice", with("--moderators", "tension,breaks,tension"), `--moderators lists "tension" twice`},
		{"planned not tried", with("--moderators", "tension,breaks", "--planned", "wool"), `--planned names "wool", which is not among --moderators`},
		{"analyze's --moderator", with("--moderator", "tension"), "--moderator is an option of analyze"},
		{"analyze's --center", with("--moderators", "a,b", "--center=3"), "--center is an option of analyze"},
		{"analyze's --reference", with("--moderators", "a,b", "-reference", "L"), "--reference is an option of analyze"},
		{"bad se", with("--moderators", "a,b", "--se", "hc9"), "classical, hc0, hc1, hc2, hc3 or cluster"},
		{"unknown flag", with("--moderators", "a,b", "--colour", "red"), "flag provided but not defined: -colour"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, errs := runCLI(t, c.args...)
			if code != exitUsage {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, exitUsage, errs)
			}
			if !strings.Contains(errs, c.words) || !strings.Contains(errs, `"slopewise help screen"`) {
				t.Errorf("stderr does not say %q and point at the help:\n%s", c.words, errs)
			}
		})
	}
}

// TestScreenDataErrors checks that a moderator the data cannot support
// exits with 1 and a message naming it.
func TestScreenDataErrors(t *testing.T) {
	path := writeDemo(t)
	base := []string{"screen", path, "--dry-run", "--outcome", demodata.ColEarnings, "--treatment", demodata.ColCoached}
	for _, c := range []struct {
		name  string
		extra []string
		words []string
	}{
		{"no such column", []string{"--moderators", demodata.ColRegion + ",regoin"}, []string{`no column "regoin"`}},
		{"moderator is a control", []string{"--moderators", demodata.ColRegion + "," + demodata.ColAge, "--controls", demodata.ColAge},
			[]string{`Moderator "` + demodata.ColAge + `"`, "both moderator and a control"}},
	} {
		code, _, errs := runCLI(t, append(append([]string{}, base...), c.extra...)...)
		if code != exitData {
			t.Errorf("%s: exit %d, want %d; stderr:\n%s", c.name, code, exitData, errs)
		}
		for _, w := range c.words {
			if !strings.Contains(errs, w) {
				t.Errorf("%s: stderr does not say %q:\n%s", c.name, w, errs)
			}
		}
	}
}

// TestScreenEndToEnd screens the demo's three moderators: the JSON
// contract (README, "JSON output of screen"), the adjustment over all of
// them (Holm 1979 and Benjamini–Hochberg 1995, as in estimate.AdjustHolm
// and AdjustBH, themselves checked against R's p.adjust), and the sheet
// written into a copy with the summary at the top and each moderator below.
func TestScreenEndToEnd(t *testing.T) {
	path := writeDemo(t)
	copyPath := filepath.Join(t.TempDir(), "screened.xlsx")
	mods := []string{demodata.ColRegion, demodata.ColFirstTime, demodata.ColBaselineScore}
	code, out, errs := runCLI(t, "screen", path, "--out", copyPath, "--json", "--outcome", demodata.ColEarnings, "--treatment", demodata.ColCoached,
		"--moderators", strings.Join(mods, ","), "--planned", demodata.ColRegion, "--controls", demodata.ColAge,
		"--cluster", demodata.ColSite, "--randomized", "--draws", "999")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var o report.ScreenOutput
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatalf("stdout is not the screen JSON: %v\n%s", err, out)
	}
	var raw map[string]any
	if err := json.Unmarshal([]byte(out), &raw); err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{"moderator", "planned", "heterogeneity", "p_holm", "q_bh", "mdd", "largest_difference", "largest_between", "detail"} {
		if _, ok := raw["moderators"].([]any)[0].(map[string]any)[key]; !ok {
			t.Errorf("a moderator lacks %q", key)
		}
	}
	if o.Tried != 3 || len(o.Moderators) != 3 || o.Bootstrap == nil || o.Bootstrap.Draws != 999 {
		t.Fatalf("tried %d, %d moderators, bootstrap %+v", o.Tried, len(o.Moderators), o.Bootstrap)
	}
	var p []float64
	for i, m := range o.Moderators {
		if m.Moderator != mods[i] || m.Planned != (i == 0) || m.Heterogeneity == nil || m.Heterogeneity.PBoot == nil {
			t.Fatalf("moderator %d: %+v", i, m)
		}
		p = append(p, *m.Heterogeneity.PBoot)
		if m.Detail.NUsed == 0 || len(m.Detail.Groups) == 0 || m.MDD <= 0 || m.LargestDifference <= 0 {
			t.Errorf("%s: detail %d rows, %d groups, mdd %g, largest %g", m.Moderator, m.Detail.NUsed, len(m.Detail.Groups), m.MDD, m.LargestDifference)
		}
	}
	holm, bh := estimate.AdjustHolm(p), estimate.AdjustBH(p)
	for i, m := range o.Moderators {
		if m.PHolm != holm[i] || m.QBH != bh[i] {
			t.Errorf("%s: p_holm %g q_bh %g, want %g and %g", m.Moderator, m.PHolm, m.QBH, holm[i], bh[i])
		}
	}
	if !strings.Contains(o.Note, "3 tried") || !strings.Contains(o.Moderators[1].Detail.Note, "adjusted p") {
		t.Errorf("notes:\n%s\n%s", o.Note, o.Moderators[1].Detail.Note)
	}

	f, err := excelize.OpenFile(copyPath)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := f.GetRows("Moderators")
	if err != nil {
		t.Fatal(err)
	}
	var titles []string
	for _, r := range rows {
		if len(r) > 0 && (r[0] == "Moderators compared" || strings.HasPrefix(r[0], "Moderator ") || r[0] == "What was asked") {
			titles = append(titles, r[0])
		}
	}
	want := []string{"Moderators compared", "What was asked", "Moderator 1 of 3: region", "Moderator 2 of 3: first_time", "Moderator 3 of 3: baseline_score"}
	if strings.Join(titles, "|") != strings.Join(want, "|") {
		t.Errorf("sheet titles %q, want %q", titles, want)
	}
}

// TestLinearityJSON checks the linearity check in analyze's JSON: present
// for a number moderator, with three thirds and the test, and absent for
// groups.
func TestLinearityJSON(t *testing.T) {
	path := writeDemo(t)
	base := []string{"analyze", path, "--dry-run", "--json", "--outcome", demodata.ColEarnings, "--treatment", demodata.ColCoached, "--randomized"}
	code, out, errs := runCLI(t, append(append([]string{}, base...), "--moderator", demodata.ColBaselineScore)...)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var o report.Output
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatal(err)
	}
	l := o.Linearity
	if l == nil || len(l.Thirds) != 3 || l.Wald == nil || l.Wald.DF1 != 8 {
		t.Fatalf("linearity %+v", l)
	}
	n := 0
	for i, th := range l.Thirds {
		n += th.N
		if !(th.From <= th.Median && th.Median <= th.To) || !(th.CILow < th.Estimate && th.Estimate < th.CIHigh) ||
			!(th.LineCILow < th.LineEstimate && th.LineEstimate < th.LineCIHigh) || (i > 0 && th.From <= l.Thirds[i-1].To) {
			t.Errorf("third %d: %+v", i, th)
		}
	}
	if n != o.NUsed || l.Contradicts != (l.Wald.P < 0.05) {
		t.Errorf("thirds hold %d rows of %d; contradicts %v with p %g", n, o.NUsed, l.Contradicts, l.Wald.P)
	}
	code, out, errs = runCLI(t, append(append([]string{}, base...), "--moderator", demodata.ColRegion)...)
	if code != exitOK || strings.Contains(out, `"linearity"`) {
		t.Errorf("region: exit %d, linearity in the JSON: %v; %s", code, strings.Contains(out, `"linearity"`), errs)
	}
}

// TestEquivalenceMargin runs analyze and screen with a smallest difference
// that matters: every difference between groups carries the two one-sided
// tests (Schuirmann 1987) in the JSON, with the 90% interval whose place
// inside (−D, D) decides, and the note says the verdict.
func TestEquivalenceMargin(t *testing.T) {
	path := writeDemo(t)
	base := []string{"--dry-run", "--json", "--outcome", demodata.ColEarnings, "--treatment", demodata.ColCoached, "--randomized", "--equivalence-margin", "150"}
	code, out, errs := runCLI(t, append([]string{"analyze", path, "--moderator", demodata.ColFirstTime}, base...)...)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var o report.Output
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatal(err)
	}
	e := o.Differences[0].Equivalence
	if o.EquivalenceMargin != 150 || e == nil || e.Margin != 150 || e.CILow == nil || e.Bootstrap {
		t.Fatalf("margin %g, equivalence %+v", o.EquivalenceMargin, e)
	}
	d := o.Differences[0]
	if !(*e.CILow > d.CILow && *e.CIHigh < d.CIHigh) || e.Equivalent != (*e.CILow > -150 && *e.CIHigh < 150) {
		t.Errorf("90%% interval %g to %g inside the 95%% %g to %g? equivalent %v", *e.CILow, *e.CIHigh, d.CILow, d.CIHigh, e.Equivalent)
	}
	if !strings.Contains(o.Note, "Schuirmann 1987") || !strings.Contains(o.Note, "150 as the smallest difference that matters") {
		t.Errorf("the note does not give the verdict:\n%s", o.Note)
	}

	code, out, errs = runCLI(t, append([]string{"screen", path, "--moderators", demodata.ColFirstTime + "," + demodata.ColBaselineScore}, base...)...)
	if code != exitOK {
		t.Fatalf("screen: exit %d: %s", code, errs)
	}
	var so report.ScreenOutput
	if err := json.Unmarshal([]byte(out), &so); err != nil {
		t.Fatal(err)
	}
	for _, m := range so.Moderators {
		for _, d := range m.Detail.Differences {
			if (d.Equivalence == nil) != strings.HasPrefix(d.Label, "per 1 unit") {
				t.Errorf("screen %s, %s: equivalence %+v", m.Moderator, d.Label, d.Equivalence)
			}
		}
	}
}

// TestReplaceEarlierResults: a second run on a text file finds the
// results workbook of the first; it is refused with the way out named,
// and --replace replaces it, keeping a backup.
func TestReplaceEarlierResults(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "warp_cat.csv"))
	args := []string{"analyze", csv, "--outcome", "breaks", "--treatment", "wool", "--treated", "B", "--moderator", "tension"}
	if code, out, errs := runCLI(t, args...); code != exitOK {
		t.Fatalf("first run: exit %d\n%s%s", code, out, errs)
	}
	code, _, errs := runCLI(t, args...)
	if code != exitData || !strings.Contains(errs, "--replace") {
		t.Fatalf("second run: exit %d, want %d and the way out:\n%s", code, exitData, errs)
	}
	code, out, errs := runCLI(t, append(args, "--replace")...)
	if code != exitOK || !strings.Contains(out+errs, "is kept as") {
		t.Errorf("with --replace: exit %d\n%s%s", code, out, errs)
	}
}

// TestGroupingWarning: on the demo without --cluster, analyze warns that
// every row of a site has the same region, says so in the JSON cautions
// and in the sheet's "Keep in mind", and with --grouping refuse stops
// before fitting, writing nothing; with --cluster site it runs quietly
// and the note says the comparison rests on the 24 sites. The same on a
// streamed text file of the same structure.
func TestGroupingWarning(t *testing.T) {
	path := writeDemo(t)
	before := hashFile(t, path)
	args := []string{"analyze", path, "--outcome", "earnings_6m", "--treatment", "coached", "--moderator", "region"}
	with := func(extra ...string) []string { return append(append([]string{}, args...), extra...) }
	finding := "Every row of a site has the same region: the comparison across region rests on 24 clusters of site, not on 1193 independent rows."

	code, out, errs := runCLI(t, with("--dry-run")...)
	if code != exitOK || !strings.Contains(out, "Warning: "+finding) || !strings.Contains(out, "Give --cluster site to allow for it.") {
		t.Errorf("no warning: exit %d\n%s\n%s", code, out, errs)
	}

	code, out, errs = runCLI(t, with("--dry-run", "--json")...)
	var o report.Output
	if err := json.Unmarshal([]byte(out), &o); err != nil || code != exitOK {
		t.Fatalf("--json: exit %d, %v\n%s", code, err, errs)
	}
	if len(o.Cautions) == 0 || !strings.HasPrefix(o.Cautions[0], finding) || !strings.Contains(errs, "Warning: "+finding) {
		t.Errorf("JSON cautions %q; stderr:\n%s", o.Cautions, errs)
	}

	code, out, errs = runCLI(t, with("--grouping", "refuse")...)
	if code != exitData || out != "" || !strings.Contains(errs, "--grouping refuse stops here. "+finding) || !strings.Contains(errs, "Give --cluster site, or --grouping warn") {
		t.Errorf("--grouping refuse: exit %d\n%s\n%s", code, out, errs)
	}
	if hashFile(t, path) != before {
		t.Error("a refused run changed the workbook")
	}

	// Without a cluster, into a copy: the sheet's "What to keep in mind"
	// has it.
	copyPath := filepath.Join(t.TempDir(), "copy.xlsx")
	if code, _, errs := runCLI(t, with("--out", copyPath)...); code != exitOK {
		t.Fatalf("--out: exit %d\n%s", code, errs)
	}
	g, err := excelize.OpenFile(copyPath)
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	rows, _ := g.GetRows("Results")
	found := false
	for i, r := range rows {
		if len(r) > 0 && r[0] == "What to keep in mind" {
			for _, next := range rows[i+1:] {
				found = found || len(next) > 0 && strings.HasPrefix(next[0], finding)
			}
		}
	}
	if !found {
		t.Error(`the sheet's "What to keep in mind" does not hold the finding`)
	}

	code, out, errs = runCLI(t, with("--cluster", "site", "--grouping", "refuse", "--draws", "999")...)
	if code != exitOK || strings.Contains(out, "Warning: ") || !strings.Contains(out, "Since every site has a single region, the comparison across region rests on the 24 clusters, not on the 1193 rows.") {
		t.Errorf("--cluster site: exit %d\n%s\n%s", code, out, errs)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, _ = f.GetRows("Results")
	var sheet strings.Builder
	for _, r := range rows {
		sheet.WriteString(strings.Join(r, " ") + "\n")
	}
	if !strings.Contains(sheet.String(), "Since every site has a single region") {
		t.Errorf("the sheet's note does not say the comparison rests on the sites:\n%s", sheet.String())
	}

	// A text file of pupils in 40 schools, the tutoring given by school,
	// is streamed: the check makes a pass of its own over it.
	var b strings.Builder
	b.WriteString("score,tutored,girl,school\n")
	for i := range 4000 {
		school := i / 100
		fmt.Fprintf(&b, "%d,%d,%d,sch%d\n", 40+(i*37)%21+school%3, school%2, i%2, school)
	}
	csv := filepath.Join(t.TempDir(), "pupils.csv")
	if err := os.WriteFile(csv, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, errs = runCLI(t, "analyze", csv, "--outcome", "score", "--treatment", "tutored", "--moderator", "girl", "--dry-run")
	want := "Warning: Every row of a school has the same tutored: the treatment was given by school, so its effect rests on 40 clusters of school, not on 4000 independent rows."
	if code != exitOK || !strings.Contains(out, want) {
		t.Errorf("streamed text file: exit %d\n%s\n%s", code, out, errs)
	}
	code, _, errs = runCLI(t, "analyze", csv, "--outcome", "score", "--treatment", "tutored", "--moderator", "girl", "--grouping", "refuse")
	if code != exitData || !strings.Contains(errs, "Give --cluster school") {
		t.Errorf("streamed text file, --grouping refuse: exit %d\n%s", code, errs)
	}
}

// TestScreenGroupingWarning: screen makes the grouping check for each
// moderator: region, a property of the sites, is warned about and
// refused with --grouping refuse; first_time, which varies within every
// site, is not; the moderator's own cautions in the JSON carry it.
func TestScreenGroupingWarning(t *testing.T) {
	path := writeDemo(t)
	args := []string{"screen", path, "--outcome", "earnings_6m", "--treatment", "coached", "--moderators", "first_time,region", "--dry-run"}
	code, out, errs := runCLI(t, append(args, "--json")...)
	if code != exitOK || !strings.Contains(errs, "Warning: (moderator region) Every row of a site has the same region") || strings.Contains(errs, "(moderator first_time)") {
		t.Fatalf("screen: exit %d\n%s", code, errs)
	}
	var o report.ScreenOutput
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatal(err)
	}
	for _, m := range o.Moderators {
		has := len(m.Detail.Cautions) > 0 && strings.HasPrefix(m.Detail.Cautions[0], "Every row of a site has the same region")
		if has != (m.Moderator == "region") {
			t.Errorf("moderator %s: cautions %q", m.Moderator, m.Detail.Cautions)
		}
	}
	code, _, errs = runCLI(t, append(args, "--grouping", "refuse")...)
	if code != exitData || !strings.Contains(errs, "For the moderator region: Every row of a site has the same region") {
		t.Errorf("screen --grouping refuse: exit %d\n%s", code, errs)
	}
}

// TestTrialJSONUnchanged: a two-arm trial without a period column gives,
// byte for byte, the JSON the command gave before before-and-after designs
// existed: testdata/trial-json/ was written by the command built at commit
// 58f1ce8 with the same arguments (dry runs on testdata/r's files).
func TestTrialJSONUnchanged(t *testing.T) {
	cases := map[string][]string{
		"warp_cat":        {"warp_cat.csv", "--outcome", "breaks", "--treatment", "wool", "--treated", "B", "--moderator", "tension"},
		"co2_cluster":     {"co2_cluster.csv", "--outcome", "uptake", "--treatment", "Treatment", "--treated", "chilled", "--moderator", "Type", "--controls", "conc", "--cluster", "Plant", "--draws", "999"},
		"mtcars_cont":     {"mtcars_cont.csv", "--outcome", "mpg", "--treatment", "am", "--moderator", "wt", "--moderator-type", "number", "--center", "3", "--controls", "hp", "--se", "hc2"},
		"airq_weighted78": {"airq_weighted78.csv", "--outcome", "Ozone", "--treatment", "hot", "--moderator", "Month", "--moderator-type", "category", "--controls", "Wind,Solar.R", "--weights", "w", "--randomized", "--planned"},
	}
	for name, args := range cases {
		t.Run(name, func(t *testing.T) {
			csv := copyFile(t, filepath.Join(rDir, args[0]))
			code, out, errs := runCLI(t, append([]string{"analyze", csv, "--json", "--dry-run"}, args[1:]...)...)
			if code != exitOK {
				t.Fatalf("exit %d: %s", code, errs)
			}
			want, err := os.ReadFile(filepath.Join("testdata", "trial-json", name+".json"))
			if err != nil {
				t.Fatal(err)
			}
			if out != string(want) {
				t.Errorf("the JSON changed:\n%s\nwas:\n%s", out, want)
			}
		})
	}
}

// TestBeforeAfterCommand: the options of a before-and-after comparison,
// their refusals, the JSON's design and the note's words for it.
func TestBeforeAfterCommand(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "did_panel.csv"))
	base := []string{"analyze", csv, "--outcome", "earnings", "--treatment", "coached", "--moderator", "region", "--dry-run"}
	with := func(extra ...string) []string { return append(append([]string{}, base...), extra...) }
	for _, c := range []struct {
		args  []string
		code  int
		words string
	}{
		{with("--after", "1"), exitUsage, "--after names the value of the period column after the start, so it needs --period COL"},
		{with("--unit-effects"), exitUsage, "--unit-effects needs --unit COL"},
		{with("--control-arm", "0", "--treated", "1"), exitUsage, "give one of them"},
		{with("--period", "when"), exitData, `has no column "when"`},
		{with("--period", "year"), exitData, `the period column "year" holds "2023", "2024"; say which one means after the programme started with --after VALUE`},
		{with("--period", "year", "--after", "2025"), exitData, `The value "2025", chosen as after, does not appear in the period column "year"`},
		{with("--period", "post", "--unit", "weight", "--unit-effects", "--se", "hc3"), exitData, "and 20 more have leverage 1 (with unit effects, the only row of a unit"},
		{[]string{"screen", csv, "--outcome", "earnings", "--treatment", "coached", "--moderators", "region,high", "--period", "post"}, exitUsage, "--period is an option of analyze"},
		{[]string{"screen", csv, "--outcome", "earnings", "--treatment", "coached", "--moderators", "region,high", "--control-arm", "0"}, exitUsage, "--control-arm is an option of analyze"},
	} {
		code, _, errs := runCLI(t, c.args...)
		if code != c.code || !strings.Contains(errs, c.words) {
			t.Errorf("%v: exit %d, stderr %q; want %d and %q", c.args[len(base)-1:], code, errs, c.code, c.words)
		}
	}
	code, out, errs := runCLI(t, with("--period", "post", "--unit", "person", "--unit-effects", "--controls", "age", "--randomized", "--json")...)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var o report.Output
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatal(err)
	}
	d := o.Design
	if d == nil || d.Kind != "before_after" || d.Unit != "person" || d.Units != 78 || !d.UnitEffects || d.Cells == nil || d.Cells.ProgrammeAfter != 40 ||
		strings.Join(d.Absorbed, "|") != "coached|region = East|region = South|coached × region = East|coached × region = South" {
		t.Errorf("design %+v", d)
	}
	if o.SEType != "cluster" || !strings.Contains(errs, "rows of the same person to be alike (cluster-robust, CR1, 78 clusters)") {
		t.Errorf("not clustered by person: %s", o.SEType)
	}
	for _, words := range []string{"a difference in differences", "would have moved in parallel (common trends)",
		`Each of the 78 units of "person" was compared with itself (unit effects)`} {
		if !strings.Contains(o.Note, words) {
			t.Errorf("the note does not say %q:\n%s", words, o.Note)
		}
	}
	if !strings.Contains(errs, "(difference in differences: after = post = 1, against before)") || !strings.Contains(errs, "Unit effects: 78 units of person; not estimated separately: coached, region = East") {
		t.Errorf("the summary does not name the design:\n%s", errs)
	}
}

// TestSeveralArmsCommand: a treatment of three arms needs its comparison
// arm named; with it, every effect and difference names its arm, in the
// summary, the JSON and the note.
func TestSeveralArmsCommand(t *testing.T) {
	csv := copyFile(t, filepath.Join(rDir, "arms.csv"))
	base := []string{"analyze", csv, "--outcome", "earnings", "--treatment", "arm", "--moderator", "region", "--dry-run"}
	code, _, errs := runCLI(t, base...)
	if code != exitData || !strings.Contains(errs, `the treatment "arm" holds 3 arms ("coaching", "stipend", "waitlist"); name the comparison arm with --control-arm LABEL`) {
		t.Errorf("exit %d: %s", code, errs)
	}
	code, out, errs := runCLI(t, append(base, "--control-arm", "waitlist", "--json", "--randomized")...)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var o report.Output
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatal(err)
	}
	if len(o.Groups) != 6 || o.Groups[0].Arm != "coaching" || o.Groups[5].Arm != "stipend" || o.Differences[0].Arm != "coaching" || len(o.Arms) != 2 {
		t.Errorf("groups %+v, arms %+v", o.Groups, o.Arms)
	}
	for _, words := range []string{`The treatment "arm" has 2 arms besides the comparison arm "waitlist"`, `The estimated effect of "stipend" against "waitlist" on earnings was`,
		"after Holm's adjustment over the 2 arms", "Testing whether any arm's effect differs between groups at all"} {
		if !strings.Contains(o.Note, words) {
			t.Errorf("the note does not say %q:\n%s", words, o.Note)
		}
	}
	if !strings.Contains(errs, "stipend: South vs North") || !strings.Contains(errs, "Same effect of coaching in every group?") {
		t.Errorf("the summary does not name the arms:\n%s", errs)
	}
}

// TestSummaryLinesUp: in the terminal summary of the roll-out demo, whose
// labels the arms lengthen ("coaching + stipend: North vs Harbour"), the
// numbers of every effect and difference start at the same column.
func TestSummaryLinesUp(t *testing.T) {
	dir := t.TempDir()
	if code, _, errs := runCLI(t, "demo", dir); code != exitOK {
		t.Fatalf("demo: exit %d: %s", code, errs)
	}
	code, out, errs := runCLI(t, "analyze", filepath.Join(dir, "slopewise-demo-rollout.xlsx"), "--outcome", "earnings", "--treatment", "programme",
		"--control-arm", "none", "--period", "year", "--after", "2024", "--unit", "person_id", "--moderator", "region", "--dry-run")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	at, lines := -1, 0
	for _, line := range strings.Split(out, "\n") {
		i := strings.Index(line, "   CI ")
		if !strings.HasPrefix(line, "  ") || i < 0 {
			continue
		}
		lines++
		if col := utf8.RuneCountInString(line[:i]); at < 0 {
			at = col
		} else if col != at {
			t.Errorf("CI at column %d, not %d: %q", col, at, line)
		}
	}
	if lines < 20 {
		t.Errorf("%d effect and difference lines in the summary:\n%s", lines, out)
	}
}

// TestLeadsCommand: a period column of five years, the start in 2023: the
// leads of 2020 and 2021 against 2022 are in the summary, the JSON (equal
// to R's, testdata/r/make_did.R, did_leads) and the note.
func TestLeadsCommand(t *testing.T) {
	ref := readReference(t, "did.txt")["did_leads"]
	csv := copyFile(t, filepath.Join(rDir, "did_leads.csv"))
	code, out, errs := runCLI(t, "analyze", csv, "--outcome", "earnings", "--treatment", "coached", "--period", "year", "--after", "2023",
		"--unit", "person", "--moderator", "region", "--controls", "hours", "--dry-run", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var o report.Output
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatal(err)
	}
	l := o.Design.Leads
	if l == nil || l.Reference != "2022" || len(l.Leads) != 2 || l.Test == nil || l.Contradicts {
		t.Fatalf("leads %+v", l)
	}
	for _, g := range l.Leads {
		for key, got := range map[string]float64{".est": g.Estimate, ".se": g.SE, ".p": g.P} {
			// R 4.2.2 lm + sandwich 3.0.2 (make_did.R)
			if want := ref["CR1 lead["+g.Label+"]"+key]; math.Abs(got-want) > 1e-8*math.Abs(want) {
				t.Errorf("lead %s%s = %.17g, R gives %.17g", g.Label, key, got, want)
			}
		}
	}
	if want := ref["CR1 leads.F"]; math.Abs(l.Test.F-want) > 1e-8*want {
		t.Errorf("leads F = %.17g, R gives %.17g", l.Test.F, want)
	}
	if !strings.Contains(o.Note, "measured against their gap in year 2022 (the last period before the start)") || !strings.Contains(o.Note, "do not contradict common trends") {
		t.Errorf("the note:\n%s", o.Note)
	}
	if !strings.Contains(errs, "Parallel before the start? F = ") {
		t.Errorf("the summary:\n%s", errs)
	}
}

// TestRolloutDemoEndToEnd: slopewise demo writes the roll-out workbook
// beside the pilot; analysed as its Notes sheet says (before and after,
// two arms, unit effects), every arm's true effect in every region lies
// inside its 95% interval, and the results are written into it.
func TestRolloutDemoEndToEnd(t *testing.T) {
	dir := filepath.Dir(writeDemo(t))
	path := filepath.Join(dir, demodata.RolloutFile)
	args := strings.Fields(demodata.RolloutCommand)[1:]
	args[1] = path
	code, out, errs := runCLI(t, append(args, "--json")...)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var o report.Output
	if err := json.Unmarshal([]byte(out), &o); err != nil {
		t.Fatal(err)
	}
	truth := demodata.RolloutTrueEffects()
	if len(o.Groups) != 8 || o.Design == nil || !o.Design.UnitEffects || len(o.Arms) != 2 {
		t.Fatalf("groups %d, design %+v, arms %+v", len(o.Groups), o.Design, o.Arms)
	}
	for _, g := range o.Groups {
		want := truth[g.Arm][g.Label]
		if !(g.CILow < want && want < g.CIHigh) {
			t.Errorf("%s in %s: %.1f [%.1f, %.1f] misses the truth %g", g.Arm, g.Label, g.Estimate, g.CILow, g.CIHigh, want)
		}
	}
	if !strings.Contains(errs, "Results written to") {
		t.Errorf("no results written:\n%s", errs)
	}
	// Clustered by site, in which the people (the unit) lie: the grouping
	// check does not warn about the unit column it was told of.
	code, _, errs = runCLI(t, append(args, "--cluster", "site", "--dry-run")...)
	if code != exitOK || strings.Contains(errs, "Warning:") {
		t.Errorf("exit %d, a warning about the unit:\n%s", code, errs)
	}
}
