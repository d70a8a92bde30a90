package estimate

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"
)

// DroppedRow is a row left out of the fit and why.
type DroppedRow struct {
	Row    int    `json:"row"`
	Column string `json:"column"`
	Reason string `json:"reason"`
}

// DropCount counts the dropped rows that share a reason.
type DropCount struct {
	Column string `json:"column"`
	Reason string `json:"reason"`
	Rows   int    `json:"rows"`
}

// Term roles in the design matrix.
const (
	roleIntercept   = "intercept"
	roleTreatment   = "treatment"
	roleModerator   = "moderator"
	roleInteraction = "interaction"
	roleControl     = "control"
	// A before-and-after design (METHODS §10) adds the treated group's and
	// the period's own terms and their products with the moderator; its
	// roleTreatment term is the group × period product, whose coefficient
	// is the difference in differences, and its roleInteraction terms are
	// the triple products.
	roleGroup           = "group"
	rolePeriod          = "period"
	roleGroupModerator  = "group × moderator"
	rolePeriodModerator = "period × moderator"
)

// design is the model matrix and everything needed to read the fit back.
type design struct {
	n, k  int
	names []string
	roles []string
	x     []float64 // unweighted, n×k row-major
	y     []float64
	// yRaw is the outcome before the within transformation (unit
	// effects), for R² and the check of a 0/1 outcome; nil without.
	yRaw []float64
	w    []float64 // nil without weights

	rowsRead int
	used     []int // data row index of each used row
	dropped  []DroppedRow
	counts   []DropCount

	treat []float64 // T of each used row
	// A treatment of several arms (METHODS §11): each used row's arm, 0
	// for the comparison arm, j for armLabels[j−1]; and each arm's
	// columns.
	arm       []int
	armLabels []string
	arms      []armTerms
	// period is P of each used row (1 after the start), nil unless the
	// design is a difference in differences; gCol and pCol are then the
	// columns of T and P, and tCol that of T·P.
	period     []float64
	gCol, pCol int
	// With more than two periods (leads.go): each used row's period,
	// the periods in level order, the last one before the start (the
	// reference), and the leads' columns and periods.
	periodLevel  []int
	periodLevels []string
	refPeriod    int
	leadCols     []int
	leadLevels   []int
	leadArms     []int // with several arms: the arm of each lead

	// Binary or categorical moderator.
	levels   []string
	ref      int
	modLevel []int // level of each used row
	// Continuous moderator.
	modValue []float64
	centre   float64

	tCol  int
	mCols []int // by level (−1 for the reference) or the single column
	iCols []int

	cluster       []int
	clusterLabels []string

	// unit numbers each used row's unit when the spec names one; with
	// unit effects, within holds the unit means the columns were demeaned
	// by (within.go) and absorbed the names of the terms that dropped out.
	unit       []int
	unitLabels []string
	within     *within
	absorbed   []string

	// effectA and diffA are the combinations a of the coefficients that
	// give each effect and difference of the result, in its order.
	effectA, diffA [][]float64
	// binned is the linearity check's binned model (weighted), kept for
	// the bootstrap of its Wald test; nil when there is no test.
	binned *lsFit

	// facts, when set, were gathered by a streamed fit, which keeps no rows.
	facts *rowFacts
	// hash, when set, is computing the rowHash (startHash).
	hash *hashJob
}

// roleColumn pairs a column with the words used for its role in messages.
type roleColumn struct {
	col     *Column
	role    string
	numeric bool
}

// fine reports whether row i can be used for this role, as problem
// does, without wording why not: for the rows of the streamed fit's later
// passes, whose reasons the survey has already taken.
func (rc roleColumn) fine(i int) bool {
	c := rc.col
	if !c.IsNumeric() {
		return c.Text[i] != ""
	}
	v := c.Num[i]
	return !math.IsNaN(v) && !math.IsInf(v, 0) && (rc.role != "weight" || v > 0)
}

// maxMagnitude bounds the values a fit takes: squares and sums of
// squares of a million values up to 1e100 stay far from float64's
// largest number (about 1.8e308), while values near 1e300 overflow to
// infinity and leave every interval and test undefined.
const maxMagnitude = 1e100

