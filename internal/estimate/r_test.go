package estimate

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
)

// The reference values in testdata/r/ come from R 4.2.2 lm with sandwich
// 3.0.2 (vcovHC, vcovCL), computed by testdata/r/make_reference.R from the
// CSV files beside it; see testdata/r/README.md for every key.

const rDir = "../../testdata/r"

// loadCSV reads a test CSV into Data: a column is numeric when every
// non-empty cell parses as a number; empty cells are missing.
func loadCSV(t *testing.T, path string) *Data {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	recs, err := csv.NewReader(fh).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	d := &Data{}
	for j, name := range recs[0] {
		col := Column{Name: name}
		numeric := true
		for _, r := range recs[1:] {
			if _, err := strconv.ParseFloat(r[j], 64); r[j] != "" && err != nil {
				numeric = false
			}
		}
		for _, r := range recs[1:] {
			if numeric {
				v := math.NaN()
				if r[j] != "" {
					v, _ = strconv.ParseFloat(r[j], 64)
				}
				col.Num = append(col.Num, v)
			} else {
				col.Text = append(col.Text, r[j])
			}
		}
		d.Columns = append(d.Columns, col)
	}
	return d
}

// refValues is reference.txt: case → vtype → key → value (as text).
type refValues map[string]map[string]map[string]string

func readReference(t *testing.T, path string) refValues {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	ref := refValues{}
	sc := bufio.NewScanner(fh)
	for sc.Scan() {
		line := sc.Text()
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		f := strings.Fields(line)
		if len(f) != 4 {
			t.Fatalf("%s: bad line %q", path, line)
		}
		if ref[f[0]] == nil {
			ref[f[0]] = map[string]map[string]string{}
		}
		if ref[f[0]][f[1]] == nil {
			ref[f[0]][f[1]] = map[string]string{}
		}
		ref[f[0]][f[1]][f[2]] = f[3]
	}
	return ref
}

// rCase is one reference case: its data file and the spec that states the
// same model as the R script.
type rCase struct {
	name, file string
	spec       Spec
}

func rCases() []rCase {
	centre := 3.0
	return []rCase{
		{"mtcars_bin", "mtcars_bin.csv", Spec{Outcome: "mpg",
			Treatment: Treatment{Column: "am", Kind: TreatmentBinary},
			Moderator: Moderator{Column: "vs", Kind: ModeratorBinary},
			Controls:  []string{"wt", "hp"}}},
		{"warp_cat", "warp_cat.csv", Spec{Outcome: "breaks",
			Treatment: Treatment{Column: "wool", Kind: TreatmentLabels, Treated: "B"},
			Moderator: Moderator{Column: "tension", Kind: ModeratorCategorical}}},
		{"mtcars_cont", "mtcars_cont.csv", Spec{Outcome: "mpg",
			Treatment: Treatment{Column: "am", Kind: TreatmentBinary},
			Moderator: Moderator{Column: "wt", Kind: ModeratorContinuous, Centre: &centre},
			Controls:  []string{"hp"}}},
		{"co2_cluster", "co2_cluster.csv", Spec{Outcome: "uptake",
			Treatment: Treatment{Column: "Treatment", Kind: TreatmentLabels, Treated: "chilled"},
			Moderator: Moderator{Column: "Type", Kind: ModeratorBinary},
			Controls:  []string{"conc"}}},
		{"airq_weighted", "airq_weighted.csv", Spec{Outcome: "Ozone",
			Treatment: Treatment{Column: "hot", Kind: TreatmentBinary},
			Moderator: Moderator{Column: "Month", Kind: ModeratorCategorical},
			Controls:  []string{"Wind", "Solar.R"}, Weights: "w"}},
		{"airq_weighted78", "airq_weighted78.csv", Spec{Outcome: "Ozone",
			Treatment: Treatment{Column: "hot", Kind: TreatmentBinary},
			Moderator: Moderator{Column: "Month", Kind: ModeratorCategorical},
			Controls:  []string{"Wind", "Solar.R"}, Weights: "w"}},
	}
}

// closeRel reports |got − want| ≤ tol·|want| (tol·floor when want is 0).
func closeRel(got, want, tol, floor float64) bool {
	return math.Abs(got-want) <= tol*math.Max(math.Abs(want), floor)
}

// TestAgainstR compares the engine with the committed R reference values
// (R 4.2.2 lm + sandwich 3.0.2) at relative tolerance 1e-8.
func TestAgainstR(t *testing.T) {
	compareWithR(t, rDir)
}

