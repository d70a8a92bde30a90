package estimate

// The streamed fit's first pass (FitStream, stream.go): the survey of
// every chunk (dropped rows, groups, clusters, the facts the checks need)
// and the design it decides.

import (
	"fmt"
	"math"
)

// groupStats are the facts the checks need about one moderator group.
type groupStats struct {
	n, treated int
	firstT     float64
	tVaries    bool
	// cells counts the rows of a before-and-after design by group of
	// units and period: 2·T + P.
	cells [4]int
}

// cell counts a row of a before-and-after design.
func (g *groupStats) cell(t, p float64) { g.cells[2*int(t)+int(p)]++ }

// missingCells names the combinations of group of units and period
// without rows, nil when all four have some.
func (g *groupStats) missingCells() []string {
	var missing []string
	for c, words := range []string{"the comparison units before the start", "the comparison units after the start",
		"the programme's units before the start", "the programme's units after the start"} {
		if g.cells[c] == 0 {
			missing = append(missing, words)
		}
	}
	return missing
}

// add counts a row of the group with treatment t.
func (g *groupStats) add(t float64) {
	if g.n == 0 {
		g.firstT = t
	}
	g.n++
	g.treated += int(t)
	g.tVaries = g.tVaries || t != g.firstT
}

// keyCache remembers the category key of numeric cells, so that a numeric
// moderator or cluster is not formatted anew on every row.
type keyCache map[float64]string

func (kc keyCache) key(c *Column, i int) string {
	k, kept := kc.lookup(c, i)
	if !kept && len(kc) < 1<<16 {
		kc[c.Num[i]] = k
	}
	return k
}

// lookup returns the key of row i and whether there is nothing to
// remember (text, or a number the cache holds). It changes nothing, so
// that goroutines may share the cache after the survey.
func (kc keyCache) lookup(c *Column, i int) (string, bool) {
	if c.Num == nil {
		return c.Text[i], true
	}
	if k, ok := kc[c.Num[i]]; ok {
		return k, true
	}
	return c.key(i), false
}

// resolve finds the spec's columns in the first chunk.
func (st *stream) resolve(d *Data) error {
	s := st.s
	find := func(name string) (int, error) {
		for i := range d.Columns {
			if d.Columns[i].Name == name {
				return i, nil
			}
		}
		return -1, needsMemory(fmt.Sprintf("the column %q is not in the data", name))
	}
	var err error
	if st.iOut, err = find(s.Outcome); err != nil {
		return err
	}
	if st.iTreat, err = find(s.Treatment.Column); err != nil {
		return err
	}
	if st.iMod, err = find(s.Moderator.Column); err != nil {
		return err
	}
	for _, c := range s.Controls {
		i, err := find(c)
		if err != nil {
			return err
		}
		st.iControls = append(st.iControls, i)
	}
	st.iClus, st.iWeight, st.iPeriod, st.iUnit = -1, -1, -1, -1
	if s.DiD() {
		if st.iPeriod, err = find(s.Period); err != nil {
			return err
		}
	}
	if s.Unit != "" {
		if st.iUnit, err = find(s.Unit); err != nil {
			return err
		}
	}
	if s.Cluster != "" {
		if st.iClus, err = find(s.Cluster); err != nil {
			return err
		}
	}
	if s.Weights != "" {
		if st.iWeight, err = find(s.Weights); err != nil {
			return err
		}
	}
	numeric := func(i int) bool { return d.Columns[i].IsNumeric() }
	if !numeric(st.iOut) || (s.Treatment.Kind != TreatmentLabels && !numeric(st.iTreat)) || (st.iWeight >= 0 && !numeric(st.iWeight)) ||
		(st.iPeriod >= 0 && s.After == "" && !numeric(st.iPeriod)) {
		return needsMemory("a column that must hold numbers holds text")
	}
	st.resolved = true
	st.countAt = map[[2]string]int{}
	st.labelCount = map[string]int{}
	st.modCount = map[string]int{}
	st.modStats = map[string]*groupStats{}
	st.clusters, st.units = newNumbering(), newNumbering()
	st.modKeys, st.periodKeys = keyCache{}, keyCache{}
	st.periodCount = map[string]int{}
	st.controlCount = make([]map[string]int, len(s.Controls))
	for j, i := range st.iControls {
		if !numeric(i) {
			st.controlCount[j] = map[string]int{}
		}
	}
	st.ds = &design{}
	return nil
}

