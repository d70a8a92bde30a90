package report

import (
	"fmt"
	"math"
	"strings"

	"slopewise/internal/estimate"
)

// The words for designs other than a single trial (METHODS §10, §11): the
// note's sentences that name the design and its assumption, those of a
// treatment with several arms, and the JSON's design and arms fields. Kept
// apart from the note's other sentences so that they can move with the
// note's layout.

// designSentences name a before-and-after design and the assumption its
// figures rest on, every time, in words a manager reads; with unit
// effects, what they took out; with a unit column, how the rows of one
// unit were allowed for.
func (w *noteWriter) designSentences() {
	for _, s := range DesignWords(w.res) {
		w.say("%s", s)
	}
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
		after := fmt.Sprintf("%s = %s", d.Period, d.After)
		if res.Leads != nil {
			after = fmt.Sprintf("%s %s on, against %s %s", d.Period, d.After, d.Period, res.Leads.Reference)
		}
		say("This is a before-and-after comparison (a difference in differences): each group's figure is how much more %s changed from before the start to after it (%s) among the units in the programme than among the comparison units.",
			res.Spec.Outcome, after)
		assumption := fmt.Sprintf("It is the programme's effect only if, without the programme, both sets of units' %s would have moved in parallel (common trends)", res.Spec.Outcome)
		if res.Leads == nil || len(res.Leads.Leads) == 0 {
			say("%s; with one period before the start, the data cannot check that, so it rests on what is known about how the units were chosen.", assumption)
		} else {
			say("%s.", assumption)
			out = append(out, leadsWords(res)...)
		}
	}
	if d.UnitEffects {
		absorbed := "nothing else"
		if len(d.Absorbed) > 0 {
			absorbed = JoinAnd(QuotedAll(d.Absorbed))
		}
		say("Each of the %s units of %s was compared with itself (unit effects): its own level was taken out, and with it %s, which do not change within a unit and so are not estimated separately.", count(d.Units), quoted(d.Unit), absorbed)
	}
	if d.Unit != "" && res.Spec.Cluster == "" {
		say("The rows of one unit of %s were not allowed to be alike: with several rows a unit, standard errors that ignore it are usually too small (Bertrand, Duflo & Mullainathan 2004); choose cluster-robust errors by %s.", quoted(d.Unit), quoted(d.Unit))
	}
	return out
}

// leadsWords say what the periods before the start show of common
// trends: each lead, and whether their joint test contradicts them.
func leadsWords(res *estimate.Result) []string {
	lc := res.Leads
	u := unitsFor(res.Model.OutcomeBinary)
	var parts []string
	for _, l := range lc.Leads {
		part := fmt.Sprintf("%s in %s %s", u.amount(l.Estimate), res.Spec.Period, l.Period)
		if l.Arm != "" {
			part += fmt.Sprintf(" for %q", l.Arm)
		}
		parts = append(parts, part)
	}
	out := []string{fmt.Sprintf("Before the start, the gap between the programme's units and the comparison units, measured against their gap in %s %s (the last period before the start), was %s (the leads).",
		res.Spec.Period, lc.Reference, JoinAnd(parts))}
	switch t := lc.Test; {
	case t != nil:
		p, boot := heterogeneityP(t)
		ptext := pText(p)
		if boot {
			ptext = "bootstrap " + ptext
		}
		if lc.Contradicts {
			out = append(out, fmt.Sprintf("Testing that all of them are zero gives F = %s (%s): the data before the start contradict common trends, so the figures above may mix the programme's effect with differences in how the units were already changing; read them with great care.", readable(t.F), ptext))
		} else {
			out = append(out, fmt.Sprintf("Testing that all of them are zero gives F = %s (%s): the data before the start do not contradict common trends, though they cannot prove that the trends would have stayed parallel after it.", readable(t.F), ptext))
		}
	case lc.NotJudged != nil:
		out = append(out, fmt.Sprintf("Whether they are all zero %s.", notJudgedWords(lc.NotJudged, res.Spec.Cluster)))
	}
	return out
}

