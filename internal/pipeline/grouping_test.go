package pipeline

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"slopewise/internal/estimate"
	"slopewise/internal/report"
)

// sites makes a table of 30 sites of 20 rows each, columns y, t, region,
// site, pid (one row each), score (a decimal), age (a whole number that
// groups nothing) and code (region under another name); row(s, i) gives
// the treatment and region of row i of site s.
func sites(t *testing.T, row func(s, i int) (tr int, region string)) (header string, rows []string) {
	t.Helper()
	for s := range 30 {
		for i := range 20 {
			tr, region := row(s, i)
			rows = append(rows, fmt.Sprintf("%d,%d,%s,site%02d,p%d,%d.5,%d,code-%s", 100+(s*7+i*3)%11+tr, tr, region, s, s*20+i, (s+i)%13, 20+(s*13+i*7)%37, region))
		}
	}
	return "y,t,region,site,pid,score,age,code", rows
}

func regionSpec() estimate.Spec {
	return estimate.Spec{Outcome: "y", Treatment: estimate.Treatment{Column: "t", Kind: estimate.TreatmentBinary},
		Moderator: estimate.Moderator{Column: "region", Kind: estimate.ModeratorCategorical}}
}

// byColumn returns the finding about a column, if any.
func byColumn(gs []report.Grouping, name string) *report.Grouping {
	for i := range gs {
		if gs[i].Column == name {
			return &gs[i]
		}
	}
	return nil
}

// TestGroupings checks the grouping check on constructed tables whose
// structure is known by construction.
func TestGroupings(t *testing.T) {
	regionOfSite := func(s int) string { return []string{"north", "south", "east"}[s/10] }
	cases := []struct {
		name string
		row  func(s, i int) (int, string)
		// want is the finding about "site": nests moderator, nests
		// treatment; nil when site should not be reported.
		want      *[2]bool
		modShare  float64
		warnWords string
	}{
		{"moderator nested", func(s, i int) (int, string) { return i % 2, regionOfSite(s) }, &[2]bool{true, false}, 1,
			"Every row of a site has the same region: the comparison across region rests on 30 clusters of site, not on 600 independent rows."},
		{"treatment nested", func(s, i int) (int, string) { return s % 2, []string{"north", "south", "east"}[i%3] }, &[2]bool{false, true}, 0,
			"Every row of a site has the same t: the treatment was given by site, so its effect rests on 30 clusters of site, not on 600 independent rows."},
		{"both nested", func(s, i int) (int, string) { return s % 2, regionOfSite(s) }, &[2]bool{true, true}, 1,
			"Every row of a site has the same region and the same t"},
		{"neither", func(s, i int) (int, string) { return i % 2, []string{"north", "south", "east"}[(i+s)%3] }, nil, 0, ""},
		// 28 of 30 sites hold one region, 2 mix: 93% of rows, above the
		// threshold of 90%.
		{"nearly nested", func(s, i int) (int, string) {
			if s < 2 && i%2 == 0 {
				return i % 2, "east"
			}
			return i % 2, regionOfSite(s)
		}, &[2]bool{true, false}, 28.0 / 30, "Nearly every row of a site has the same region: the comparison across region rests on about 30 clusters of site, not on 600 independent rows (93.3% of the rows"},
		// Only 20 of 30 sites hold one region: 67% of the rows, below it.
		{"nested in part", func(s, i int) (int, string) {
			if s%3 == 0 {
				return i % 2, []string{"north", "south", "east"}[i%3]
			}
			return i % 2, regionOfSite(s)
		}, nil, 0, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			header, rows := sites(t, c.row)
			gs := Groupings(table(t, header, rows), regionSpec())
			for _, never := range []string{"pid", "score", "age", "code"} {
				if g := byColumn(gs, never); g != nil {
					t.Errorf("%s reported: %+v", never, *g)
				}
			}
			site := byColumn(gs, "site")
			switch {
			case c.want == nil && site != nil:
				t.Errorf("site reported: %+v", *site)
			case c.want == nil:
			case site == nil:
				t.Fatalf("site not reported: %+v", gs)
			case site.NestsModerator != c.want[0] || site.NestsTreatment != c.want[1]:
				t.Errorf("site nests moderator %v, treatment %v; want %v", site.NestsModerator, site.NestsTreatment, *c.want)
			case site.Groups != 30 || site.Rows != 600:
				t.Errorf("site: %d groups, %d rows; want 30, 600", site.Groups, site.Rows)
			case c.want[0] && site.ModeratorShare != c.modShare:
				t.Errorf("share of rows with one region a site %v, want %v", site.ModeratorShare, c.modShare)
			}
			col, words := report.GroupingWarning(regionSpec(), gs)
			if !strings.Contains(words, c.warnWords) || (c.warnWords == "") != (words == "") {
				t.Errorf("warning %q, want it to say %q", words, c.warnWords)
			}
			if words != "" && col != "site" {
				t.Errorf("the warning suggests %q, want site", col)
			}
		})
	}
}