// magnitude refuses a numeric column whose used values pass
// maxMagnitude, before anything is computed with them.
func (rc roleColumn) magnitude(d *Data, used []int) error {
	c := rc.col
	if !c.IsNumeric() {
		return nil
	}
	for _, i := range used {
		if v := c.Num[i]; math.Abs(v) > maxMagnitude {
			return fail(ErrValues, c.Name, fmt.Sprintf("The %s %q reaches %s (row %d), too large a number to compute with. Rescale the column (divide it by a power of ten, or change its unit) and run again.", rc.role, c.Name, formatNumber(v), d.label(i)))
		}
	}
	return nil
}

// problem says why row i cannot be used for this role, or "" if it can.
func (rc roleColumn) problem(i int) (reason, kind string) {
	c := rc.col
	missing := (!c.IsNumeric() && c.Text[i] == "") || (c.IsNumeric() && math.IsNaN(c.Num[i]))
	if why := c.why(i); missing && why != "" {
		return fmt.Sprintf("%s in the %s (%q)", why, rc.role, c.Name), "why:" + why
	}
	if !c.IsNumeric() {
		if c.Text[i] == "" {
			return fmt.Sprintf("missing %s (%q)", rc.role, c.Name), "missing"
		}
		return "", ""
	}
	v := c.Num[i]
	switch {
	case math.IsNaN(v) && c.cellText(i) != "":
		return fmt.Sprintf("text %q in the %s (%q), which needs a number", ShortLabel(c.cellText(i)), rc.role, c.Name), "text"
	case math.IsNaN(v):
		return fmt.Sprintf("missing %s (%q)", rc.role, c.Name), "missing"
	case math.IsInf(v, 0):
		return fmt.Sprintf("an infinite value in the %s (%q)", rc.role, c.Name), "infinite"
	case rc.role == "weight" && v <= 0:
		return fmt.Sprintf("a weight of 0 or less (%q is %s)", c.Name, formatNumber(v)), "weight"
	}
	return "", ""
}

// countReason is the reason of a kind, without the cell's own value.
func countReason(rc roleColumn, kind string) string {
	if why, ok := strings.CutPrefix(kind, "why:"); ok {
		return fmt.Sprintf("%s in the %s (%q)", why, rc.role, rc.col.Name)
	}
	switch kind {
	case "text":
		return fmt.Sprintf("text in the %s (%q), which needs a number", rc.role, rc.col.Name)
	case "infinite":
		return fmt.Sprintf("an infinite value in the %s (%q)", rc.role, rc.col.Name)
	case "weight":
		return fmt.Sprintf("a weight of 0 or less (%q)", rc.col.Name)
	}
	return fmt.Sprintf("missing %s (%q)", rc.role, rc.col.Name)
}

