package estimate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// linCases are the cases of testdata/r/linearity.txt with the specs that
// state the same models as testdata/r/make_linearity.R.
func linCases() []bootCase {
	return []bootCase{
		{"airq_lin", "airq_weighted78.csv", Spec{Outcome: "Ozone",
			Treatment: Treatment{Column: "hot", Kind: TreatmentBinary},
			Moderator: Moderator{Column: "Wind", Kind: ModeratorContinuous},
			Controls:  []string{"Solar.R"}, Weights: "w"}},
		{"co2_lin", "co2_cluster.csv", Spec{Outcome: "uptake",
			Treatment: Treatment{Column: "Treatment", Kind: TreatmentLabels, Treated: "chilled"},
			Moderator: Moderator{Column: "conc", Kind: ModeratorContinuous},
			Controls:  []string{"Type"}, Cluster: "Plant", Bootstrap: Bootstrap{Off: true}}},
	}
}

// TestLinearityAgainstR compares the check of the straight line with R
// 4.2.2 base R, testdata/r/make_linearity.R, written from the binning
// estimator and Wald test of Hainmueller, Mummolo & Xu (2019), with HC3
// (weighted) and CR1 computed by hand: every third's effect, the line's
// prediction and the Wald test, at relative tolerance 1e-8.
func TestLinearityAgainstR(t *testing.T) {
	compareLinearityWithR(t, filepath.Join(rDir, "linearity.txt"))
}

// TestLinearityAgainstRLive reruns the R script into a temporary folder.
func TestLinearityAgainstRLive(t *testing.T) {
	compareLinearityWithR(t, filepath.Join(runRScript(t, "make_linearity.R"), "linearity.txt"))
}

func compareLinearityWithR(t *testing.T, path string) {
	t.Helper()
	ref := readReference3(t, path)
	checked := 0
	for _, c := range linCases() {
		want := ref[c.name]
		if want == nil {
			t.Fatalf("no reference values for %s", c.name)
		}
		res, err := Fit(loadCSV(t, filepath.Join(rDir, c.file)), c.spec)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		lin := res.Linearity
		if lin == nil || len(lin.Thirds) != 3 || lin.Wald == nil {
			t.Fatalf("%s: linearity %+v, notes %v", c.name, lin, res.Notes)
		}
		check := func(key string, got float64) {
			s, ok := want[key]
			if !ok {
				t.Errorf("%s: R has no %s", c.name, key)
				return
			}
			w, _ := strconv.ParseFloat(s, 64)
			checked++
			tol := 1e-8
			if strings.HasSuffix(key, "p") && w < 1e-6 {
				// Far in the tail a p-value magnifies the last digits of F
				// (co2_lin: p = 4.6e-10, F agreeing to 1e-9).
				tol = 1e-6
			}
			if !closeRel(got, w, tol, 0) {
				t.Errorf("%s %s = %.17g, R gives %.17g", c.name, key, got, w)
			}
		}
		for j, th := range lin.Thirds {
			p := fmt.Sprintf("third[%d].", j+1)
			check(p+"from", th.From)
			check(p+"to", th.To)
			check(p+"median", th.Median)
			check(p+"rows", float64(th.Rows))
			check(p+"est", th.Effect.Estimate)
			check(p+"se", th.Effect.SE)
			check(p+"p", th.Effect.P)
			check(p+"lo", th.Effect.CILow)
			check(p+"hi", th.Effect.CIHigh)
			l := fmt.Sprintf("line[%d].", j+1)
			check(l+"est", th.Line.Estimate)
			check(l+"se", th.Line.SE)
			check(l+"lo", th.Line.CILow)
			check(l+"hi", th.Line.CIHigh)
		}
		check("wald.F", lin.Wald.F)
		check("wald.df1", float64(lin.Wald.DF1))
		check("wald.df2", float64(lin.Wald.DF2))
		check("wald.p", lin.Wald.P)
		if lin.Contradicts != (lin.Wald.P < 0.05) {
			t.Errorf("%s: contradicts %v with p %g", c.name, lin.Contradicts, lin.Wald.P)
		}
	}
	t.Logf("%d linearity values compared with R", checked)
}

// curvedData draws a treatment whose effect is curved in the moderator m
// (a hump: effect = bend·(1 − ((m − 5)/3)²)) or straight when bend is 0,
// with the straight part 1 + 0.3·m either way.
func curvedData(n int, bend float64, seed uint64) *Data {
	rng := rand.New(rand.NewPCG(seed, 19))
	var y, tr, m []float64
	for i := range n {
		mi := 10 * rng.Float64()
		ti := float64(i % 2)
		effect := 1 + 0.3*mi + bend*(1-((mi-5)/3)*((mi-5)/3))
		y = append(y, 2+0.5*mi+effect*ti+2*rng.NormFloat64())
		tr = append(tr, ti)
		m = append(m, mi)
	}
	return &Data{Columns: []Column{{Name: "y", Num: y}, {Name: "t", Num: tr}, {Name: "m", Num: m}}}
}

// TestLinearityFlagsACurve checks that a clearly curved effect is flagged
// and a straight one is not (simulated with a known truth), and that the
// middle third's effect of the hump lies above the line.
func TestLinearityFlagsACurve(t *testing.T) {
	s := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "m", Kind: ModeratorContinuous}}
	curved, err := Fit(curvedData(3000, 4, 1), s)
	if err != nil {
		t.Fatal(err)
	}
	if l := curved.Linearity; l == nil || !l.Contradicts || l.Thirds[1].Effect.Estimate <= l.Thirds[1].Line.Estimate {
		t.Errorf("curved effect: %+v", curved.Linearity)
	}
	straight, err := Fit(curvedData(3000, 0, 2), s)
	if err != nil {
		t.Fatal(err)
	}
	if l := straight.Linearity; l == nil || l.Contradicts {
		t.Errorf("straight effect flagged: %+v", straight.Linearity)
	}
	for _, th := range straight.Linearity.Thirds {
		if truth := 1 + 0.3*th.Median; truth < th.Effect.CILow || truth > th.Effect.CIHigh {
			t.Errorf("third around %g: true effect %g outside %g to %g", th.Median, truth, th.Effect.CILow, th.Effect.CIHigh)
		}
	}
}

// TestLinearityCannot checks that a moderator with too few values for the
// binned model leaves the check out with a plain note, and that a fit
// whose variance cannot test 8 terms keeps the thirds without a test.
func TestLinearityCannot(t *testing.T) {
	d := curvedData(300, 0, 3)
	m := d.col("m")
	for i := range m.Num {
		m.Num[i] = math.Floor(m.Num[i] / 4) // 0, 1 or 2
	}
	res, err := Fit(d, Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "m", Kind: ModeratorContinuous}})
	if err != nil {
		t.Fatal(err)
	}
	if res.Linearity != nil || !strings.Contains(strings.Join(res.Notes, " "), "could not be made") {
		t.Errorf("linearity %+v, notes %v", res.Linearity, res.Notes)
	}

	d = curvedData(300, 0, 4)
	site := make([]float64, 300)
	for i := range site {
		site[i] = float64(i % 6)
	}
	d.Columns = append(d.Columns, Column{Name: "site", Num: site})
	res, err = Fit(d, Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "m", Kind: ModeratorContinuous},
		Cluster: "site", Bootstrap: Bootstrap{Off: true}})
	if err != nil {
		t.Fatal(err)
	}
	if l := res.Linearity; l == nil || len(l.Thirds) != 3 || l.Wald != nil || l.Contradicts {
		t.Errorf("6 clusters: linearity %+v", res.Linearity)
	}
}