// TestAgainstRLive reruns the R script into a temporary folder and compares
// the engine with what R computes now. In CI (CI=true) a missing R is a
// failure, not a skip.
func TestAgainstRLive(t *testing.T) {
	compareWithR(t, runRScript(t, "make_reference.R"))
}

// runRScript runs an R script of testdata/r into a temporary folder and
// returns the folder. In CI (CI=true) a missing R is a failure, not a skip.
func runRScript(t *testing.T, script string) string {
	t.Helper()
	rscript, err := exec.LookPath("Rscript")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("Rscript not found; CI must install r-base-core and r-cran-sandwich (make deps)")
		}
		t.Skip("Rscript not found; install r-base-core and r-cran-sandwich to run the live cross-check")
	}
	out := t.TempDir()
	if msg, err := exec.Command(rscript, filepath.Join(rDir, script), out).CombinedOutput(); err != nil {
		t.Fatalf("R script %s failed: %v\n%s", script, err, msg)
	}
	return out
}

func compareWithR(t *testing.T, dir string) {
	ref := readReference(t, filepath.Join(dir, "reference.txt"))
	checked := compareCases(t, ref, dir, rCases(), func(s *Spec, vt string) {
		if vt == "CR1" {
			s.Cluster = "Plant"
		}
	})
	if checked < 1000 {
		t.Errorf("only %d reference values compared", checked)
	}
	t.Logf("%d reference values compared with R", checked)
}

// compareCases fits every case for each variance type the reference
// values hold, the spec's variance set and then adjusted for the type,
// and compares; it returns how many values were compared.
func compareCases(t *testing.T, ref refValues, dir string, cases []rCase, adjust func(s *Spec, vt string)) int {
	checked := 0
	for _, c := range cases {
		cr := ref[c.name]
		if cr == nil {
			t.Fatalf("no reference values for case %s", c.name)
		}
		data := loadCSV(t, filepath.Join(dir, c.file))
		vtypes := make([]string, 0, len(cr))
		for vt := range cr {
			if vt != "-" {
				vtypes = append(vtypes, vt)
			}
		}
		sort.Strings(vtypes)
		for _, vt := range vtypes {
			spec := c.spec
			spec.Variance = VarianceType(vt)
			adjust(&spec, vt)
			res, err := Fit(data, spec)
			if rows, ok := cr[vt]["leverage1_rows"]; ok {
				// R's sandwich only warns here; the engine must refuse and name the row.
				var e *Error
				if !errors.As(err, &e) || !errors.Is(err, ErrLeverage) || joinInts(e.Rows) != strings.ReplaceAll(rows, ",", ", ") {
					t.Errorf("%s %s: want a leverage error naming row(s) %s, got %v", c.name, vt, rows, err)
				}
				checked++
				continue
			}
			if err != nil {
				t.Errorf("%s %s: %v", c.name, vt, err)
				continue
			}
			checked += compareCase(t, c.name+" "+vt, res, cr["-"], cr[vt])
		}
	}
	return checked
}

