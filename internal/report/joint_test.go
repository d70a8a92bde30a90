package report

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"slopewise/internal/estimate"
)

// schools10 reads testdata/r/schools10.csv, the invented study of issue
// 19 drawn by schoolsCSV in internal/estimate (300 pupils in 10 schools,
// a tutoring effect that is the straight line 20 − 0.25·prior), and the
// run of its straight-line model clustered by school.
func schools10(t *testing.T) (Run, *estimate.Data) {
	t.Helper()
	fh, err := os.Open(filepath.Join("..", "..", "testdata", "r", "schools10.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	recs, err := csv.NewReader(fh).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	d := &estimate.Data{}
	for j, name := range recs[0] {
		col := estimate.Column{Name: name}
		for _, r := range recs[1:] {
			if name == "school" {
				col.Text = append(col.Text, r[j])
				continue
			}
			v, err := strconv.ParseFloat(r[j], 64)
			if err != nil {
				t.Fatal(err)
			}
			col.Num = append(col.Num, v)
		}
		d.Columns = append(d.Columns, col)
	}
	spec := estimate.Spec{Outcome: "reading", Treatment: estimate.Treatment{Column: "tutored"},
		Moderator: estimate.Moderator{Column: "prior", Kind: estimate.ModeratorContinuous}, Cluster: "school"}
	return Run{File: "schools.xlsx", Sheet: "Pupils", Spec: spec, Randomized: true, Planned: true, Version: "test",
		Time: time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)}, d
}

// outputs is what a run says in the note, the cautions, the sheet and the
// JSON.
func outputs(t *testing.T, run Run, res *estimate.Result) (note, cautions string, sheet []string, out Output) {
	t.Helper()
	s, err := Build(run, res)
	if err != nil {
		t.Fatal(err)
	}
	return Note(run, res), strings.Join(Cautions(run, res), "\n"), cellTexts(s), Summarize(run, res)
}

// TestStraightLineTenSchools is issue 19's case: with 10 schools CR1's
// F(8, 9) rejects the straight line that generated the data, and the note
// must not report a contradiction: note, cautions, sheet and JSON give the
// bootstrap's p-value of the same test.
func TestStraightLineTenSchools(t *testing.T) {
	run, d := schools10(t)
	res, err := estimate.Fit(d, run.Spec)
	if err != nil {
		t.Fatal(err)
	}
	l := res.Linearity
	if l == nil || l.Wald == nil || l.Wald.PBoot == nil || !(l.Wald.P < 0.05) {
		t.Fatalf("linearity %+v: the case should have CR1's F reject and a bootstrap p", l)
	}
	note, cautions, sheet, out := outputs(t, run, res)
	if strings.Contains(note, "straight line") || l.Contradicts {
		t.Errorf("a contradiction of the straight line is reported:\n%s", note)
	}
	if want := "consistent with that line (bootstrap " + pText(*l.Wald.PBoot) + ")"; !strings.Contains(cautions, want) {
		t.Errorf("cautions lack %q:\n%s", want, cautions)
	}
	if !hasText(sheet, "The thirds are consistent with the straight line. With few clusters the verdict rests on the bootstrap p-value") {
		t.Errorf("the sheet's linearity block does not rest on the bootstrap: %q", sheet)
	}
	if o := out.Linearity; o == nil || o.Wald == nil || o.Wald.PBoot == nil || *o.Wald.PBoot != *l.Wald.PBoot || o.Contradicts || o.NotJudged != nil {
		t.Errorf("JSON linearity %+v", out.Linearity)
	}
}

// TestJointNotJudgedWords checks what is said when a joint test has more
// terms than the clusters can judge: with 6 clusters the line's 8 terms,
// with 5 clusters the 5 terms of 6 groups. No F and no p anywhere; the
// reason in words in the note, the cautions (for the line), the sheet and
// the JSON.
func TestJointNotJudgedWords(t *testing.T) {
	run, res := noteScenarios["continuous-six-clusters"].fit(t)
	note, cautions, sheet, out := outputs(t, run, res)
	says := `cannot be judged with only 6 clusters of "site": the test weighs 8 terms at once`
	if !strings.Contains(note, says) || !strings.Contains(cautions, "With 6 clusters that cannot be checked") || !hasText(sheet, says) {
		t.Errorf("the line not judged: note, cautions or sheet silent:\n%s\n%s", note, cautions)
	}
	if hasText(sheet, "Test of the line against the thirds") {
		t.Error("the sheet shows a test that is not judged")
	}
	if o := out.Linearity; o == nil || o.Wald != nil || o.NotJudged == nil || o.NotJudged.Terms != 8 || o.NotJudged.MaxTerms != 5 ||
		!strings.Contains(o.NotJudged.Reason, "cannot be judged") {
		t.Errorf("JSON linearity %+v", out.Linearity)
	}

	run, res = noteScenarios["categorical-five-clusters"].fit(t)
	note, _, sheet, out = outputs(t, run, res)
	says = `cannot be judged with only 5 clusters of "site": the test weighs 5 terms at once`
	if !strings.Contains(note, says) || strings.Contains(note, "F =") || !hasText(sheet, says) {
		t.Errorf("groups not judged: note or sheet silent, or an F shown:\n%s", note)
	}
	if out.Heterogeneity != nil || out.HeterogeneityNotJudged == nil || out.HeterogeneityNotJudged.Clusters != 5 {
		t.Errorf("JSON heterogeneity %+v, not judged %+v", out.Heterogeneity, out.HeterogeneityNotJudged)
	}
}