// buildDesign turns the data and a spec (defaults filled) into the model
// matrix, leaving out rows with a missing or unusable value in any column
// the model uses (listwise deletion), each with its reason.
func buildDesign(d *Data, s Spec) (*design, error) {
	n, err := d.rows()
	if err != nil {
		return nil, err
	}
	get := func(name, role string, numeric bool) (roleColumn, error) {
		c, err := d.column(name, role)
		if err != nil {
			return roleColumn{}, err
		}
		if numeric && !c.IsNumeric() {
			return roleColumn{}, fail(ErrSpec, name, fmt.Sprintf("The %s column %q holds text, not numbers. %s", role, name, numericAdvice(role)))
		}
		return roleColumn{col: c, role: role, numeric: numeric}, nil
	}
	outcome, err := get(s.Outcome, "outcome", true)
	if err != nil {
		return nil, err
	}
	treat, err := get(s.Treatment.Column, "treatment", !s.Treatment.labelled())
	if err != nil {
		return nil, err
	}
	checks := []roleColumn{outcome, treat}
	var period roleColumn
	if s.DiD() {
		if period, err = get(s.Period, "period", s.After == ""); err != nil {
			return nil, err
		}
		checks = append(checks, period)
	}
	mod, err := get(s.Moderator.Column, "moderator", s.Moderator.Kind == ModeratorContinuous)
	if err != nil {
		return nil, err
	}
	checks = append(checks, mod)
	var controls []roleColumn
	for _, name := range s.Controls {
		rc, err := get(name, "control", false)
		if err != nil {
			return nil, err
		}
		controls = append(controls, rc)
		checks = append(checks, rc)
	}
	var cluster roleColumn
	if s.Cluster != "" {
		if cluster, err = get(s.Cluster, "cluster", false); err != nil {
			return nil, err
		}
		checks = append(checks, cluster)
	}
	var unit roleColumn
	if s.Unit != "" {
		if unit, err = get(s.Unit, "unit", false); err != nil {
			return nil, err
		}
		if s.Unit != s.Cluster {
			checks = append(checks, unit)
		}
	}
	var weight roleColumn
	if s.Weights != "" {
		if weight, err = get(s.Weights, "weight", true); err != nil {
			return nil, err
		}
		checks = append(checks, weight)
	}

	ds := &design{rowsRead: n, used: make([]int, 0, n)}
	// The rows are checked in blocks in parallel, each block listing its
	// dropped rows; the lists are then read in row order.
	type drop struct {
		row          int
		at           roleColumn
		reason, kind string
	}
	drops := make([][]drop, numBlocks(n, blockRows))
	forRows(n, blockRows, func(b, from, to int) {
		for i := from; i < to; i++ {
			for _, rc := range checks {
				if reason, kind := rc.problem(i); reason != "" {
					drops[b] = append(drops[b], drop{i, rc, reason, kind})
					break
				}
			}
		}
	})
	countAt := map[[2]string]int{}
	for b, list := range drops {
		next := b * blockRows
		for _, dr := range list {
			for ; next < dr.row; next++ {
				ds.used = append(ds.used, next)
			}
			next = dr.row + 1
			at := dr.at
			ds.dropped = append(ds.dropped, DroppedRow{Row: d.label(dr.row), Column: at.col.Name, Reason: dr.reason})
			key := [2]string{at.col.Name, dr.kind}
			if j, ok := countAt[key]; ok {
				ds.counts[j].Rows++
			} else {
				countAt[key] = len(ds.counts)
				ds.counts = append(ds.counts, DropCount{Column: at.col.Name, Reason: countReason(at, dr.kind), Rows: 1})
			}
		}
		for ; next < min(n, (b+1)*blockRows); next++ {
			ds.used = append(ds.used, next)
		}
	}
	if len(ds.used) == 0 {
		return nil, noRowsError(n, ds.counts)
	}
	ds.n = len(ds.used)
	for _, rc := range checks {
		if err := rc.magnitude(d, ds.used); err != nil {
			return nil, err
		}
	}

	if err := ds.readTreatment(d, s, treat.col); err != nil {
		return nil, err
	}
	if s.DiD() {
		if err := ds.readPeriod(d, s, period.col); err != nil {
			return nil, err
		}
	}
	if err := ds.readModerator(d, s, mod.col); err != nil {
		return nil, err
	}
	ds.y = make([]float64, ds.n)
	for r, i := range ds.used {
		ds.y[r] = outcome.col.Num[i]
	}
	if s.Weights != "" {
		ds.w = make([]float64, ds.n)
		for r, i := range ds.used {
			ds.w[r] = weight.col.Num[i]
		}
	}
	if s.Cluster != "" {
		ds.cluster, ds.clusterLabels = ds.numberKeys(cluster.col)
	}
	if s.Unit != "" {
		ds.unit, ds.unitLabels = ds.numberKeys(unit.col)
	}
	ds.assemble(s, controls)
	return ds, nil
}

func numericAdvice(role string) string {
	switch role {
	case "treatment":
		return "If it holds two labels, choose the kind \"labels\" and say which label means treated."
	case "moderator":
		return "If it holds groups, choose the kind \"categorical\"."
	}
	return "Pick a column of numbers, or fix the cells that hold text."
}