// roleChecks lists the chunk's columns in the order Fit checks them for
// missing values (buildDesign), in checks' memory.
func (st *stream) roleChecks(d *Data, checks []roleColumn) []roleColumn {
	s := st.s
	rc := func(i int, role string, numeric bool) roleColumn {
		return roleColumn{col: &d.Columns[i], role: role, numeric: numeric}
	}
	checks = append(checks[:0], rc(st.iOut, "outcome", true),
		rc(st.iTreat, "treatment", s.Treatment.Kind != TreatmentLabels))
	if st.iPeriod >= 0 {
		checks = append(checks, rc(st.iPeriod, "period", s.After == ""))
	}
	checks = append(checks, rc(st.iMod, "moderator", false))
	for _, i := range st.iControls {
		checks = append(checks, rc(i, "control", false))
	}
	if st.iClus >= 0 {
		checks = append(checks, rc(st.iClus, "cluster", false))
	}
	if st.iUnit >= 0 && s.Unit != s.Cluster {
		checks = append(checks, rc(st.iUnit, "unit", false))
	}
	if st.iWeight >= 0 {
		checks = append(checks, rc(st.iWeight, "weight", true))
	}
	return checks
}

// usable reports whether row i of the chunk enters the fit.
func usable(checks []roleColumn, i int) bool {
	for _, rc := range checks {
		if !rc.fine(i) {
			return false
		}
	}
	return true
}

// keep reports whether row i of the chunk enters the fit, as usable does,
// and notes why when it does not (the survey).
func (st *stream) keep(d *Data, checks []roleColumn, i int) bool {
	for _, rc := range checks {
		reason, kind := rc.problem(i)
		if reason == "" {
			continue
		}
		ds := st.ds
		ds.dropped = append(ds.dropped, DroppedRow{Row: d.label(i), Column: rc.col.Name, Reason: reason})
		key := [2]string{rc.col.Name, kind}
		if j, ok := st.countAt[key]; ok {
			ds.counts[j].Rows++
		} else {
			st.countAt[key] = len(ds.counts)
			ds.counts = append(ds.counts, DropCount{Column: rc.col.Name, Reason: countReason(rc, kind), Rows: 1})
		}
		return false
	}
	return true
}

// treatment returns row i's treatment as the model uses it.
func (st *stream) treatment(d *Data, i int) float64 {
	c := &d.Columns[st.iTreat]
	if st.s.Treatment.Kind == TreatmentLabels {
		if c.key(i) == st.s.Treatment.Treated {
			return 1
		}
		return 0
	}
	return c.Num[i]
}

// period returns row i's period as the model uses it: 1 after the start.
func (st *stream) period(d *Data, i int) float64 {
	c := &d.Columns[st.iPeriod]
	if st.s.After == "" {
		return c.Num[i]
	}
	if key, _ := st.periodKeys.lookup(c, i); key == st.afterKey {
		return 1
	}
	return 0
}

// survey is the first pass.
func (st *stream) survey(d *Data) error {
	if !st.resolved {
		if err := st.resolve(d); err != nil {
			return err
		}
	}
	n, err := d.rows()
	if err != nil {
		return err
	}
	s, ds := st.s, st.ds
	st.checks = st.roleChecks(d, st.checks)
	checks := st.checks
	for i := 0; i < n; i++ {
		ds.rowsRead++
		if !st.keep(d, checks, i) {
			continue
		}
		for _, rc := range checks {
			if rc.col.IsNumeric() && math.Abs(rc.col.Num[i]) > maxMagnitude {
				st.tooLarge = true
			}
		}
		y := d.Columns[st.iOut].Num[i]
		t := st.treatment(d, i)
		if ds.n == 0 {
			st.firstY, st.firstT = y, t
		}
		ds.n++
		st.yVaries = st.yVaries || y != st.firstY
		st.tVaries = st.tVaries || t != st.firstT
		switch s.Treatment.Kind {
		case TreatmentBinary:
			st.badTreatment = st.badTreatment || (t != 0 && t != 1)
		case TreatmentLabels:
			st.labelCount[d.Columns[st.iTreat].key(i)]++
		}
		key := st.modKeys.key(&d.Columns[st.iMod], i)
		st.modCount[key]++
		g := st.modStats[key]
		if g == nil {
			g = &groupStats{}
			st.modStats[key] = g
		}
		g.add(t)
		if st.iPeriod >= 0 {
			c := &d.Columns[st.iPeriod]
			p := 0.0
			if s.After != "" {
				key := st.periodKeys.key(c, i)
				st.periodCount[key]++
				if key == s.After {
					p = 1
				}
			} else {
				p = c.Num[i]
			}
			if p != 0 && p != 1 {
				st.badPeriod = true
			} else if t == 0 || t == 1 {
				g.cell(t, p)
				st.allCells.cell(t, p)
			}
		}
		for j, ci := range st.iControls {
			if cc := st.controlCount[j]; cc != nil {
				cc[d.Columns[ci].Text[i]]++
			}
		}
		if st.iClus >= 0 {
			st.clusters.number(&d.Columns[st.iClus], i)
		}
		if st.iUnit >= 0 {
			st.units.number(&d.Columns[st.iUnit], i)
		}
	}
	return nil
}