// QuotedAll quotes each text, as the sentences quote names.
func QuotedAll(xs []string) []string {
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
	// Leads, with more than one period before the start: the check of
	// common trends.
	Leads *OutLeads `json:"leads,omitempty"`
}

// OutLeads is the check of common trends in the periods before the start.
type OutLeads struct {
	// Reference is the last period before the start.
	Reference string     `json:"reference"`
	Leads     []OutGroup `json:"leads"`
	// Test is the joint test that every lead is zero; null when it cannot
	// be computed or judged.
	Test        *OutWald `json:"test"`
	Contradicts bool     `json:"contradicts"`
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
	if lc := res.Leads; lc != nil {
		ol := &OutLeads{Reference: lc.Reference, Leads: []OutGroup{}, Contradicts: lc.Contradicts}
		for _, l := range lc.Leads {
			ol.Leads = append(ol.Leads, OutGroup{Label: l.Period, Arm: l.Arm, Estimate: l.Estimate, SE: l.SE, CILow: l.CILow, CIHigh: l.CIHigh, P: l.P})
		}
		if t := lc.Test; t != nil {
			ol.Test = &OutWald{F: t.F, DF1: t.DF1, DF2: float64(t.DF2), P: t.P, PBoot: t.PBoot}
		}
		o.Leads = ol
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

// OutArm is one arm's test that its effect is the same in every group.
type OutArm struct {
	Arm  string `json:"arm"`
	Rows int    `json:"n"`
	// Heterogeneity is null when the test cannot be computed or judged.
	Heterogeneity *OutWald `json:"heterogeneity"`
	// HolmP is its p-value (the bootstrap's when it ran) adjusted by Holm
	// over the arms.
	HolmP float64 `json:"holm_p"`
}

func outArms(res *estimate.Result) []OutArm {
	var out []OutArm
	for _, a := range res.Arms {
		o := OutArm{Arm: a.Arm, Rows: a.Rows, HolmP: a.HolmP}
		if h := a.Heterogeneity; h != nil {
			o.Heterogeneity = &OutWald{F: h.F, DF1: h.DF1, DF2: float64(h.DF2), P: h.P, PBoot: h.PBoot}
		}
		out = append(out, o)
	}
	return out
}

// armPrefix names an arm before a group or a comparison in a table or a
// chart: "coaching: ", or "" without arms.
func armPrefix(arm string) string {
	if arm == "" {
		return ""
	}
	return arm + ": "
}

// armSentences cover a treatment of several arms (METHODS §11): each arm
// against the comparison arm, its effect in every group, whether it is the
// same in all of them (with Holm's adjustment over the arms) and the
// smallest difference between groups it could detect; then the joint test.
func (w *noteWriter) armSentences() {
	res := w.res
	t := res.Spec.Treatment
	m := res.Moderator.Column
	alpha := res.Model.Alpha
	w.say("The treatment %q has %d arms besides the comparison arm %q; each is compared with it in every group of %s.", t.Column, len(res.Arms), t.Control, m)
	for _, a := range res.Arms {
		var parts []string
		var mdd float64
		for _, e := range res.Effects {
			if e.Arm == a.Arm {
				parts = append(parts, fmt.Sprintf("%s in %s %q", w.effectText(e), m, e.Group))
			}
		}
		for _, d := range res.Differences {
			if d.Arm == a.Arm {
				mdd = math.Max(mdd, d.MDD)
			}
		}
		subject := fmt.Sprintf("the difference in %s associated with %q against %q", res.Spec.Outcome, a.Arm, t.Control)
		if w.run.Randomized {
			subject = fmt.Sprintf("the estimated effect of %q against %q on %s", a.Arm, t.Control, res.Spec.Outcome)
		}
		w.say("%s was %s.", capitalise(subject), JoinAnd(parts))
		switch h := a.Heterogeneity; {
		case h != nil:
			p, boot := heterogeneityP(h)
			verdict := "the data cannot tell whether it differs between them"
			if a.HolmP < alpha {
				verdict = "the data show that it differs between at least some of them"
			}
			w.say("Testing whether it is the same in all %d groups gives F = %s (%s; %s after Holm's adjustment over the %d arms): %s.",
				len(parts), readable(h.F), w.pWords(p, boot), pText(a.HolmP), len(res.Arms), verdict)
		case a.HeterogeneityNotJudged != nil:
			w.say("Whether it is the same in all %d groups %s.", len(parts), notJudgedWords(a.HeterogeneityNotJudged, res.Spec.Cluster))
		}
		w.say("A difference between groups in this arm's %s would be detected reliably (%s%% power) only if it were about %s or more.", w.what(), strconv100(res.Model.Power), w.u.amount(mdd))
	}
	if h := res.Heterogeneity; h != nil {
		p, boot := heterogeneityP(h)
		w.say("Testing whether any arm's %s differs between groups at all gives F = %s (%s).", w.what(), readable(h.F), w.pWords(p, boot))
	}
	w.say("%s", seWords(res)+".")
}

// designPairs are the lines of "What was asked" that name the design:
// the period and its value after the start, the unit, unit effects.
func designPairs(res *estimate.Result) [][]Cell {
	d := res.Design
	if d == nil {
		return nil
	}
	var rows [][]Cell
	if d.Kind == estimate.BeforeAfter {
		rows = append(rows, pair("Before and after", fmt.Sprintf("%s (after the start: %s)", d.Period, d.After)))
	}
	if d.Unit != "" {
		rows = append(rows, pair("Unit measured each time", fmt.Sprintf("%s (%s units)", d.Unit, count(d.Units))))
	}
	if d.UnitEffects {
		rows = append(rows, pair("Unit effects", "each unit compared with itself; not estimated separately: "+JoinAnd(d.Absorbed)))
	}
	return rows
}

// designModelWords writes the model of a before-and-after design or of
// several arms in words; "" for a single trial.
func designModelWords(res *estimate.Result) string {
	s := res.Spec
	if res.Design == nil && res.Arms == nil {
		return ""
	}
	t := treatmentName(s.Treatment)
	if res.Arms != nil {
		t = "each arm of " + s.Treatment.Column
	}
	m := s.Moderator.Column
	terms := []string{"a baseline level", t, m, t + " × " + m}
	if res.Design != nil && res.Design.Kind == estimate.BeforeAfter {
		p := s.Period
		terms = []string{"a baseline level", t, p, t + " × " + p, m, t + " × " + m, p + " × " + m, t + " × " + p + " × " + m}
		if res.Leads != nil && len(res.Leads.Leads) > 0 {
			terms = append(terms, t+" × each earlier "+p)
		}
	}
	if res.Design != nil && res.Design.UnitEffects {
		terms[0] = "each unit's own level"
	}
	terms = append(terms, s.Controls...)
	return fmt.Sprintf("%s = %s + error", s.Outcome, strings.Join(terms, " + "))
}

// leads adds the check of common trends: each lead with its interval, and
// their joint test.
func (b *sheetBuilder) leads() {
	lc := b.res.Leads
	if lc == nil || len(lc.Leads) == 0 {
		return
	}
	res := b.res
	ci := level(res.Model.Alpha) + " CI"
	var vals []float64
	for _, l := range lc.Leads {
		vals = append(vals, l.Estimate, l.SE, l.CILow, l.CIHigh)
	}
	f := numberFormat(vals)
	rows := [][]Cell{{HeadingCell("Period before the start"), HeadingCell("Gap against " + lc.Reference), HeadingCell("Std. error"),
		HeadingCell(ci + " low"), HeadingCell(ci + " high"), HeadingCell("p-value")}}
	for _, l := range lc.Leads {
		rows = append(rows, []Cell{TextCell(armPrefix(l.Arm) + l.Period), NumberCell(l.Estimate, f), NumberCell(l.SE, f),
			NumberCell(l.CILow, f), NumberCell(l.CIHigh, f), PValueCell(l.P)})
	}
	for _, sentence := range leadsWords(res)[1:] {
		rows = append(rows, []Cell{ParagraphCell(sentence, tableWidth)})
	}
	b.add("leads", "Before the start: did the two sets of units move in parallel?", rows)
}
