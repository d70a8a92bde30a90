package report

import (
	"fmt"
	"strings"

	"slopewise/internal/estimate"
)

// Thresholds of the cautions. Each is a rule of thumb, named where it
// comes from.
const (
	// smallGroupRows: below this a group's effect is imprecise and its
	// normal approximation shaky (common practice).
	smallGroupRows = 30
	// smallArmRows: fewer treated or untreated rows than this in a group
	// (common practice).
	smallArmRows = 10
	// fewClusters: cluster-robust tests over-reject below roughly this many
	// clusters (Cameron & Miller 2015, J. Human Resources 50(2), §VI); the
	// engine's wild cluster bootstrap runs below the same number.
	fewClusters = estimate.BootstrapClusters
	// droppedShare: above this share of rows left out, say so.
	droppedShare = 0.10
)

// Cautions lists what a reader of this run should keep in mind (METHODS
// §9), each a sentence or two in plain words, most important first.
func Cautions(run Run, res *estimate.Result) []string {
	var out []string
	add := func(format string, args ...any) { out = append(out, fmt.Sprintf(format, args...)) }
	m := res.Moderator.Column
	if col, words := GroupingWarning(res.Spec, run.Groupings); words != "" {
		add("%s The standard errors here do not allow for it: run again with %s as the cluster column.", words, quoted(col))
	}
	if !run.Randomized {
		add("%s", cautionNotRandomized)
	}
	add("%s", cautionModerator(m))
	if c := cautionChosen(run); c != "" {
		add("%s", c)
	}
	if r := res.Rows; r.Read > 0 && float64(r.Dropped) > droppedShare*float64(r.Read) {
		add("%s of %s rows (%s) were left out for missing or unusable values; if those rows differ from the rest, the results may not hold for everyone.", count(r.Dropped), count(r.Read), pct(float64(r.Dropped)/float64(r.Read)))
	}
	if res.Model.Variance == estimate.CR1 && res.Model.Clusters < fewClusters {
		if res.Bootstrap != nil {
			add("There are only %d clusters of %s; with fewer than about 40, cluster-robust p-values tend to be too small and intervals too narrow (Cameron & Miller 2015), so the note relies on the wild cluster bootstrap (Cameron, Gelbach & Miller 2008), which holds its error rate better. Read borderline results with care all the same.", res.Model.Clusters, quoted(res.Spec.Cluster))
		} else {
			add("There are only %d clusters of %s; with fewer than about 40, cluster-robust p-values tend to be too small and intervals too narrow (Cameron & Miller 2015). The wild cluster bootstrap, which corrects much of this, was turned off. Read borderline results with care.", res.Model.Clusters, quoted(res.Spec.Cluster))
		}
	}
	if res.Moderator.Kind != estimate.ModeratorContinuous {
		small := smallest(res.Effects, func(e estimate.GroupEffect) int { return e.Rows })
		thin := smallest(res.Effects, func(e estimate.GroupEffect) int { return min(e.Treated, e.Untreated) })
		arm := min(thin.Treated, thin.Untreated)
		switch {
		case small.Rows < smallGroupRows:
			add("The smallest group, %s, has only %s rows, so its effect is imprecise.", quoted(small.Group), count(small.Rows))
		case res.Spec.Treatment.Kind != estimate.TreatmentContinuous && arm < smallArmRows:
			which := "treated"
			if thin.Untreated < thin.Treated {
				which = "untreated"
			}
			if thin.Arm != "" {
				which = "of the arm " + quoted(thin.Arm)
				if thin.Untreated < thin.Treated {
					which = "of the comparison arm"
				}
			}
			add("In the group %s only %s rows are %s, so its effect is imprecise.", quoted(thin.Group), count(arm), which)
		}
		groups := len(res.Moderator.Levels)
		switch {
		case groups > 2 && res.HeterogeneityNotJudged != nil:
			add("With %d groups there are %d pairwise comparisons; some will look clear by chance, and with %d clusters there is no overall test to look at first.", groups, len(res.Differences), res.Model.Clusters)
		case groups > 2:
			add("With %d groups there are %d pairwise comparisons; some will look clear by chance. Look at the overall test first.", groups, len(res.Differences))
		}
	} else {
		var outside []string
		for _, e := range res.Effects {
			if e.Extrapolated {
				outside = append(outside, readable(e.Value))
			}
		}
		if outside != nil {
			add("The effect at %s %s is outside the observed range (%s to %s) and rests on the straight-line form of the model alone.", m, JoinAnd(outside), readable(res.Moderator.Min), readable(res.Moderator.Max))
		}
		switch l := res.Linearity; {
		case l != nil && l.NotJudged != nil:
			add("The model assumes the effect changes in a straight line with %s. With %d clusters that cannot be checked (the check weighs %d terms; %d clusters can carry at most %d), so if the true pattern is curved, effects between and beyond the probe values can be off. More clusters, or %s split into two groups, would allow a check.", m, l.NotJudged.Clusters, l.NotJudged.Terms, l.NotJudged.Clusters, l.NotJudged.MaxTerms, m)
		case l != nil && l.Contradicts:
			add("The effects within the thirds of %s depart from the straight line the model assumes, so effects read off the line, between and beyond the probe values, can be off; a moderator split into groups may describe the pattern better.", m)
		case l != nil && l.Wald != nil:
			add("The model assumes the effect changes in a straight line with %s. The effects estimated within each third of %s are consistent with that line (%s), though with few rows a check like this can miss a curve.", m, m, waldPWords(l.Wald))
		default:
			add("The model assumes the effect changes in a straight line with %s; if the true pattern is curved, effects between and beyond the probe values can be off.", m)
		}
	}
	for _, n := range res.Notes {
		if !strings.Contains(n, "outside the observed range") {
			out = append(out, n)
		}
	}
	return out
}

// cautionNotRandomized is the caution of a treatment not marked as
// randomly assigned (METHODS §9).
const cautionNotRandomized = "The treatment was not marked as randomly assigned, so these are associations, not effects: treated and untreated rows may differ in ways the controls do not capture."

// cautionModerator keeps the moderator from being read as a cause.
func cautionModerator(m string) string {
	return fmt.Sprintf("%s is not randomly assigned, even when the treatment is: a difference between its groups shows for whom the treatment did more, not that %s causes it.", capitalise(quoted(m)), quoted(m))
}

// cautionChosen is the caution of a moderator chosen after looking at the
// data, or among several tried; "" for one planned moderator.
func cautionChosen(run Run) string {
	switch {
	case run.tried() > 1:
		return fmt.Sprintf("%d moderators were examined; the more are tried, the likelier one looks real by chance. Rely on adjusted p-values and confirm in new data.", run.tried())
	case !run.Planned:
		return "The moderator was chosen after looking at the data; a difference found this way is a lead to confirm, not a finding."
	}
	return ""
}

// smallest returns the group with the smallest size (ties: the first).
func smallest(effects []estimate.GroupEffect, size func(estimate.GroupEffect) int) estimate.GroupEffect {
	s := effects[0]
	for _, e := range effects[1:] {
		if size(e) < size(s) {
			s = e
		}
	}
	return s
}

func quoted(s string) string { return fmt.Sprintf("%q", s) }

func pct(f float64) string { return readable(100*f) + "%" }
