package report

import (
	"fmt"

	"slopewise/internal/estimate"
)

// The words for designs other than a single trial (METHODS §10): the
// note's sentences that name the design and its assumption, and the JSON's
// design field. Kept apart from the note's other sentences so that they
// can move with the note's layout.

// designSentences name a before-and-after design and the assumption its
// figures rest on, every time, in words a manager reads; with unit
// effects, what they took out; with a unit column, how the rows of one
// unit were allowed for.
func (w *noteWriter) designSentences() {
	w.sentences = append(w.sentences, DesignWords(w.res)...)
}

// DesignWords are the sentences that name the result's design and its
// assumption; none for a single trial.
func DesignWords(res *estimate.Result) []string {
	d := res.Design
	if d == nil {
		return nil
	}
	var out []string
	say := func(format string, args ...any) { out = append(out, fmt.Sprintf(format, args...)) }
	if d.Kind == estimate.BeforeAfter {
		say("This is a before-and-after comparison (a difference in differences): each group's figure is how much more %s changed from before the start to after it (%s = %s) among the units in the programme than among the comparison units.",
			res.Spec.Outcome, d.Period, d.After)
		say("It is the programme's effect only if, without the programme, both sets of units' %s would have moved in parallel (common trends); with one period before the start, the data cannot check that, so it rests on what is known about how the units were chosen.", res.Spec.Outcome)
	}
	if d.UnitEffects {
		absorbed := "nothing else"
		if len(d.Absorbed) > 0 {
			absorbed = joinAnd(quotedAll(d.Absorbed))
		}
		say("Each of the %s units of %s was compared with itself (unit effects): its own level was taken out, and with it %s, which do not change within a unit and so are not estimated separately.", count(d.Units), quoted(d.Unit), absorbed)
	}
	if d.Unit != "" && res.Spec.Cluster == "" {
		say("The rows of one unit of %s were not allowed to be alike: with several rows a unit, standard errors that ignore it are usually too small (Bertrand, Duflo & Mullainathan 2004); choose cluster-robust errors by %s.", quoted(d.Unit), quoted(d.Unit))
	}
	return out
}

func quotedAll(xs []string) []string {
	out := make([]string, len(xs))
	for i, x := range xs {
		out[i] = quoted(x)
	}
	return out
}

// OutDesign is the JSON's account of a design other than a single trial.
type OutDesign struct {
	// Kind is "before_after" or "repeated_units".
	Kind   string `json:"kind"`
	Period string `json:"period,omitempty"`
	After  string `json:"after,omitempty"`
	Unit   string `json:"unit,omitempty"`
	Units  int    `json:"units,omitempty"`
	// UnitEffects says each unit's own level was taken out; Absorbed names
	// the terms that went with it.
	UnitEffects bool     `json:"unit_effects,omitempty"`
	Absorbed    []string `json:"absorbed,omitempty"`
	// Assumption states, in words, what the estimate rests on.
	Assumption string `json:"assumption,omitempty"`
	// Cells counts the rows used: comparison units before and after, the
	// programme's units before and after.
	Cells *OutCells `json:"cells,omitempty"`
}

// OutCells counts the rows of a before-and-after design.
type OutCells struct {
	ComparisonBefore int `json:"comparison_before"`
	ComparisonAfter  int `json:"comparison_after"`
	ProgrammeBefore  int `json:"programme_before"`
	ProgrammeAfter   int `json:"programme_after"`
}

// commonTrends is the assumption of a before-and-after design, for the
// JSON.
const commonTrends = "common trends: without the programme, the outcomes of the units in the programme and of the comparison units would have moved in parallel"

// outDesign fills the JSON's design; nil for a single trial, so that its
// JSON is as before.
func outDesign(res *estimate.Result) *OutDesign {
	d := res.Design
	if d == nil {
		return nil
	}
	o := &OutDesign{Kind: string(d.Kind), Period: d.Period, After: d.After, Unit: d.Unit, Units: d.Units,
		UnitEffects: d.UnitEffects, Absorbed: d.Absorbed}
	if d.Kind == estimate.BeforeAfter {
		o.Assumption = commonTrends
		o.Cells = &OutCells{ComparisonBefore: d.Cells[0], ComparisonAfter: d.Cells[1], ProgrammeBefore: d.Cells[2], ProgrammeAfter: d.Cells[3]}
	}
	return o
}

// DesignTitle says, for a terminal, how the effect was measured: "" for
// a single trial, or the before-and-after comparison.
func DesignTitle(res *estimate.Result) string {
	if res.Design == nil || res.Design.Kind != estimate.BeforeAfter {
		return ""
	}
	return fmt.Sprintf(" (difference in differences: after = %s = %s, against before)", res.Design.Period, res.Design.After)
}
