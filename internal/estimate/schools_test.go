package estimate

import (
	"bytes"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the generated fixtures in testdata/r/ (schools10.csv)")

// schoolsCSV draws the invented study of issue 19: pupils in schools,
// half of each school tutored at random, a reading score, and a tutoring
// effect that falls along a straight line in the pupil's prior score.
// For pupil i of school s:
//
//	μ_s, u_s, a_s    school's mean prior score ~ N(50, 6²), level ~ N(0, 5²),
//	                 own shift of the effect ~ N(0, 2²)
//	prior_i          = round₁(μ_s + 12·z_i),  z_i ~ N(0, 1)
//	tutored_i        = 1 for exactly half the school's pupils, at random
//	reading_i        = round₂(40 + 0.4·prior_i + u_s
//	                          + tutored_i·(20 − 0.25·prior_i + a_s) + 6·ε_i)
//
// so the true effect at prior score m is 20 − 0.25·m, a straight line,
// and the pupils of a school are alike (u_s, a_s): clustered by school.
// The values are rounded so that the CSV holds them exactly.
func schoolsCSV(seed uint64, schools, pupils int) []byte {
	rng := rand.New(rand.NewPCG(seed, 19))
	var b bytes.Buffer
	b.WriteString("school,prior,tutored,reading\n")
	round := func(v float64, places int) string {
		p := math.Pow(10, float64(places))
		return strconv.FormatFloat(math.Round(v*p)/p, 'f', places, 64)
	}
	for s := range schools {
		mu, u, a := 50+6*rng.NormFloat64(), 5*rng.NormFloat64(), 2*rng.NormFloat64()
		tutored := rng.Perm(pupils)
		for i := range pupils {
			prior, _ := strconv.ParseFloat(round(mu+12*rng.NormFloat64(), 1), 64)
			t := 0.0
			if tutored[i] < pupils/2 {
				t = 1
			}
			reading := 40 + 0.4*prior + u + t*(20-0.25*prior+a) + 6*rng.NormFloat64()
			fmt.Fprintf(&b, "S%02d,%s,%d,%s\n", s+1, round(prior, 1), int(t), round(reading, 2))
		}
	}
	return b.Bytes()
}

// schools10 is testdata/r/schools10.csv: 300 pupils in 10 schools.
func schools10() []byte { return schoolsCSV(10, 10, 30) }

// schoolsSpec is the straight-line model of the schools: reading on
// tutored × prior, clustered by school.
func schoolsSpec() Spec {
	return Spec{Outcome: "reading", Treatment: Treatment{Column: "tutored"},
		Moderator: Moderator{Column: "prior", Kind: ModeratorContinuous}, Cluster: "school"}
}

// TestSchoolsFixture checks that testdata/r/schools10.csv, which R reads
// too, is what the generator draws; -update rewrites it.
func TestSchoolsFixture(t *testing.T) {
	path := filepath.Join(rDir, "schools10.csv")
	if *update {
		if err := os.WriteFile(path, schools10(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	got, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, schools10()) {
		t.Errorf("%s is not what schoolsCSV draws; run go test ./internal/estimate -run TestSchoolsFixture -update", path)
	}
}

// loadSchools reads generated school data through the test CSV reader.
func loadSchools(t *testing.T, b []byte) *Data {
	t.Helper()
	path := filepath.Join(t.TempDir(), "schools.csv")
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return loadCSV(t, path)
}

// TestLinearityTenSchools is issue 19's case: 300 pupils in 10 schools
// whose effect is a straight line in the prior score (drawn so), clustered
// by school. CR1's F(8, 9) for the 8 terms of the thirds rejects the line
// (its covariance has rank at most 9: Cameron & Miller 2015, §VI.C); the
// wild cluster bootstrap of the same statistic does not, so no
// contradiction is reported, and the thirds' intervals hold the true line.
func TestLinearityTenSchools(t *testing.T) {
	res, err := Fit(loadCSV(t, filepath.Join(rDir, "schools10.csv")), schoolsSpec())
	if err != nil {
		t.Fatal(err)
	}
	l := res.Linearity
	if l == nil || l.Wald == nil || l.Wald.PBoot == nil || l.NotJudged != nil {
		t.Fatalf("linearity %+v, notes %v", l, res.Notes)
	}
	if res.Bootstrap == nil || res.Bootstrap.Weights != Webb {
		t.Errorf("bootstrap %+v, want Webb's weights with 10 clusters", res.Bootstrap)
	}
	if l.Wald.DF1 != 8 || l.Wald.DF2 != 9 || !(l.Wald.P < 0.05) {
		t.Errorf("CR1 test %+v: the case should show F(8, 9) crying wolf", l.Wald)
	}
	if l.Contradicts || *l.Wald.PBoot < 0.05 {
		t.Errorf("straight line reported as contradicted: bootstrap p %g", *l.Wald.PBoot)
	}
	for _, th := range l.Thirds {
		if truth := 20 - 0.25*th.Median; truth < th.Effect.CILow || truth > th.Effect.CIHigh {
			t.Errorf("third around %g: true effect %g outside %g to %g", th.Median, truth, th.Effect.CILow, th.Effect.CIHigh)
		}
	}
	t.Logf("CR1 F(8, 9) = %.3f, p = %.4g; bootstrap p = %.4g; thirds %.2f %.2f %.2f, line %.2f %.2f %.2f",
		l.Wald.F, l.Wald.P, *l.Wald.PBoot, l.Thirds[0].Effect.Estimate, l.Thirds[1].Effect.Estimate, l.Thirds[2].Effect.Estimate,
		l.Thirds[0].Line.Estimate, l.Thirds[1].Line.Estimate, l.Thirds[2].Line.Estimate)
}

// TestJointNotJudged checks the rule of joint.go: with 6 schools the 8
// terms of the line exceed the 5 the cluster-robust covariance can carry,
// so the check keeps its thirds but makes no test, with or without the
// bootstrap; a 7-group moderator (6 terms) in 6 clusters is not judged
// either, while 5 groups (4 terms) are.
func TestJointNotJudged(t *testing.T) {
	d := loadSchools(t, schoolsCSV(6, 6, 50))
	for _, off := range []bool{false, true} {
		s := schoolsSpec()
		s.Bootstrap.Off = off
		res, err := Fit(d, s)
		if err != nil {
			t.Fatal(err)
		}
		l := res.Linearity
		if l == nil || len(l.Thirds) != 3 || l.Wald != nil || l.Contradicts || l.NotJudged == nil ||
			*l.NotJudged != (NotJudged{Terms: 8, Clusters: 6, MaxTerms: 5}) {
			t.Errorf("bootstrap off %v: linearity %+v", off, l)
		}
	}
	for _, c := range []struct {
		groups int
		judged bool
	}{{7, false}, {6, true}, {5, true}} {
		data := groupNullData(rand.New(rand.NewPCG(6, uint64(c.groups))), []int{40, 50, 60, 70, 80, 90}, c.groups)
		res, err := Fit(data, Spec{Outcome: "y", Treatment: Treatment{Column: "t"},
			Moderator: Moderator{Column: "m", Kind: ModeratorCategorical}, Cluster: "site"})
		if err != nil {
			t.Fatal(err)
		}
		if got := res.Heterogeneity != nil; got != c.judged || (res.HeterogeneityNotJudged == nil) != c.judged {
			t.Errorf("%d groups in 6 clusters: heterogeneity %+v, not judged %+v", c.groups, res.Heterogeneity, res.HeterogeneityNotJudged)
		}
		if c.judged && res.Heterogeneity.PBoot == nil {
			t.Errorf("%d groups in 6 clusters: no bootstrap p", c.groups)
		}
		if !c.judged && strings.Contains(strings.Join(res.Notes, " "), "cannot be computed") {
			t.Errorf("%d groups: a test not judged is also called not computable: %v", c.groups, res.Notes)
		}
	}
}
