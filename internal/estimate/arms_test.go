package estimate

import (
	"errors"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// armsCase is make_arms.R's case: three arms (waitlist the comparison,
// coaching, stipend) by region, age a control.
func armsCase() rCase {
	return rCase{"arms3", "arms.csv", Spec{Outcome: "earnings", Treatment: Treatment{Column: "arm", Control: "waitlist"},
		Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Controls: []string{"age"}}}
}

// TestArmsAgainstR compares a treatment of three arms by a category
// moderator with R 4.2.2 lm + sandwich 3.0.2 (testdata/r/make_arms.R):
// every arm's effect in each group, the differences, each arm's F, Holm
// over the arms (p.adjust) and the joint F, for classical, HC0–HC3 and CR1,
// at relative 1e-8.
func TestArmsAgainstR(t *testing.T) { compareArmsWithR(t, rDir) }

// TestArmsAgainstRLive reruns make_arms.R; in CI (CI=true) a missing R
// fails.
func TestArmsAgainstRLive(t *testing.T) { compareArmsWithR(t, runRScript(t, "make_arms.R")) }

func compareArmsWithR(t *testing.T, dir string) {
	ref := readReference(t, filepath.Join(dir, "arms.txt"))
	checked := compareCases(t, ref, dir, []rCase{armsCase()}, func(s *Spec, vt string) {
		if vt == "CR1" {
			s.Cluster = "site"
		}
		s.Bootstrap.Off = true
	})
	// Several arms before and after, with and without unit effects,
	// clustered by person (the unit) for CR1.
	panel := Spec{Outcome: "earnings", Treatment: Treatment{Column: "arm", Control: "waitlist"}, Period: "year", After: "2024",
		Moderator: Moderator{Column: "region", Kind: ModeratorCategorical}, Unit: "person"}
	fe := panel
	fe.UnitEffects = true
	checked += compareCases(t, ref, dir, []rCase{{"arms_did", "arms_panel.csv", panel}, {"arms_did_fe", "arms_panel.csv", fe}}, func(s *Spec, vt string) {
		s.Bootstrap.Off = true
	})
	if checked < 2500 {
		t.Errorf("only %d reference values compared", checked)
	}
	t.Logf("%d reference values compared with R", checked)
}

// TestArmsResult: the arms are named on every effect and difference, in
// level order, the comparison's rows counted as untreated; a bootstrap
// gives each arm's F its p-value and Holm uses those.
func TestArmsResult(t *testing.T) {
	d := loadCSV(t, filepath.Join(rDir, "arms.csv"))
	s := armsCase().spec
	s.Cluster = "site"
	s.Bootstrap.Draws = 199
	res, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Effects) != 6 || res.Effects[0].Arm != "coaching" || res.Effects[3].Arm != "stipend" || len(res.Differences) != 6 || res.Differences[5].Arm != "stipend" {
		t.Fatalf("effects %+v", res.Effects)
	}
	for _, e := range res.Effects {
		if e.Treated == 0 || e.Untreated == 0 || e.Rows != e.Treated+e.Untreated {
			t.Errorf("%s in %s: %d rows, %d of the arm, %d of the comparison", e.Arm, e.Group, e.Rows, e.Treated, e.Untreated)
		}
	}
	if len(res.Arms) != 2 || res.Arms[0].Heterogeneity.PBoot == nil || res.Heterogeneity.PBoot == nil {
		t.Fatalf("arms %+v", res.Arms)
	}
	if want := AdjustHolm([]float64{*res.Arms[0].Heterogeneity.PBoot, *res.Arms[1].Heterogeneity.PBoot}); res.Arms[0].HolmP != want[0] || res.Arms[1].HolmP != want[1] {
		t.Errorf("Holm %v, %v; want %v", res.Arms[0].HolmP, res.Arms[1].HolmP, want)
	}
}

// TestArmsRefusals: what several arms cannot do is said in words.
func TestArmsRefusals(t *testing.T) {
	d := loadCSV(t, filepath.Join(rDir, "arms.csv"))
	y := Column{Name: "earnings east without stipend", Num: append([]float64(nil), d.col("earnings").Num...)}
	for i := range y.Num {
		if d.col("region").Text[i] == "East" && d.col("arm").Text[i] == "stipend" {
			y.Num[i] = math.NaN()
		}
	}
	d.Columns = append(d.Columns, y)
	for _, c := range []struct {
		name   string
		change func(*Spec)
		kind   error
		says   string
	}{
		{"unknown comparison", func(s *Spec) { s.Treatment.Control = "none" }, ErrValues, `The arm "none", chosen as the comparison, does not appear`},
		{"number moderator", func(s *Spec) { s.Moderator = Moderator{Column: "age", Kind: ModeratorContinuous}; s.Controls = nil }, ErrSpec, "a number moderator is not supported with several arms yet"},
		{"an arm missing in a group", func(s *Spec) { s.Outcome = "earnings east without stipend" }, ErrNoContrast, `group "East" has no rows of the arm "stipend"`},
	} {
		s := armsCase().spec
		c.change(&s)
		_, err := Fit(d, s)
		var e *Error
		if !errors.As(err, &e) || !errors.Is(err, c.kind) || !strings.Contains(e.Message, c.says) {
			t.Errorf("%s: %v", c.name, err)
		}
	}
}
