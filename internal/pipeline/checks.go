package pipeline

import (
	"fmt"
	"math"
	"sort"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// Severity says how much a check matters.
type Severity int

const (
	// Note is worth knowing; nothing is wrong.
	Note Severity = iota
	// Warning: the run works, but a result may mislead; the message says
	// what to do.
	Warning
	// Blocking: the run would fail; fix this first.
	Blocking
)

// Check is one finding about the chosen roles, in plain words.
type Check struct {
	Severity Severity
	Message  string
	// Cluster is a column the finding suggests as the cluster column,
	// for the window to offer with a button; empty for most checks. It
	// is never chosen without the person asking.
	Cluster string
	// NoContrast marks a group of the moderator where the treatment never
	// varies: the fix lies in the data (merge the group with another, or
	// leave it out) or in another moderator, which the window words as
	// what it offers.
	NoContrast bool
}

// Thresholds of the checks (rules of thumb; common practice unless named).
const (
	manyDistinct    = 12 // a "category" with more numeric values than this is likely a measurement
	fewDistinct     = 5  // a "number" with this many values or fewer may be groups
	smallGroup      = 30
	fewClusterLimit = 42 // Cameron & Miller (2015) §VI; the wild bootstrap's threshold
)

// Precheck looks at the table and the spec before a run and says, in plain
// words, what would stop it or could mislead: a moderator that looks like
// the other kind, too few clusters, small groups, groups without both arms,
// columns that do not vary, and a column whose values the moderator or the
// treatment belongs to (or that repeats units) while no cluster column,
// or another one, is chosen (Groupings). It never fits a model.
func Precheck(t *workbook.Table, s estimate.Spec) []Check {
	var out []Check
	add := func(sev Severity, format string, args ...any) {
		out = append(out, Check{Severity: sev, Message: fmt.Sprintf(format, args...)})
	}
	cols := map[string]*workbook.Column{}
	for _, name := range append([]string{s.Outcome, s.Treatment.Column, s.Period, s.Moderator.Column, s.Cluster, s.Unit, s.Weights}, s.Controls...) {
		if name == "" {
			continue
		}
		c := t.Column(name)
		if c == nil {
			add(Blocking, "There is no column %q in this sheet.", name)
			continue
		}
		cols[name] = c
	}
	for _, name := range specColumns(s) {
		if c := cols[name]; c != nil && c.Formulas.Missing > 0 {
			f := c.Formulas
			why := ""
			if f.Why != "" {
				why = " (" + f.Why + ")"
			}
			add(Blocking, "%d formula cell(s) of %q have no usable saved result, and Slopewise cannot calculate them%s. Open the workbook in a spreadsheet program and save it, which calculates every formula, then open it again; or choose another column.", f.Missing, name, why)
		}
	}
	if len(out) > 0 || s.Outcome == "" || s.Treatment.Column == "" || s.Moderator.Column == "" {
		if s.Outcome == "" || s.Treatment.Column == "" || s.Moderator.Column == "" {
			add(Blocking, "Choose an outcome, a treatment and a moderator.")
		}
		return out
	}
	// One column in two roles, and the other settings a fit refuses, in
	// the fit's own words, before any data are looked at.
	if err := s.Check(); err != nil {
		add(Blocking, "%s", err.Error())
		return out
	}
	d := EngineData(t)
	col := func(name string) *estimate.Column {
		for i := range d.Columns {
			if d.Columns[i].Name == name {
				return &d.Columns[i]
			}
		}
		return nil
	}
	chosen := map[string]bool{}
	for name := range cols {
		chosen[name] = true
	}
	usable := usableRows(d, chosen)
	n := 0
	for _, u := range usable {
		if u {
			n++
		}
	}
	if n == 0 {
		add(Blocking, "No row has a usable value in every chosen column; check the roles and the cells.")
		return out
	}
	if left := t.Len() - n; left > 0 {
		add(Note, "%d of %d rows have a missing or unusable value in a chosen column and will be left out; the results list each one.", left, t.Len())
	}

	outcome := col(s.Outcome)
	if outcome.Num == nil {
		add(Blocking, "The outcome %q holds text; choose a column of numbers.", s.Outcome)
	} else if distinctNum(outcome.Num, usable) < 2 {
		add(Blocking, "The outcome %q has the same value in every usable row.", s.Outcome)
	}

	treat := col(s.Treatment.Column)
	arm := treatmentArms(treat, s.Treatment, usable)
	if s.Treatment.Kind == estimate.TreatmentLabels && s.Treatment.Treated == "" {
		add(Blocking, "Say which value of %q means treated.", s.Treatment.Column)
	}

	if s.Treatment.Kind == estimate.TreatmentArms && s.Treatment.Control == "" {
		add(Blocking, "Say which value of %q is the comparison arm.", s.Treatment.Column)
	}
	var period []float64
	if s.Period != "" {
		period = checkPeriod(col(s.Period), s, usable, arm, add)
	}
	if s.Unit != "" {
		checkUnits(col(s.Unit), arm, usable, s, add)
	}

	mod := col(s.Moderator.Column)
	mc := cols[s.Moderator.Column]
	switch s.Moderator.Kind {
	case estimate.ModeratorContinuous:
		if mod.Num == nil {
			add(Blocking, "The moderator %q holds text, so it cannot be treated as a number; treat it as groups.", s.Moderator.Column)
			break
		}
		if k := distinctNum(mod.Num, usable); k <= fewDistinct {
			add(Warning, "The moderator %q takes only %d different values. Treating it as groups gives an effect for each value without assuming a straight line.", s.Moderator.Column, k)
		}
	default:
		groups := groupRows(mod, usable)
		if len(groups) > manyDistinct && mc.Kind == workbook.Number {
			add(Warning, "The moderator %q has %d different numbers. Treat it as a number (one effect that changes along it) rather than %d separate groups?", s.Moderator.Column, len(groups), len(groups))
		}
		if s.Moderator.Kind == estimate.ModeratorBinary && len(groups) > 2 {
			add(Blocking, "The moderator %q was chosen as two groups but has %d; treat it as groups instead.", s.Moderator.Column, len(groups))
		}
		if len(groups) < 2 {
			add(Blocking, "The moderator %q has only one group among the usable rows.", s.Moderator.Column)
		}
		noContrast := func(format string, args ...any) {
			out = append(out, Check{Severity: Blocking, Message: fmt.Sprintf(format, args...), NoContrast: true})
		}
		checkGroups(groups, arm, s, add, noContrast)
		if period != nil {
			checkPeriodCells(groups, arm, period, s, add)
		}
	}

	if s.Cluster != "" {
		g := len(groupRows(col(s.Cluster), usable))
		switch {
		case g < 2:
			add(Blocking, "Every usable row is in the same cluster of %q; cluster-robust errors need several. Remove the cluster column.", s.Cluster)
		case g < fewClusterLimit:
			add(Warning, "The cluster column %q has only %d clusters. With fewer than about 40, cluster-robust errors are too optimistic: keep the wild cluster bootstrap on (it is on by default), and treat borderline results with care.", s.Cluster, g)
		}
	}
	if column, words := report.GroupingWarning(s, groupingsOf(t, d, s)); words != "" {
		out = append(out, Check{Severity: Warning, Cluster: column,
			Message: fmt.Sprintf("%s Choose %q as the cluster column to allow for it.", words, column)})
	}
	return out
}

// usableRows marks the rows with a usable value in every chosen column.
func usableRows(d *estimate.Data, chosen map[string]bool) []bool {
	n := 0
	if len(d.Columns) > 0 {
		n = d.Columns[0].Len()
	}
	ok := make([]bool, n)
	for i := range ok {
		ok[i] = true
	}
	for i := range d.Columns {
		c := &d.Columns[i]
		if !chosen[c.Name] {
			continue
		}
		for r := range ok {
			if !hasValue(c, r) {
				ok[r] = false
			}
		}
	}
	return ok
}

// hasValue is true when row r of c holds a usable value.
func hasValue(c *estimate.Column, r int) bool {
	if c.Num != nil {
		return !math.IsNaN(c.Num[r]) && !math.IsInf(c.Num[r], 0)
	}
	return c.Text[r] != ""
}

func distinctNum(x []float64, usable []bool) int {
	seen := map[float64]bool{}
	for i, v := range x {
		if usable[i] {
			seen[v] = true
		}
	}
	return len(seen)
}

// groupRows returns the usable rows of each value of a column.
func groupRows(c *estimate.Column, usable []bool) map[string][]int {
	out := map[string][]int{}
	for i, u := range usable {
		if !u {
			continue
		}
		key := ""
		if c.Num != nil {
			key = fmt.Sprint(c.Num[i])
		} else {
			key = c.Text[i]
		}
		out[key] = append(out[key], i)
	}
	return out
}

// treatmentArms returns, per row, 1 for treated, 0 for untreated and −1
// when unknown; for a continuous treatment, the amount.
func treatmentArms(c *estimate.Column, t estimate.Treatment, usable []bool) []float64 {
	arm := make([]float64, len(usable))
	for i := range arm {
		switch {
		case !usable[i]:
			arm[i] = -1
		case t.Kind == estimate.TreatmentLabels:
			if cellKey(c, i) == t.Treated {
				arm[i] = 1
			}
		case t.Kind == estimate.TreatmentArms:
			// 0 for the comparison arm, 1 for any other: what the checks
			// of variation need.
			if cellKey(c, i) != t.Control {
				arm[i] = 1
			}
		case c.Num != nil:
			arm[i] = c.Num[i]
		default:
			arm[i] = -1
		}
	}
	return arm
}

// checkGroups reports small groups and groups where the treatment does not
// vary.
func checkGroups(groups map[string][]int, arm []float64, s estimate.Spec, add func(Severity, string, ...any), noContrast func(string, ...any)) {
	names := make([]string, 0, len(groups))
	for g := range groups {
		names = append(names, g)
	}
	sort.Strings(names)
	smallest, smallestN := "", math.MaxInt
	for _, g := range names {
		rows := groups[g]
		if len(rows) < smallestN {
			smallest, smallestN = g, len(rows)
		}
		seen := map[float64]bool{}
		for _, r := range rows {
			seen[arm[r]] = true
		}
		if len(seen) < 2 {
			noContrast("In the group %q of %q the treatment never varies (%d rows, all %s), so its effect there cannot be estimated. Merge the group with another or leave it out.",
				estimate.ShortLabel(g), s.Moderator.Column, len(rows), armWords(arm[rows[0]], s.Treatment))
		}
	}
	if smallestN < smallGroup {
		add(Warning, "The smallest group, %q of %q, has only %d rows; its effect will be imprecise.", smallest, s.Moderator.Column, smallestN)
	}
}

func armWords(v float64, t estimate.Treatment) string {
	switch {
	case t.Kind == estimate.TreatmentContinuous:
		return fmt.Sprintf("at %g", v)
	case t.Kind == estimate.TreatmentArms && v == 1:
		return "in a programme arm"
	case t.Kind == estimate.TreatmentArms:
		return fmt.Sprintf("in the comparison arm %q", t.Control)
	case v == 1:
		return "treated"
	}
	return "untreated"
}

// cellKey is row i of c as text: the text, or the number written as Go
// writes it.
func cellKey(c *estimate.Column, i int) string {
	if c.Text != nil {
		return c.Text[i]
	}
	return fmt.Sprint(c.Num[i])
}

// checkPeriod reads a before-and-after design's period column (1 after the
// start) and says, before running, what would stop it: a column that is not
// 0/1 without a value named as after, the value named absent, only one
// period among the usable rows. It returns nil when the period cannot be
// read.
func checkPeriod(c *estimate.Column, s estimate.Spec, usable []bool, arm []float64, add func(Severity, string, ...any)) []float64 {
	p := make([]float64, len(usable))
	seen := map[string]bool{}
	var values []string
	for i, u := range usable {
		if !u {
			continue
		}
		k := cellKey(c, i)
		if !seen[k] {
			seen[k] = true
			values = append(values, k)
		}
		switch {
		case s.After != "" && k == s.After:
			p[i] = 1
		case s.After == "" && c.Num != nil && (c.Num[i] == 0 || c.Num[i] == 1):
			p[i] = c.Num[i]
		case s.After == "":
			add(Blocking, "The period %q holds values other than 0 and 1 (%s); say which value means after the programme started.", s.Period, estimate.ShortLabel(k))
			return nil
		}
	}
	sort.Strings(values)
	if s.After != "" && !seen[s.After] {
		add(Blocking, "The value %q, chosen as after, does not appear in the period %q among the usable rows.", estimate.ShortLabel(s.After), s.Period)
		return nil
	}
	if len(values) < 2 {
		add(Blocking, "Every usable row is from one period of %q, so there is nothing to compare before and after.", s.Period)
		return nil
	}
	return p
}

// checkPeriodCells says which groups of the moderator lack rows of one
// set of units before or after the start.
func checkPeriodCells(groups map[string][]int, arm, period []float64, s estimate.Spec, add func(Severity, string, ...any)) {
	names := make([]string, 0, len(groups))
	for g := range groups {
		names = append(names, g)
	}
	sort.Strings(names)
	for _, g := range names {
		var cells [4]int
		for _, r := range groups[g] {
			if arm[r] == 0 || arm[r] == 1 {
				cells[2*int(arm[r])+int(period[r])]++
			}
		}
		for c, words := range []string{"the comparison units before the start", "the comparison units after the start",
			"the programme's units before the start", "the programme's units after the start"} {
			if cells[c] == 0 {
				add(Blocking, "The group %q of %q has no rows of %s, so its difference in differences cannot be estimated. Merge the group with another or leave it out.", estimate.ShortLabel(g), s.Moderator.Column, words)
			}
		}
	}
}

// checkUnits warns of units found in both the programme's group and the
// comparison group: a before-and-after comparison, and unit effects,
// take each unit to stay in one.
func checkUnits(c *estimate.Column, arm []float64, usable []bool, s estimate.Spec, add func(Severity, string, ...any)) {
	first := map[string]float64{}
	var both []string
	for i, u := range usable {
		if !u || arm[i] < 0 {
			continue
		}
		k := cellKey(c, i)
		a, ok := first[k]
		switch {
		case !ok:
			first[k] = arm[i]
		case a != arm[i] && a != -2:
			both = append(both, k)
			first[k] = -2
		}
	}
	if both != nil {
		add(Warning, "%d unit(s) of %q are in both the programme's group and the comparison group (the first: %q); a before-and-after comparison takes each unit to stay in one. Check the treatment column, or the unit column.", len(both), s.Unit, estimate.ShortLabel(both[0]))
	}
}
