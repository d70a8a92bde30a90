package pipeline

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
)

// table writes rows as a CSV file and reads it with the project's reader.
func table(t *testing.T, header string, rows []string) *workbook.Table {
	t.Helper()
	path := filepath.Join(t.TempDir(), "data.csv")
	if err := os.WriteFile(path, []byte(header+"\n"+strings.Join(rows, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	tb, err := workbook.Read(context.Background(), path, workbook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return tb
}

// study makes n rows: y, t (alternating 0/1), g (groups cycling through
// groups), m (a number with the given count of distinct values), site.
func study(t *testing.T, n int, groups []string, distinct, sites int, tweak func(i int, g *string, tr *int)) *workbook.Table {
	var rows []string
	for i := 0; i < n; i++ {
		g := groups[i/2%len(groups)]
		tr := i % 2
		if tweak != nil {
			tweak(i, &g, &tr)
		}
		rows = append(rows, fmt.Sprintf("%d,%d,%s,%d,s%d", 10+i%7+tr*2, tr, g, i%distinct, i%sites))
	}
	return table(t, "y,t,g,m,site", rows)
}

func spec(kind estimate.ModeratorKind, mod string) estimate.Spec {
	return estimate.Spec{Outcome: "y", Treatment: estimate.Treatment{Column: "t", Kind: estimate.TreatmentBinary},
		Moderator: estimate.Moderator{Column: mod, Kind: kind}}
}

func find(checks []Check, sev Severity, words string) bool {
	for _, c := range checks {
		if c.Severity == sev && strings.Contains(c.Message, words) {
			return true
		}
	}
	return false
}

// TestPrecheck checks each message of the checks before running.
func TestPrecheck(t *testing.T) {
	cases := []struct {
		name  string
		table func(t *testing.T) *workbook.Table
		spec  estimate.Spec
		sev   Severity
		words string
	}{
		{"many distinct numbers as groups", func(t *testing.T) *workbook.Table { return study(t, 200, []string{"a", "b"}, 57, 50, nil) },
			spec(estimate.ModeratorCategorical, "m"), Warning, "has 57 different numbers. Treat it as a number"},
		{"few values as a number", func(t *testing.T) *workbook.Table { return study(t, 200, []string{"a", "b"}, 3, 50, nil) },
			spec(estimate.ModeratorContinuous, "m"), Warning, "takes only 3 different values"},
		{"few clusters", func(t *testing.T) *workbook.Table { return study(t, 200, []string{"a", "b"}, 3, 6, nil) },
			func() estimate.Spec { s := spec(estimate.ModeratorCategorical, "g"); s.Cluster = "site"; return s }(), Warning, "has only 6 clusters"},
		{"one cluster", func(t *testing.T) *workbook.Table { return study(t, 200, []string{"a", "b"}, 3, 1, nil) },
			func() estimate.Spec { s := spec(estimate.ModeratorCategorical, "g"); s.Cluster = "site"; return s }(), Blocking, "same cluster"},
		{"small group", func(t *testing.T) *workbook.Table {
			return study(t, 200, []string{"a", "b"}, 3, 50, func(i int, g *string, _ *int) {
				if i < 4 {
					*g = "tiny"
				}
			})
		}, spec(estimate.ModeratorCategorical, "g"), Warning, `The smallest group, "tiny" of "g", has only 4 rows`},
		{"treatment constant in a group", func(t *testing.T) *workbook.Table {
			return study(t, 200, []string{"a", "b", "c"}, 3, 50, func(_ int, g *string, tr *int) {
				if *g == "c" {
					*tr = 1
				}
			})
		}, spec(estimate.ModeratorCategorical, "g"), Blocking, `In the group "c" of "g" the treatment never varies`},
		{"binary with three groups", func(t *testing.T) *workbook.Table { return study(t, 200, []string{"a", "b", "c"}, 3, 50, nil) },
			spec(estimate.ModeratorBinary, "g"), Blocking, "chosen as two groups but has 3"},
		{"missing roles", func(t *testing.T) *workbook.Table { return study(t, 20, []string{"a", "b"}, 3, 5, nil) },
			estimate.Spec{Outcome: "y"}, Blocking, "Choose an outcome, a treatment and a moderator"},
		{"text moderator as a number", func(t *testing.T) *workbook.Table { return study(t, 60, []string{"a", "b"}, 3, 5, nil) },
			spec(estimate.ModeratorContinuous, "g"), Blocking, "holds text"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			checks := Precheck(c.table(t), c.spec)
			if !find(checks, c.sev, c.words) {
				t.Errorf("no check of severity %d saying %q in %+v", c.sev, c.words, checks)
			}
		})
	}
	// 59 sites of 3 or 4 rows: with 50, every site would hold one arm
	// (rows i and i+50 share a parity), and with 49 nearly all would hold
	// 4 rows, like the ids of people seen four times; the grouping check
	// rightly reports both.
	clean := Precheck(study(t, 200, []string{"a", "b"}, 3, 59, nil), spec(estimate.ModeratorCategorical, "g"))
	for _, c := range clean {
		if c.Severity != Note {
			t.Errorf("a clean study got %+v", c)
		}
	}
}

// TestBeforeAfterChecks: before running, a before-and-after design is
// checked in plain words: a period that is not 0/1, only one period, a
// group without one set of units before or after, a unit in both groups.
func TestBeforeAfterChecks(t *testing.T) {
	var rows []string
	for u := 0; u < 40; u++ {
		tr, g := u%2, []string{"a", "b"}[u/2%2]
		for p := 0; p < 2; p++ {
			rows = append(rows, fmt.Sprintf("%d,%d,%d,%s,u%02d,%d", 10+u%5+3*tr*p, tr, p, g, u, 2023+p))
		}
	}
	good := table(t, "y,t,post,g,unit,year", rows)
	s := spec(estimate.ModeratorCategorical, "g")
	s.Period, s.Unit = "post", "unit"
	for _, c := range Precheck(good, s) {
		if c.Severity != Note {
			t.Errorf("a sound design: %+v", c)
		}
	}
	for _, c := range []struct {
		name  string
		tweak func(r []string) []string
		spec  func(s *estimate.Spec)
		sev   Severity
		words string
	}{
		{"years without after", nil, func(s *estimate.Spec) { s.Period = "year" }, Blocking, `The period "year" holds values other than 0 and 1`},
		{"after absent", nil, func(s *estimate.Spec) { s.Period, s.After = "year", "2025" }, Blocking, `The value "2025", chosen as after, does not appear`},
		{"one period", func(r []string) []string {
			var out []string
			for _, row := range r {
				if strings.Split(row, ",")[2] == "0" {
					out = append(out, row)
				}
			}
			return out
		}, nil, Blocking, "Every usable row is from one period"},
		{"no programme rows after in b", func(r []string) []string {
			var out []string
			for _, row := range r {
				if !strings.Contains(row, ",1,1,b,") {
					out = append(out, row)
				}
			}
			return out
		}, nil, Blocking, `The group "b" of "g" has no rows of the programme's units after the start`},
		{"a unit in both groups", func(r []string) []string {
			out := append([]string(nil), r...)
			out[1] = strings.Replace(out[1], ",0,1,a,", ",1,1,a,", 1)
			return out
		}, nil, Warning, `1 unit(s) of "unit" are in both the programme's group and the comparison group (the first: "u00")`},
	} {
		tb := good
		if c.tweak != nil {
			tb = table(t, "y,t,post,g,unit,year", c.tweak(rows))
		}
		sp := s
		if c.spec != nil {
			c.spec(&sp)
		}
		if checks := Precheck(tb, sp); !find(checks, c.sev, c.words) {
			t.Errorf("%s: %+v", c.name, checks)
		}
	}
}
