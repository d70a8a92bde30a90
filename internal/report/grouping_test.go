package report

import (
	"strings"
	"testing"

	"slopewise/internal/estimate"
)

// TestGroupingWords checks the words of the grouping check in the
// cautions and the note. The groupings are written by hand and true of
// the scenario's data by construction: row i is in site i mod 8 and in
// region (i/2) mod 2, so every row of a site has the same region, while
// the treatment alternates within each site.
func TestGroupingWords(t *testing.T) {
	sc := noteScenarios["few-clusters-labels"]
	run, res := sc.fit(t)
	site := Grouping{Column: "site", Groups: 8, Rows: 600, ModeratorShare: 1, NestsModerator: true, Cluster: true}

	run.Groupings = []Grouping{site}
	note := Note(run, res)
	if want := "Since every site has a single region, the comparison across region rests on the 8 clusters, not on the 600 rows."; !strings.Contains(note, want) {
		t.Errorf("the note does not say %q:\n%s", want, note)
	}
	for _, c := range Cautions(run, res) {
		if strings.Contains(c, "cluster column") {
			t.Errorf("a caution about the cluster column with site chosen: %s", c)
		}
	}

	// Nearly every site, and the treatment given by site too (words only:
	// the scenario's treatment is not).
	part := site
	part.ModeratorShare, part.TreatmentShare, part.NestsTreatment = 0.95, 0.92, true
	run.Groupings = []Grouping{part}
	note = Note(run, res)
	for _, want := range []string{"Since nearly every site has a single region", "The treatment was given by site for nearly every row, so its effect rests on the 8 clusters, not on the 600 rows."} {
		if !strings.Contains(note, want) {
			t.Errorf("the note does not say %q:\n%s", want, note)
		}
	}

	// Without a cluster column: the first caution, with what to do.
	sc.clusters = 0
	noCluster, res := sc.fit(t)
	free := site
	free.Cluster = false
	noCluster.Groupings = []Grouping{free}
	cautions := Cautions(noCluster, res)
	want := `Every row of a site has the same region: the comparison across region rests on 8 clusters of site, not on 600 independent rows. Errors that treat the rows as independent make these results look surer than they are (Moulton 1990). The standard errors here do not allow for it: run again with "site" as the cluster column.`
	if len(cautions) == 0 || cautions[0] != want {
		t.Errorf("first caution %q, want %q", cautions, want)
	}
	if strings.Contains(Note(noCluster, res), "rests on the") {
		t.Error("the note speaks of the clusters without a cluster column")
	}
}

// TestGroupingWarningCases covers which finding GroupingWarning picks.
func TestGroupingWarningCases(t *testing.T) {
	spec := estimate.Spec{Treatment: estimate.Treatment{Column: "coached"}, Moderator: estimate.Moderator{Column: "region"}}
	withCluster := func(c string) estimate.Spec { s := spec; s.Cluster = c; return s }
	site := Grouping{Column: "site", Groups: 24, Rows: 1200, ModeratorShare: 1, TreatmentShare: 1, NestsModerator: true, NestsTreatment: true}
	person := Grouping{Column: "person", Groups: 600, Rows: 1200, Repeats: true, RowsEach: 2}
	class := Grouping{Column: "class", Groups: 60, Rows: 1200, ModeratorShare: 1, NestsModerator: true, Cluster: true}
	cases := []struct {
		name   string
		spec   estimate.Spec
		gs     []Grouping
		column string
		words  string
	}{
		{"nothing found", spec, nil, "", ""},
		{"both held constant", spec, []Grouping{site, person}, "site", "Every row of a site has the same region and the same coached: the treatment was given by site, and both its effect and the comparison across region rest on 24 clusters of site, not on 1200 independent rows."},
		{"repeated units", spec, []Grouping{person}, "person", "Most values of person appear in 2 rows each (600 values for 1200 rows)"},
		{"repeated units, a cluster chosen", withCluster("class"), []Grouping{person, class}, "", ""},
		{"a cluster that misses the treatment", withCluster("class"), []Grouping{site, class}, "site", "The cluster column class does not hold the treatment coached constant, but site does."},
		{"a cluster that is not a grouping", withCluster("pid"), []Grouping{site}, "site", "The cluster column pid does not hold region and the treatment coached constant, but site does."},
		{"the right cluster", withCluster("site"), []Grouping{func() Grouping { g := site; g.Cluster = true; return g }(), person}, "", ""},
	}
	for _, c := range cases {
		column, words := GroupingWarning(c.spec, c.gs)
		if column != c.column || !strings.Contains(words, c.words) || (c.words == "") != (words == "") {
			t.Errorf("%s: %q, %q; want %q, %q", c.name, column, words, c.column, c.words)
		}
	}
}
