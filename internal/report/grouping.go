package report

import (
	"fmt"

	"slopewise/internal/estimate"
)

// Grouping is what the data show about one column that groups the rows
// and is not in the model (or is the run's cluster column): whether it
// holds the moderator or the treatment constant, or repeats units. The
// pipeline finds it (pipeline.Groupings); report words it, so that the
// window, the headless command and the sheet say the same thing.
//
// Why it matters: when the moderator or the treatment is constant within
// the values of a column (sites, schools), the comparison rests on those
// values, not on the rows, and errors that treat the rows as independent
// understate the uncertainty by a factor that grows with the rows per
// value (Moulton 1990, Review of Economics and Statistics 72(2)); errors
// should then be clustered on that column (Abadie, Athey, Imbens &
// Wooldridge 2023, QJE 138(1): cluster when treatment or the moderator is
// assigned by groups).
type Grouping struct {
	Column string
	// Groups is the column's number of distinct values among the rows
	// the model uses, and Rows the number of those rows.
	Groups int
	Rows   int
	// ModeratorShare and TreatmentShare are the shares of those rows
	// that lie in values of the column within which the moderator (the
	// treatment) does not vary.
	ModeratorShare, TreatmentShare float64
	// NestsModerator and NestsTreatment say the column holds the
	// moderator (the treatment) constant, in every value or nearly
	// (pipeline states the threshold).
	NestsModerator, NestsTreatment bool
	// Repeats says the column looks like an identifier of units seen in
	// several rows each (as in before-and-after data): most of its values
	// hold the same number of rows, RowsEach, at least 2.
	Repeats  bool
	RowsEach int
	// Cluster marks the run's cluster column.
	Cluster bool
}

// nests is true when the column holds the moderator or the treatment
// constant.
func (g Grouping) nests() bool { return g.NestsModerator || g.NestsTreatment }

// GroupingWarning is the finding about the rows' grouping that a run
// should hear of, and the column to cluster on; words is empty when there
// is none. Without a cluster column: the first column of gs (ranked
// strongest first) that holds the moderator or the treatment constant or
// repeats units. With one: a column that holds constant what the cluster
// column does not. The words say what was found and why it matters, not
// what to do: each caller says that in its own terms (a button, an
// option, a new run).
func GroupingWarning(s estimate.Spec, gs []Grouping) (column, words string) {
	var top, chosen *Grouping
	for i := range gs {
		g := &gs[i]
		switch {
		case g.Cluster:
			chosen = g
		case top == nil && (g.nests() || g.Repeats && s.Cluster == ""):
			top = g
		}
	}
	if top == nil {
		return "", ""
	}
	consequence := " Errors that treat the rows as independent make these results look surer than they are (Moulton 1990)."
	if s.Cluster == "" {
		return top.Column, top.finding(s) + consequence
	}
	var c Grouping
	if chosen != nil {
		c = *chosen
	}
	var missed []string
	if top.NestsModerator && !c.NestsModerator {
		missed = append(missed, s.Moderator.Column)
	}
	if top.NestsTreatment && !c.NestsTreatment {
		missed = append(missed, "the treatment "+treatmentName(s.Treatment))
	}
	if missed == nil {
		return "", ""
	}
	return top.Column, fmt.Sprintf("The cluster column %s does not hold %s constant, but %s does. %s%s",
		s.Cluster, JoinAnd(missed), top.Column, top.finding(s), consequence)
}

// finding says in words what the column holds constant, or that it
// repeats units.
func (g Grouping) finding(s estimate.Spec) string {
	m, t, c := s.Moderator.Column, s.Treatment.Column, g.Column
	on := fmt.Sprintf("%s clusters of %s, not on %s independent rows", count(g.Groups), c, count(g.Rows))
	every := "Every"
	share := min(g.ModeratorShare, g.TreatmentShare)
	if !g.NestsTreatment {
		share = g.ModeratorShare
	} else if !g.NestsModerator {
		share = g.TreatmentShare
	}
	if share < 1 {
		every = "Nearly every"
		on = fmt.Sprintf("about %s (%s of the rows lie in values of %s within which it does not vary)", on, pct(share), c)
	}
	switch {
	case g.NestsModerator && g.NestsTreatment:
		return fmt.Sprintf("%s row of a %s has the same %s and the same %s: the treatment was given by %s, and both its effect and the comparison across %s rest on %s.", every, c, m, t, c, m, on)
	case g.NestsModerator:
		return fmt.Sprintf("%s row of a %s has the same %s: the comparison across %s rests on %s.", every, c, m, m, on)
	case g.NestsTreatment:
		return fmt.Sprintf("%s row of a %s has the same %s: the treatment was given by %s, so its effect rests on %s.", every, c, t, c, on)
	}
	return fmt.Sprintf("Most values of %s appear in %d rows each (%s values for %s rows): if they are the same person or place seen more than once, those rows are not independent of one another.", c, g.RowsEach, count(g.Groups), count(g.Rows))
}

// clusterBasis says, in the note, that the comparison rests on the
// clusters when the moderator or the treatment is a property of them.
func (w *noteWriter) clusterBasis() {
	s := w.res.Spec
	if s.Cluster == "" {
		return
	}
	for _, g := range w.run.Groupings {
		if !g.Cluster {
			continue
		}
		k, n := count(w.res.Model.Clusters), count(w.res.Rows.Used)
		if g.NestsModerator {
			w.say("Since %severy %s has a single %s, the comparison across %s rests on the %s clusters, not on the %s rows.", nearly(g.ModeratorShare), s.Cluster, s.Moderator.Column, s.Moderator.Column, k, n)
		}
		if g.NestsTreatment {
			rows := ""
			if g.TreatmentShare < 1 {
				rows = " for nearly every row"
			}
			w.say("The treatment was given by %s%s, so its effect rests on the %s clusters, not on the %s rows.", s.Cluster, rows, k, n)
		}
	}
}

// nearly is "nearly " for a share below one, else "".
func nearly(share float64) string {
	if share < 1 {
		return "nearly "
	}
	return ""
}