func noRowsError(n int, counts []DropCount) *Error {
	var b strings.Builder
	fmt.Fprintf(&b, "None of the %d rows can be used:", n)
	for _, c := range counts {
		fmt.Fprintf(&b, " %d with %s;", c.Rows, c.Reason)
	}
	msg := strings.TrimSuffix(b.String(), ";") + ". Check that the right columns are chosen and that the cells hold values."
	col := ""
	if len(counts) > 0 {
		col = counts[0].Column
	}
	return fail(ErrNoRows, col, msg)
}

// readTreatment fills ds.treat, checking the values the kind allows.
func (ds *design) readTreatment(d *Data, s Spec, c *Column) error {
	ds.treat = make([]float64, ds.n)
	switch s.Treatment.Kind {
	case TreatmentContinuous:
		for r, i := range ds.used {
			ds.treat[r] = c.Num[i]
		}
	case TreatmentBinary:
		var bad []int
		var first float64
		for r, i := range ds.used {
			v := c.Num[i]
			if v != 0 && v != 1 {
				if bad == nil {
					first = v
				}
				bad = append(bad, d.label(i))
			}
			ds.treat[r] = v
		}
		if bad != nil {
			return fail(ErrValues, c.Name, fmt.Sprintf("The treatment column %q should hold only 0 (untreated) and 1 (treated), but row %d holds %s (%d rows in all). If it is a dose or amount, choose the kind \"continuous\"; otherwise correct those cells.", c.Name, bad[0], formatNumber(first), len(bad)), bad...)
		}
	case TreatmentArms:
		return ds.readArms(d, s, c)
	case TreatmentLabels:
		treated := s.Treatment.Treated
		var err error
		ds.treat, err = ds.twoLabels(c, func(labels []string) (string, bool) {
			return treated, slices.Contains(labels, treated)
		}, func(labels []string) string {
			return fmt.Sprintf("The label %q, chosen as treated, does not appear in column %q among the rows used; its labels are %s.", treated, c.Name, quoteList(labels))
		}, func(labels []string) string {
			return fmt.Sprintf("The treatment column %q has %d different labels (%s); it needs exactly two, one meaning treated. Correct the cells or recode the column.", c.Name, len(labels), quoteList(labels))
		})
		return err
	}
	return nil
}

// twoLabels reads a column of two labels as 0/1: 1 where a row holds the
// label find picks among the column's labels. absent words the refusal
// when find picks none, notTwo when there are not two labels.
func (ds *design) twoLabels(c *Column, find func(labels []string) (string, bool), absent, notTwo func(labels []string) string) ([]float64, error) {
	seen := map[string]int{}
	for _, i := range ds.used {
		seen[c.key(i)]++
	}
	labels := sortedLevels(seen)
	one, ok := find(labels)
	if !ok {
		return nil, fail(ErrValues, c.Name, absent(labels))
	}
	if len(labels) != 2 {
		return nil, fail(ErrValues, c.Name, notTwo(labels))
	}
	v := make([]float64, ds.n)
	for r, i := range ds.used {
		if c.key(i) == one {
			v[r] = 1
		}
	}
	return v, nil
}