// compareCase checks one fit against the values of one case and variance
// type, and returns how many were compared.
func compareCase(t *testing.T, label string, res *Result, common, own map[string]string) int {
	t.Helper()
	const tol = 1e-8
	n := 0
	num := func(key string, m map[string]string) (float64, bool) {
		s, ok := m[key]
		if !ok {
			return 0, false
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("%s: %s = %q", label, key, s)
		}
		return v, true
	}
	check := func(key string, got float64, m map[string]string) {
		want, ok := num(key, m)
		if !ok {
			t.Errorf("%s: reference has no %s", label, key)
			return
		}
		n++
		if !closeRel(got, want, tol, 0) {
			t.Errorf("%s: %s = %.17g, R gives %.17g (rel. diff %.2g)", label, key, got, want, math.Abs(got-want)/math.Abs(want))
		}
	}
	k := len(res.Coefficients)
	check("n", float64(res.Rows.Used), common)
	check("k", float64(k), common)
	check("dropped", float64(res.Rows.Dropped), common)
	if want, ok := common["dropped_rows"]; ok {
		var got []string
		for _, d := range res.Rows.List {
			got = append(got, strconv.Itoa(d.Row))
		}
		n++
		if strings.Join(got, ",") != want {
			t.Errorf("%s: dropped rows %v, R drops %s", label, got, want)
		}
	}
	check("sigma", res.Model.Sigma, common)
	check("r2", res.Model.R2, common)
	check("df", float64(res.Model.DF), own)
	for i := 0; i < k; i++ {
		check(fmt.Sprintf("coef[%d]", i+1), res.Coefficients[i].Estimate, common)
		check(fmt.Sprintf("se[%d]", i+1), res.Coefficients[i].SE, own)
		for j := 0; j < k; j++ {
			key := fmt.Sprintf("vcov[%d,%d]", i+1, j+1)
			want, ok := num(key, own)
			if !ok {
				t.Errorf("%s: reference has no %s", label, key)
				continue
			}
			n++
			// Entries that are zero in exact arithmetic: compare against the
			// scale √(Vii·Vjj) (testdata/r/README.md, comparison note).
			floor := math.Sqrt(res.Covariance[i][i] * res.Covariance[j][j])
			if !closeRel(res.Covariance[i][j], want, tol, floor) {
				t.Errorf("%s: %s = %.17g, R gives %.17g", label, key, res.Covariance[i][j], want)
			}
		}
	}
	inference := func(prefix string, inf Inference) {
		check(prefix+".est", inf.Estimate, own)
		check(prefix+".se", inf.SE, own)
		check(prefix+".t", inf.T, own)
		check(prefix+".p", inf.P, own)
		check(prefix+".lo", inf.CILow, own)
		check(prefix+".hi", inf.CIHigh, own)
	}
	// With several arms a key names the arm first: effect[arm|group].
	armed := func(arm string) string {
		if arm == "" {
			return ""
		}
		return arm + "|"
	}
	for _, e := range res.Effects {
		inference("effect["+armed(e.Arm)+e.Group+"]", e.Inference)
		if res.Moderator.Kind == ModeratorContinuous {
			check("probe["+e.Group+"].value", e.Value, common)
		}
	}
	wantEffects := 0
	for key := range own {
		if strings.HasPrefix(key, "effect[") && strings.HasSuffix(key, ".est") {
			wantEffects++
		}
	}
	if wantEffects != len(res.Effects) {
		t.Errorf("%s: %d effects, R has %d", label, len(res.Effects), wantEffects)
	}
	for _, d := range res.Differences {
		key := "diff[" + armed(d.Arm) + d.From + "|" + d.To + "]"
		if d.PerUnit {
			key = "diff[unit]"
		}
		inference(key, d.Inference)
		check(key+".mdd", d.MDD, own)
	}
	if res.Heterogeneity == nil {
		t.Errorf("%s: no heterogeneity test", label)
	} else {
		check("het.F", res.Heterogeneity.F, own)
		check("het.df1", float64(res.Heterogeneity.DF1), own)
		check("het.df2", float64(res.Heterogeneity.DF2), own)
		check("het.p", res.Heterogeneity.P, own)
	}
	if lc := res.Leads; lc != nil {
		for _, l := range lc.Leads {
			inference("lead["+l.Period+"]", l.Inference)
		}
		if lc.Test == nil {
			t.Errorf("%s: no test of the leads", label)
		} else {
			check("leads.F", lc.Test.F, own)
			check("leads.p", lc.Test.P, own)
		}
	}
	for _, a := range res.Arms {
		if a.Heterogeneity == nil {
			t.Errorf("%s: no heterogeneity test for arm %s", label, a.Arm)
			continue
		}
		check("armhet["+a.Arm+"].F", a.Heterogeneity.F, own)
		check("armhet["+a.Arm+"].p", a.Heterogeneity.P, own)
		check("armhet["+a.Arm+"].holm", a.HolmP, own)
	}
	if jn := res.JohnsonNeyman; jn != nil {
		check("mod.min", jn.Min, common)
		check("mod.max", jn.Max, common)
		if _, ok := own["jn.root1"]; ok {
			if len(jn.Roots) != 2 {
				t.Errorf("%s: JN roots %v, R has two", label, jn.Roots)
			} else {
				check("jn.root1", jn.Roots[0], own)
				check("jn.root2", jn.Roots[1], own)
			}
		}
		a, _ := num("jn.a", own)
		if (a > 0) != (jn.Case == "outside" || jn.Case == "everywhere") {
			t.Errorf("%s: JN case %q but leading coefficient %g", label, jn.Case, a)
		}
		n++
	}
	return n
}