// TestGroupingsRepeatedUnits: an identifier of people seen before and
// after (two rows each) is reported as repeating units; one of people
// seen once is not; pairs whose moderator only agrees by chance (half the
// time, for two groups of equal size) are not read as nesting it.
func TestGroupingsRepeatedUnits(t *testing.T) {
	var rows []string
	for p := range 300 {
		for period := range 2 {
			// The moderator g follows a pattern unrelated to the person:
			// half the people have the same g in both rows.
			g := []string{"a", "b"}[(p*period+p/2)%2]
			rows = append(rows, fmt.Sprintf("%d,%d,%d,%s,p%d,q%d", 50+(p*7)%13+3*period, period, p%2, g, p, 2*p+period))
		}
	}
	tb := table(t, "y,t,arm,g,person,visit", rows)
	s := estimate.Spec{Outcome: "y", Treatment: estimate.Treatment{Column: "t", Kind: estimate.TreatmentBinary},
		Moderator: estimate.Moderator{Column: "g", Kind: estimate.ModeratorBinary}}
	gs := Groupings(tb, s)
	person := byColumn(gs, "person")
	if person == nil || !person.Repeats || person.RowsEach != 2 || person.NestsModerator || person.NestsTreatment {
		t.Fatalf("person: %+v; want repeats of 2 rows, nesting nothing", person)
	}
	if person.ModeratorShare != 0.5 {
		t.Errorf("share of people with one g %v, want 0.5 by construction", person.ModeratorShare)
	}
	if g := byColumn(gs, "visit"); g != nil {
		t.Errorf("visit, one row each, reported: %+v", *g)
	}
	col, words := report.GroupingWarning(s, gs)
	if col != "person" || !strings.Contains(words, "Most values of person appear in 2 rows each (300 values for 600 rows)") {
		t.Errorf("warning %q about %q", words, col)
	}
	// The same people with the moderator a property of each person: now
	// person holds it constant.
	s.Moderator.Column = "arm"
	if p := byColumn(Groupings(tb, s), "person"); p == nil || !p.NestsModerator || p.ModeratorShare != 1 {
		t.Errorf("person with arm as the moderator: %+v", p)
	}
}

// TestGroupingsNumberModerator: a moderator that is a number is held
// constant by a column when each of its values has one number (a site's
// own measure), and the cluster column chosen is judged against the
// others.
func TestGroupingsNumberModerator(t *testing.T) {
	var rows []string
	for s := range 40 {
		for i := range 10 {
			rows = append(rows, fmt.Sprintf("%d,%d,%g,site%d,class%d,%d", 10+(s+i)%7, (s+i)%2, 1.5*float64(s%17), s, (s*10+i)%70, i))
		}
	}
	tb := table(t, "y,t,income,site,class,seat", rows)
	s := estimate.Spec{Outcome: "y", Treatment: estimate.Treatment{Column: "t", Kind: estimate.TreatmentBinary},
		Moderator: estimate.Moderator{Column: "income", Kind: estimate.ModeratorContinuous}}
	gs := Groupings(tb, s)
	if site := byColumn(gs, "site"); site == nil || !site.NestsModerator || site.Groups != 40 {
		t.Fatalf("site: %+v", site)
	}
	if len(gs) == 0 || gs[0].Column != "site" {
		t.Errorf("site is not first: %+v", gs)
	}
	// Clustering by class, which mixes sites, is not enough: the
	// warning names site.
	s.Cluster = "class"
	col, words := report.GroupingWarning(s, Groupings(tb, s))
	if col != "site" || !strings.HasPrefix(words, "The cluster column class does not hold income constant, but site does.") {
		t.Errorf("with class as the cluster: %q about %q", words, col)
	}
	s.Cluster = "site"
	if col, words := report.GroupingWarning(s, Groupings(tb, s)); words != "" {
		t.Errorf("with site as the cluster: %q about %q", words, col)
	}
}

// TestGroupingsStreamed: the check over a streamed text file finds what
// it finds in the table read whole.
func TestGroupingsStreamed(t *testing.T) {
	header, rows := sites(t, func(s, i int) (int, string) { return s % 2, []string{"north", "south", "east"}[s/10] })
	path := filepath.Join(t.TempDir(), "sites.csv")
	if err := os.WriteFile(path, []byte(header+"\n"+strings.Join(rows, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	src, err := Open(ctx, report.Run{File: path})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if src.Stream == nil {
		t.Fatal("the text file was not streamed")
	}
	got, err := src.Groupings(ctx, regionSpec())
	if err != nil {
		t.Fatal(err)
	}
	want := Groupings(table(t, header, rows), regionSpec())
	if !reflect.DeepEqual(got, want) || len(got) == 0 {
		t.Errorf("streamed %+v\nwhole %+v", got, want)
	}
}

// TestGroupingsBudget: when the values kept reach the bound, the column
// with the most values (an identifier of one row each) is let go, not
// the column that happened to add the next value.
func TestGroupingsBudget(t *testing.T) {
	header, rows := sites(t, func(s, i int) (int, string) { return i % 2, []string{"north", "south", "east"}[s/10] })
	tb := table(t, header, rows)
	sc := newGroupingScan(tb, regionSpec())
	sc.budget = 200 // pid alone has 600 values; site 30, age 37
	sc.add(EngineData(tb))
	for _, c := range sc.cands {
		// score is let go too, for its decimals.
		if c.dropped != (c.name == "pid" || c.name == "score") {
			t.Errorf("%s dropped: %v", c.name, c.dropped)
		}
	}
	if site := byColumn(sc.result(), "site"); site == nil || !site.NestsModerator {
		t.Errorf("site: %+v", site)
	}
}

// BenchmarkGroupings measures the check's scan on 200,000 rows with 200
// sites and a column of one row each.
func BenchmarkGroupings(b *testing.B) {
	var rows []string
	for r := range 200_000 {
		rows = append(rows, fmt.Sprintf("%d,%d,r%d,s%d,p%d,%d", r%17, r%2, r/1000%5, r/1000, r, r%60))
	}
	tb := table(&testing.T{}, "y,t,region,site,pid,age", rows)
	d := EngineData(tb)
	b.ReportAllocs()
	for b.Loop() {
		// The scan itself: Groupings would answer from what it kept.
		sc := newGroupingScan(tb, regionSpec())
		sc.add(d)
		sc.result()
	}
}