// readModerator fills the moderator's levels or values.
func (ds *design) readModerator(d *Data, s Spec, c *Column) error {
	m := s.Moderator
	if m.Kind == ModeratorContinuous {
		ds.modValue = make([]float64, ds.n)
		for r, i := range ds.used {
			ds.modValue[r] = c.Num[i]
		}
		if m.Centre != nil {
			ds.centre = *m.Centre
		}
		return nil
	}
	// Counted in blocks in parallel; counts do not depend on the order in
	// which the blocks are added.
	parts := make([]map[string]int, numBlocks(ds.n, blockRows))
	forRows(ds.n, blockRows, func(b, from, to int) {
		m := map[string]int{}
		for _, i := range ds.used[from:to] {
			m[c.key(i)]++
		}
		parts[b] = m
	})
	count := map[string]int{}
	for _, m := range parts {
		for l, v := range m {
			count[l] += v
		}
	}
	ds.levels = sortedLevels(count)
	if m.Kind == ModeratorBinary && len(ds.levels) > 2 {
		return fail(ErrValues, c.Name, fmt.Sprintf("The moderator %q was chosen as binary but has %d different values (%s). Choose the kind \"categorical\", or \"continuous\" if it is a measurement.", c.Name, len(ds.levels), quoteList(ds.levels)))
	}
	index := map[string]int{}
	for j, l := range ds.levels {
		index[l] = j
	}
	ds.ref = -1
	switch {
	case m.Reference != "":
		j, ok := index[m.Reference]
		if !ok {
			// A level written as a number matches the same number written
			// otherwise (".5" is "0.5").
			if v, err := strconv.ParseFloat(strings.TrimSpace(m.Reference), 64); err == nil {
				for k, l := range ds.levels {
					if w, err := strconv.ParseFloat(l, 64); err == nil && w == v {
						j, ok = k, true
						break
					}
				}
			}
		}
		if !ok {
			return fail(ErrSpec, c.Name, fmt.Sprintf("The reference group %q does not appear in the moderator %q among the rows used; its groups are %s.", ShortLabel(m.Reference), c.Name, quoteList(ds.levels)))
		}
		ds.ref = j
	case m.Kind == ModeratorBinary && len(ds.levels) == 2 && ds.levels[0] == "0" && ds.levels[1] == "1":
		ds.ref = 0
	default:
		ds.ref = largestLevel(ds.levels, count)
	}
	ds.modLevel = make([]int, ds.n)
	forRows(ds.n, blockRows, func(_, from, to int) {
		for r := from; r < to; r++ {
			ds.modLevel[r] = index[c.key(ds.used[r])]
		}
	})
	return nil
}

// numberKeys numbers the values of a cluster or unit column in order of
// first appearance among the used rows, and returns each row's number and
// the labels. Numeric columns are keyed by value, so that a million rows
// cost no formatting.
func (ds *design) numberKeys(c *Column) ([]int, []string) {
	ids := make([]int, ds.n)
	var labels []string
	byText := map[string]int{}
	byValue := map[float64]int{}
	for r, i := range ds.used {
		var j int
		var ok bool
		if c.IsNumeric() {
			j, ok = byValue[c.Num[i]]
		} else {
			j, ok = byText[c.Text[i]]
		}
		if !ok {
			j = len(labels)
			labels = append(labels, c.key(i))
			if c.IsNumeric() {
				byValue[c.Num[i]] = j
			} else {
				byText[c.Text[i]] = j
			}
		}
		ids[r] = j
	}
	return ids, labels
}

// readPeriod fills ds.period: a 0/1 column as it is, or 1 where the
// column holds the value named as after, which must be one of exactly two.
func (ds *design) readPeriod(d *Data, s Spec, c *Column) error {
	if s.After == "" {
		ds.period = make([]float64, ds.n)
		for r, i := range ds.used {
			v := c.Num[i]
			if v != 0 && v != 1 {
				return fail(ErrValues, c.Name, fmt.Sprintf("The period column %q should hold only 0 (before the programme started) and 1 (after), but row %d holds %s. If it holds two other values, say which one means after.", c.Name, d.label(i), formatNumber(v)), d.label(i))
			}
			ds.period[r] = v
		}
		return nil
	}
	if many, err := ds.readPeriods(c, s); many || err != nil {
		return err
	}
	var err error
	ds.period, err = ds.twoLabels(c, func(labels []string) (string, bool) {
		return findLevel(labels, s.After)
	}, func(labels []string) string {
		return fmt.Sprintf("The value %q, chosen as after, does not appear in the period column %q among the rows used; its values are %s.", ShortLabel(s.After), c.Name, quoteList(labels))
	}, func(labels []string) string {
		return fmt.Sprintf("The period column %q has %d different values (%s); a before-and-after comparison needs exactly two, one of them after the start. Recode the column, or keep the rows of one period before and one after.", c.Name, len(labels), quoteList(labels))
	})
	return err
}

// findLevel finds a level named in the spec (the value after the start,
// the comparison arm); a number matches the same number written otherwise
// ("2020.0" is "2020").
func findLevel(levels []string, after string) (string, bool) {
	for _, l := range levels {
		if l == after {
			return l, true
		}
	}
	if v, err := strconv.ParseFloat(strings.TrimSpace(after), 64); err == nil {
		for _, l := range levels {
			if w, err := strconv.ParseFloat(l, 64); err == nil && w == v {
				return l, true
			}
		}
	}
	return "", false
}