// numbering numbers the values of a cluster or unit column in order of
// first appearance, as Fit does (numberKeys).
type numbering struct {
	byText  map[string]int
	byValue map[float64]int
	keys    keyCache
	labels  []string
}

func newNumbering() *numbering {
	return &numbering{byText: map[string]int{}, byValue: map[float64]int{}, keys: keyCache{}}
}

// number returns row i's number, giving the next one to a new value.
func (nb *numbering) number(c *Column, i int) int {
	if j, ok := nb.lookup(c, i); ok {
		return j
	}
	j := len(nb.labels)
	nb.labels = append(nb.labels, nb.keys.key(c, i))
	if c.IsNumeric() {
		nb.byValue[c.Num[i]] = j
	} else {
		nb.byText[c.Text[i]] = j
	}
	return j
}

// lookup returns row i's number, if its value has one; it changes
// nothing, so that goroutines may share the numbering after the survey.
func (nb *numbering) lookup(c *Column, i int) (int, bool) {
	if c.IsNumeric() {
		j, ok := nb.byValue[c.Num[i]]
		return j, ok
	}
	j, ok := nb.byText[c.Text[i]]
	return j, ok
}

// plan turns the survey into the model's terms, or hands the fit back
// when the data have a problem whose message Fit words.
func (st *stream) plan() (*design, error) {
	s, ds := st.s, st.ds
	if ds == nil {
		return nil, needsMemory("the data have no rows")
	}
	if ds.n == 0 {
		return nil, noRowsError(ds.rowsRead, ds.counts)
	}
	if st.badTreatment {
		return nil, needsMemory("the treatment holds values other than 0 and 1")
	}
	if st.tooLarge {
		return nil, needsMemory("a value is too large to fit")
	}
	if s.Treatment.Kind == TreatmentLabels {
		labels := sortedLevels(st.labelCount)
		if st.labelCount[s.Treatment.Treated] == 0 || len(labels) != 2 {
			return nil, needsMemory("the treatment's labels do not match the spec")
		}
	}
	ds.clusterLabels, ds.unitLabels = st.clusters.labels, st.units.labels
	if err := st.planPeriod(); err != nil {
		return nil, err
	}
	ds.levels = sortedLevels(st.modCount)
	if s.Moderator.Kind == ModeratorBinary && len(ds.levels) > 2 {
		return nil, needsMemory("the binary moderator has more than two values")
	}
	st.levelIndex = map[string]int{}
	for j, l := range ds.levels {
		st.levelIndex[l] = j
	}
	switch {
	case s.Moderator.Reference != "":
		j, ok := st.levelIndex[s.Moderator.Reference]
		if !ok {
			return nil, needsMemory("the reference group does not appear")
		}
		ds.ref = j
	case s.Moderator.Kind == ModeratorBinary && len(ds.levels) == 2 && ds.levels[0] == "0" && ds.levels[1] == "1":
		ds.ref = 0
	default:
		ds.ref = largestLevel(ds.levels, st.modCount)
	}
	if !st.yVaries || !st.tVaries || len(ds.levels) < 2 {
		return nil, needsMemory("a column that must vary is constant")
	}
	binaryT := s.Treatment.Kind != TreatmentContinuous
	st.levelRows = make([]int, len(ds.levels))
	st.levelTreated = make([]int, len(ds.levels))
	for j, l := range ds.levels {
		g := st.modStats[l]
		if g.n == 1 || binaryT && (g.treated == g.n || g.treated == 0) || !binaryT && !g.tVaries || s.DiD() && g.missingCells() != nil {
			return nil, needsMemory(fmt.Sprintf("the treatment's effect cannot be estimated in group %q", ShortLabel(l)))
		}
		st.levelRows[j] = g.n
		if binaryT {
			st.levelTreated[j] = g.treated
		}
	}
	st.terms()
	st.layout = layout{tCol: ds.tCol, gCol: ds.gCol, pCol: ds.pCol, mCols: ds.mCols, iCols: ds.iCols}
	if ds.n <= ds.k {
		return nil, needsMemory("there are fewer rows than terms")
	}
	if s.Cluster != "" && len(ds.clusterLabels) < 2 {
		return nil, needsMemory("all rows are in one cluster")
	}
	if s.Variance == CR1 && !s.Bootstrap.Off && len(ds.clusterLabels) < BootstrapClusters {
		return nil, needsMemory("the wild cluster bootstrap needs every row")
	}
	return ds, nil
}