// treatGroup is a group whose effect the model estimates: the treated
// rows, or one arm; is(r) is 1 for its rows.
type treatGroup struct {
	name string
	is   func(r int) float64
}

// fill writes a term's column j of the row-major n×k matrix x for rows
// from to to (assemble).
type fill func(x []float64, j, k, from, to int)

// assemble writes the model matrix: intercept, treatment, moderator,
// treatment × moderator, controls (METHODS §1). Each term is a function
// that fills its column of the row-major matrix for a range of rows; the
// matrix is filled a block of rows at a time, so that the block stays in
// cache while each term writes its column of it, the blocks in parallel.
func (ds *design) assemble(s Spec, controls []roleColumn) {
	var fills []fill
	add := func(name, role string, f fill) int {
		ds.names = append(ds.names, name)
		ds.roles = append(ds.roles, role)
		fills = append(fills, f)
		return len(fills) - 1
	}
	add("(intercept)", roleIntercept, func(x []float64, j, k, from, to int) {
		for r := from; r < to; r++ {
			x[r*k+j] = 1
		}
	})
	// The groups whose effect is estimated: the treated rows, or each arm
	// of several (arms.go), each with its indicator.
	groups := []treatGroup{{treatmentName(s), func(r int) float64 { return ds.treat[r] }}}
	if ds.arm != nil {
		groups = groups[:0]
		for a, label := range ds.armLabels {
			groups = append(groups, treatGroup{armName(s, label), func(r int) float64 {
				if ds.arm[r] == a+1 {
					return 1
				}
				return 0
			}})
		}
	}
	product := func(f, g func(r int) float64) fill {
		return func(x []float64, j, k, from, to int) {
			for r := from; r < to; r++ {
				x[r*k+j] = f(r) * g(r)
			}
		}
	}
	one := func(int) float64 { return 1 }
	// after is row r's value of the period's after indicator: 1 outside a
	// before-and-after design, where the effect term is the group itself.
	after, pName := one, ""
	if ds.period != nil {
		after = func(r int) float64 { return ds.period[r] }
		for a, g := range groups {
			if j := add(g.name, roleGroup, product(g.is, one)); a == 0 {
				ds.gCol = j
			}
		}
		pName = periodName(s)
		if ds.periodLevels != nil {
			ds.pCol = -1
			pName = ds.addPeriods(s, add)
		} else {
			ds.pCol = add(pName, rolePeriod, product(after, one))
		}
	}
	// effName is a group's effect term: the group, or the group × period.
	effName := func(g treatGroup) string {
		if pName == "" {
			return g.name
		}
		return g.name + " × " + pName
	}
	tCols := make([]int, len(groups))
	for a, g := range groups {
		tCols[a] = add(effName(g), roleTreatment, product(g.is, after))
	}
	if ds.periodLevels != nil {
		for a, g := range groups {
			ds.addLeads(s, g, a, add)
		}
	}

	// mod(r, j) is row r's value of the moderator's column j.
	var modNames []string
	var mod func(r, j int) float64
	var modLevelOf []int // categorical: the level of moderator column j
	if ds.modValue != nil {
		name := s.Moderator.Column
		if ds.centre != 0 {
			name = fmt.Sprintf("%s − %s", name, formatNumber(ds.centre))
		}
		modNames = []string{name}
		mod = func(r, _ int) float64 { return ds.modValue[r] - ds.centre }
	} else {
		for j, l := range ds.levels {
			if j != ds.ref {
				modNames = append(modNames, fmt.Sprintf("%s = %s", s.Moderator.Column, l))
				modLevelOf = append(modLevelOf, j)
			}
		}
		mod = func(r, j int) float64 {
			if ds.modLevel[r] == modLevelOf[j] {
				return 1
			}
			return 0
		}
	}
	for m, name := range modNames {
		ds.mCols = append(ds.mCols, add(name, roleModerator, func(x []float64, j, k, from, to int) {
			for r := from; r < to; r++ {
				x[r*k+j] = mod(r, m)
			}
		}))
	}
	if ds.period != nil {
		for _, g := range groups {
			for m, name := range modNames {
				add(g.name+" × "+name, roleGroupModerator, product(g.is, func(r int) float64 { return mod(r, m) }))
			}
		}
		for m, name := range modNames {
			add(pName+" × "+name, rolePeriodModerator, product(after, func(r int) float64 { return mod(r, m) }))
		}
	}
	iCols := make([][]int, len(groups))
	for a, g := range groups {
		eff := func(r int) float64 { return g.is(r) * after(r) }
		for m, name := range modNames {
			iCols[a] = append(iCols[a], add(effName(g)+" × "+name, roleInteraction, product(eff, func(r int) float64 { return mod(r, m) })))
		}
		ds.iCols = append(ds.iCols, iCols[a]...)
	}
	ds.tCol = tCols[0]
	for a, label := range ds.armLabels {
		ds.arms = append(ds.arms, armTerms{label: label, tCol: tCols[a], iCols: iCols[a]})
	}
	for _, rc := range controls {
		c := rc.col
		if c.IsNumeric() {
			add(c.Name, roleControl, func(x []float64, j, k, from, to int) {
				for r := from; r < to; r++ {
					x[r*k+j] = c.Num[ds.used[r]]
				}
			})
			continue
		}
		count := map[string]int{}
		for _, i := range ds.used {
			count[c.Text[i]]++
		}
		levels := sortedLevels(count)
		ref := largestLevel(levels, count)
		for j, l := range levels {
			if j == ref {
				continue
			}
			add(fmt.Sprintf("%s = %s", c.Name, l), roleControl, func(x []float64, col, k, from, to int) {
				for r := from; r < to; r++ {
					if c.Text[ds.used[r]] == l {
						x[r*k+col] = 1
					}
				}
			})
		}
	}
	ds.k = len(fills)
	ds.x = make([]float64, ds.n*ds.k)
	const block = 2048
	forRows(ds.n, block, func(_, from, to int) {
		for j, f := range fills {
			f(ds.x, j, ds.k, from, to)
		}
	})
}