// planPeriod checks the survey of a before-and-after design's period
// column, handing the fit back for Fit to word any problem.
func (st *stream) planPeriod() error {
	s := st.s
	if !s.DiD() {
		return nil
	}
	if s.After != "" {
		labels := sortedLevels(st.periodCount)
		after, ok := findLevel(labels, s.After)
		if len(labels) > 2 {
			return needsMemory("more than one period before or after the start: the periods' terms and the leads are fitted in memory")
		}
		if !ok || len(labels) != 2 {
			return needsMemory("the period column's values do not match the spec")
		}
		if after != s.After {
			// The survey counted the cells by the label as typed.
			return needsMemory("the value after the start is written otherwise in the data")
		}
		st.afterKey = after
	}
	if st.badPeriod {
		return needsMemory("the period holds values other than 0 and 1")
	}
	if st.allCells.missingCells() != nil {
		return needsMemory("a group of units has no rows before or after the start")
	}
	return nil
}

// ready allocates the factorization of the k columns the fit keeps.
func (st *stream) ready() {
	k := st.ds.k
	st.qr = &qrFactor{n: st.ds.n, k: k + 1}
	st.tri = make([]float64, (k+1)*(k+1))
	st.block = make([]float64, chunkRows*(k+1))
	st.hash = newRowHash()
	st.outcomeBinary = true
}

// terms names the model's columns in Fit's order (assemble): intercept,
// treatment, moderator groups, interactions, controls.
func (st *stream) terms() {
	s, ds := st.s, st.ds
	add := func(name, role string) int {
		ds.names = append(ds.names, name)
		ds.roles = append(ds.roles, role)
		return len(ds.names) - 1
	}
	add("(intercept)", roleIntercept)
	tName := treatmentName(s)
	if s.DiD() {
		ds.gCol = add(tName, roleGroup)
		ds.pCol = add(periodName(s), rolePeriod)
		tName += " × " + periodName(s)
	}
	ds.tCol = add(tName, roleTreatment)
	var modNames []string
	for j, l := range ds.levels {
		if j != ds.ref {
			modNames = append(modNames, fmt.Sprintf("%s = %s", s.Moderator.Column, l))
		}
	}
	for _, name := range modNames {
		ds.mCols = append(ds.mCols, add(name, roleModerator))
	}
	if s.DiD() {
		for _, name := range modNames {
			add(treatmentName(s)+" × "+name, roleGroupModerator)
		}
		for _, name := range modNames {
			add(periodName(s)+" × "+name, rolePeriodModerator)
		}
	}
	for _, name := range modNames {
		ds.iCols = append(ds.iCols, add(tName+" × "+name, roleInteraction))
	}
	st.controlLevels = make([][]string, len(s.Controls))
	st.controlCol = make([]int, len(s.Controls))
	for j, name := range s.Controls {
		count := st.controlCount[j]
		if count == nil {
			st.controlCol[j] = add(name, roleControl)
			continue
		}
		levels := sortedLevels(count)
		ref := largestLevel(levels, count)
		st.controlCol[j] = len(ds.names)
		for l, level := range levels {
			if l == ref {
				continue
			}
			st.controlLevels[j] = append(st.controlLevels[j], level)
			add(fmt.Sprintf("%s = %s", name, level), roleControl)
		}
		if st.controlLevels[j] == nil {
			st.controlLevels[j] = []string{}
		}
	}
	ds.k = len(ds.names)
}