// treatmentName is the treatment's term name: the column, or for labels
// "column = treated label".
func treatmentName(s Spec) string {
	if s.Treatment.Kind == TreatmentLabels {
		return fmt.Sprintf("%s = %s", s.Treatment.Column, s.Treatment.Treated)
	}
	return s.Treatment.Column
}

// periodName is the period's term name: the column, or for labels
// "column = after label".
func periodName(s Spec) string {
	if s.After != "" {
		return fmt.Sprintf("%s = %s", s.Period, s.After)
	}
	return s.Period
}

// sortedLevels returns the keys in level order: numerically when every key
// is a number, otherwise by byte order.
func sortedLevels(count map[string]int) []string {
	levels := make([]string, 0, len(count))
	numeric := true
	for l := range count {
		levels = append(levels, l)
		if _, err := strconv.ParseFloat(l, 64); err != nil {
			numeric = false
		}
	}
	if numeric {
		sort.Slice(levels, func(a, b int) bool {
			x, _ := strconv.ParseFloat(levels[a], 64)
			y, _ := strconv.ParseFloat(levels[b], 64)
			return x < y
		})
	} else {
		sort.Strings(levels)
	}
	return levels
}

// largestLevel returns the index of the level with the most rows, ties
// broken by the first in level order.
func largestLevel(levels []string, count map[string]int) int {
	best := 0
	for j, l := range levels {
		if count[l] > count[levels[best]] {
			best = j
		}
	}
	return best
}

func quoteList(xs []string) string {
	const show = 8
	q := make([]string, 0, min(len(xs), show))
	for i, x := range xs {
		if i == show {
			q = append(q, fmt.Sprintf("and %d more", len(xs)-show))
			break
		}
		q = append(q, strconv.Quote(ShortLabel(x)))
	}
	return strings.Join(q, ", ")
}

// ShortLabel cuts a value quoted in a message to a readable length (60
// bytes, whole characters): a group's name may be any text a cell holds.
func ShortLabel(s string) string {
	const n = 60
	if len(s) <= n {
		return s
	}
	cut := n
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return s[:cut] + "…"
}
