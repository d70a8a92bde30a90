package pipeline

import (
	"cmp"
	"context"
	"fmt"
	"hash/maphash"
	"math"
	"slices"
	"strings"
	"sync"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// Thresholds of the grouping check.
const (
	// nestShare: a column holds the moderator (the treatment) constant
	// when, beyond what chance alone would give, at least this share of
	// the rows lie in its values within which the moderator does not vary
	// (kappa = (s − e)/(1 − e), s the share seen, e the share expected if
	// the column's values were unrelated to the moderator). Why 0.9: for
	// an indicator with an even split, a share s of rows in values within
	// which it is constant gives an intraclass correlation of at least s
	// (the within-value variance, at most (1 − s)/4, over the total 1/4),
	// and Moulton's understatement factor 1 + (m − 1)·ρx·ρe grows with
	// it; at 0.9 it is at least nine tenths of what full nesting gives,
	// while a few rows that moved or were mistyped do not hide the
	// pattern. Our derivation from Moulton (1990).
	nestShare = 0.9
	// repeatShare and maxRepeatRows: a column repeats units when at least
	// this share of its rows lie in values holding the same number of
	// rows, from 2 to maxRepeatRows, which is how an identifier of people
	// seen before and after, or at a few visits, looks; a measurement
	// such as age spreads its counts instead, and sites of a balanced
	// design hold more rows each. The data cannot tell a person seen 12
	// times from a site of 12 people: both are reported. Our choice, with
	// a year of monthly visits as the upper end.
	repeatShare   = 0.8
	maxRepeatRows = 12
	// maxGroupingColumns: the check looks at the first this many
	// candidate columns in sheet order, so that a sheet of thousands of
	// columns stays quick. Our choice.
	maxGroupingColumns = 100
	// maxTrackedValues bounds, over all candidate columns, the distinct
	// values the check keeps, so that memory does not grow with the rows
	// of a streamed file: when the bound is reached, the column with the
	// most values is left unchecked (an identifier of one row each, most
	// often), then the next largest if need be. So a column of more than
	// 262,144 values is never reported, people seen twice in a panel of
	// that size included. Our choice: about 16 MB.
	maxTrackedValues = 1 << 18
)

// Groupings finds the columns that group the rows the spec uses: for each
// column of text, yes/no values or whole numbers that is not in the model
// (the cluster column included, marked), whether it holds the moderator
// constant within each of its values, the treatment (assignment by site),
// or repeats units (an identifier with several rows each). A column with
// one value, with one row per value, or that is the moderator or the
// treatment under another name is left out. The strongest come first.
// One pass over the rows. The answer is never nil, so that a run can tell
// "none found" from "not looked".
func Groupings(t *workbook.Table, s estimate.Spec) []report.Grouping {
	return groupingsOf(t, nil, s)
}

// groupingsOf is Groupings on the table's columns already adapted (or
// adapted here when d is nil). The last answer is kept: the window checks
// the roles after every choice, and most choices (a reference group,
// values to report at) leave the answer as it was.
func groupingsOf(t *workbook.Table, d *estimate.Data, s estimate.Spec) []report.Grouping {
	key := groupingKey(s)
	lastGroupings.Lock()
	defer lastGroupings.Unlock()
	if lastGroupings.table == t && lastGroupings.key == key {
		return lastGroupings.gs
	}
	gs := []report.Grouping{}
	if sc := newGroupingScan(t, s); sc != nil {
		if d == nil {
			d = EngineData(t)
		}
		sc.add(d)
		gs = sc.result()
	}
	lastGroupings.table, lastGroupings.key, lastGroupings.gs = t, key, gs
	return gs
}

// lastGroupings is the last answer of groupingsOf. A table is never
// changed once read, so its pointer and the spec's key name the answer.
var lastGroupings struct {
	sync.Mutex
	table *workbook.Table
	key   string
	gs    []report.Grouping
}

// Groupings is the package's Groupings for a source: a table read whole,
// or one pass over a streamed file that asks for the columns the fit's
// passes will ask for, so that the copy of them the first pass keeps
// serves the fit. The answer for a spec is kept, so that asking before a
// fit costs the fit nothing more.
func (s *Source) Groupings(ctx context.Context, spec estimate.Spec) ([]report.Grouping, error) {
	if gs := s.knownGroupings(spec); gs != nil {
		return gs, nil
	}
	if s.Stream == nil {
		s.keepGroupings(spec, Groupings(s.Table, spec))
		return s.groupings, nil
	}
	chunks, sc := s.chunks(spec)
	if sc == nil {
		return []report.Grouping{}, nil
	}
	chunks.tap = sc
	err := chunks.Pass(ctx, func(_ *estimate.Data, release func()) error {
		release()
		return nil
	})
	if err != nil {
		return nil, err
	}
	s.keepGroupings(spec, sc.result())
	return s.groupings, nil
}

// chunks are the streamed passes for a spec: the columns it uses and the
// candidates of the grouping check, with the check's scan (nil when the
// spec lacks a role).
func (s *Source) chunks(spec estimate.Spec) (*streamChunks, *groupingScan) {
	o := s.Stream.Outline
	names := usedColumns(o, spec)
	sc := newGroupingScan(o, spec)
	if sc != nil {
		for _, name := range sc.names {
			if !slices.Contains(names, name) {
				names = append(names, name)
			}
		}
	}
	return &streamChunks{s: s.Stream, names: names}, sc
}

// knownGroupings is the answer kept for the spec, or nil.
func (s *Source) knownGroupings(spec estimate.Spec) []report.Grouping {
	if s.groupings != nil && s.groupingsKey == groupingKey(spec) {
		return s.groupings
	}
	return nil
}

func (s *Source) keepGroupings(spec estimate.Spec, gs []report.Grouping) {
	s.groupings, s.groupingsKey = gs, groupingKey(spec)
}

// groupingKey is what the check's answer depends on in a spec: each role
// by name, the treatment's reading, and the controls.
func groupingKey(s estimate.Spec) string {
	parts := append([]string{s.Outcome, s.Treatment.Column, string(s.Treatment.Kind), s.Treatment.Treated,
		s.Moderator.Column, s.Cluster, s.Weights, s.Period, s.After, s.Unit}, s.Controls...)
	return strings.Join(parts, "\x00")
}

// groupingScan gathers, chunk by chunk, what each candidate column's
// values hold. Values are kept as 64-bit hashes (texts) or bit patterns
// (numbers), so memory grows with the distinct values, not with their
// length; two texts sharing a hash would be read as one value, a chance
// of about one in 500 million among the 2^18 values kept at most
// (n²/2 pairs, each 2^-64).
type groupingScan struct {
	spec   estimate.Spec
	used   map[string]bool
	names  []string
	cands  []*candidate
	mod    levelCount
	trt    levelCount
	rows   int
	seed   maphash.Seed
	budget int
	// complete is set when a streamed pass has given every chunk.
	complete bool
}

// candidate is one column's values so far.
type candidate struct {
	name    string
	cluster bool
	index   map[uint64]int32
	values  []valueFacts
	rows    int
	dropped bool // not whole numbers, or too many values to keep
}

// valueFacts are one value's rows and what the moderator and the
// treatment are on them.
type valueFacts struct {
	n                  int
	mod, trt           uint64
	modMixed, trtMixed bool
}

// levelCount counts the rows of each value of the moderator or the
// treatment, for the share that chance alone would hold constant; past
// maxTrackedValues values, the rest are counted together (untracked).
type levelCount struct {
	n         map[uint64]int
	untracked int
}

func (l *levelCount) add(k uint64) {
	if _, ok := l.n[k]; ok || len(l.n) < maxTrackedValues {
		l.n[k]++
		return
	}
	l.untracked++
}

// sameChance is the probability that n rows drawn at random all have the
// same value: Σ p_l^n over the values' shares p_l, levels of equal
// counts taken together so that the cost stays linear. Rows past the
// tracked values are taken as one value, which can only raise it.
func (l *levelCount) sameChance(ns []int, total int) map[int]float64 {
	byCount := map[int]int{}
	for _, c := range l.n {
		byCount[c]++
	}
	if l.untracked > 0 {
		byCount[l.untracked]++
	}
	out := make(map[int]float64, len(ns))
	for _, n := range ns {
		if _, done := out[n]; done {
			continue
		}
		var p float64
		for c, k := range byCount {
			p += float64(k) * math.Pow(float64(c)/float64(total), float64(n))
		}
		out[n] = min(p, 1)
	}
	return out
}

// newGroupingScan picks the candidate columns of the table (or a
// stream's outline) for a spec; nil when the spec lacks a role.
func newGroupingScan(t *workbook.Table, s estimate.Spec) *groupingScan {
	if s.Outcome == "" || s.Treatment.Column == "" || s.Moderator.Column == "" {
		return nil
	}
	sc := &groupingScan{spec: s, used: map[string]bool{}, seed: maphash.MakeSeed(), budget: maxTrackedValues,
		mod: levelCount{n: map[uint64]int{}}, trt: levelCount{n: map[uint64]int{}}}
	model := map[string]bool{s.Outcome: true, s.Treatment.Column: true, s.Moderator.Column: true, s.Weights: true, s.Period: true}
	for _, c := range s.Controls {
		model[c] = true
	}
	if s.Unit != s.Cluster {
		// A unit column named beside another cluster is accounted for:
		// its rows are alike by design, and the cluster was chosen over it
		// (a coarser group it lies in, or another choice made knowingly).
		model[s.Unit] = true
	}
	for _, name := range usedColumns(t, s) {
		sc.used[name] = true
	}
	for _, c := range t.Columns {
		switch {
		case model[c.Name], len(sc.cands) == maxGroupingColumns && c.Name != s.Cluster:
			continue
		case c.Kind == workbook.Number, c.Kind == workbook.Category, c.Kind == workbook.YesNo, c.Kind == workbook.Text:
			sc.names = append(sc.names, c.Name)
			sc.cands = append(sc.cands, &candidate{name: c.Name, cluster: c.Name == s.Cluster, index: map[uint64]int32{}})
		}
	}
	return sc
}

// add takes one chunk of rows: its usable rows (a usable value in every
// column the spec uses) are counted for every candidate column that has
// a value there.
func (sc *groupingScan) add(d *estimate.Data) {
	byName := map[string]*estimate.Column{}
	for i := range d.Columns {
		byName[d.Columns[i].Name] = &d.Columns[i]
	}
	usable := usableRows(d, sc.used)
	mod, trt := byName[sc.spec.Moderator.Column], byName[sc.spec.Treatment.Column]
	if mod == nil || trt == nil {
		return
	}
	modKey := make([]uint64, len(usable))
	trtKey := make([]uint64, len(usable))
	for r, u := range usable {
		if !u {
			continue
		}
		modKey[r] = sc.key(mod, r)
		trtKey[r] = sc.treatmentKey(trt, r)
		sc.mod.add(modKey[r])
		sc.trt.add(trtKey[r])
		sc.rows++
	}
	for _, c := range sc.cands {
		col := byName[c.name]
		if c.dropped || col == nil {
			continue
		}
		for r, u := range usable {
			if !u || !hasValue(col, r) {
				continue
			}
			if col.Num != nil && col.Num[r] != math.Trunc(col.Num[r]) {
				sc.drop(c)
				break
			}
			k := sc.key(col, r)
			j, ok := c.index[k]
			if !ok {
				if sc.budget == 0 && sc.dropLargest() == c {
					break
				}
				sc.budget--
				j = int32(len(c.values))
				c.index[k] = j
				c.values = append(c.values, valueFacts{mod: modKey[r], trt: trtKey[r]})
			}
			v := &c.values[j]
			v.n++
			v.modMixed = v.modMixed || v.mod != modKey[r]
			v.trtMixed = v.trtMixed || v.trt != trtKey[r]
			c.rows++
		}
	}
}

// dropLargest leaves unchecked the column with the most values, which
// is the one nearest to an identifier of one row each, and returns it.
func (sc *groupingScan) dropLargest() *candidate {
	var largest *candidate
	for _, c := range sc.cands {
		if !c.dropped && (largest == nil || len(c.values) > len(largest.values)) {
			largest = c
		}
	}
	sc.drop(largest)
	return largest
}

// drop leaves a column unchecked and gives its values back to the budget.
func (sc *groupingScan) drop(c *candidate) {
	sc.budget += len(c.values)
	c.dropped, c.index, c.values = true, nil, nil
}

// key is row r's value of c as 64 bits: a number's bits (−0 as 0), or a
// text's hash.
func (sc *groupingScan) key(c *estimate.Column, r int) uint64 {
	if c.Num != nil {
		return math.Float64bits(c.Num[r] + 0)
	}
	return maphash.String(sc.seed, c.Text[r])
}

// treatmentKey is row r's treatment as the model reads it: treated or
// not for labels, the value itself otherwise.
func (sc *groupingScan) treatmentKey(c *estimate.Column, r int) uint64 {
	if sc.spec.Treatment.Kind != estimate.TreatmentLabels {
		return sc.key(c, r)
	}
	v := ""
	if c.Text != nil {
		v = c.Text[r]
	} else {
		v = fmt.Sprint(c.Num[r])
	}
	if v == sc.spec.Treatment.Treated {
		return 1
	}
	return 0
}

// result turns the counts into findings, strongest first.
func (sc *groupingScan) result() []report.Grouping {
	out := []report.Grouping{}
	for _, c := range sc.cands {
		if c.dropped || len(c.values) < 2 || c.rows == 0 {
			continue
		}
		ns := make([]int, len(c.values))
		single := true
		for i, v := range c.values {
			ns[i] = v.n
			single = single && v.n == 1
		}
		if single {
			continue
		}
		g := report.Grouping{Column: c.name, Groups: len(c.values), Rows: sc.rows, Cluster: c.cluster}
		modChance, trtChance := sc.mod.sameChance(ns, sc.rows), sc.trt.sameChance(ns, sc.rows)
		var modChanceShare, trtChanceShare float64
		modRows, trtRows := 0, 0
		for _, v := range c.values {
			w := float64(v.n) / float64(c.rows)
			modChanceShare += w * modChance[v.n]
			trtChanceShare += w * trtChance[v.n]
			if !v.modMixed {
				modRows += v.n
			}
			if !v.trtMixed {
				trtRows += v.n
			}
		}
		modSeen, trtSeen := float64(modRows)/float64(c.rows), float64(trtRows)/float64(c.rows)
		g.ModeratorShare, g.TreatmentShare = modSeen, trtSeen
		// A column that is the moderator or the treatment under another
		// name (as many values, each all of one) says nothing new.
		sameAsMod := modSeen == 1 && len(c.values) == len(sc.mod.n) && sc.mod.untracked == 0
		sameAsTrt := trtSeen == 1 && len(c.values) == len(sc.trt.n) && sc.trt.untracked == 0
		if (sameAsMod || sameAsTrt) && !c.cluster {
			continue
		}
		g.NestsModerator = beyondChance(modSeen, modChanceShare) >= nestShare
		g.NestsTreatment = beyondChance(trtSeen, trtChanceShare) >= nestShare
		g.RowsEach, g.Repeats = repeats(ns, c.rows)
		if g.NestsModerator || g.NestsTreatment || g.Repeats || g.Cluster {
			out = append(out, g)
		}
	}
	slices.SortStableFunc(out, func(a, b report.Grouping) int {
		return cmp.Or(
			-cmp.Compare(strength(a), strength(b)),
			-cmp.Compare(a.Groups, b.Groups))
	})
	return out
}

// beyondChance is the share seen beyond the share expected by chance,
// (s − e)/(1 − e), or 0 when chance alone gives every row.
func beyondChance(seen, chance float64) float64 {
	if chance >= 1 {
		return 0
	}
	return (seen - chance) / (1 - chance)
}

// strength ranks findings: nesting by the larger share it holds
// constant, above repeated units by the share of rows in the usual count.
func strength(g report.Grouping) float64 {
	switch {
	case g.NestsModerator && g.NestsTreatment:
		return 2 + max(g.ModeratorShare, g.TreatmentShare)
	case g.NestsModerator:
		return 1 + g.ModeratorShare
	case g.NestsTreatment:
		return 1 + g.TreatmentShare
	case g.Repeats:
		return 0.5
	}
	return 0
}

// repeats finds the count of rows most values hold and whether the
// column looks like an identifier of units seen several times: at least
// repeatShare of its rows in values of that count, from 2 to
// maxRepeatRows, and more values than rows in each (so that a column of
// periods, a few values of many rows, is not read as one).
func repeats(ns []int, rows int) (each int, ok bool) {
	byCount := map[int]int{}
	for _, n := range ns {
		byCount[n] += n
	}
	for n, r := range byCount {
		if r > byCount[each] || r == byCount[each] && n < each {
			each = n
		}
	}
	return each, each >= 2 && each <= maxRepeatRows && each < len(ns) && float64(byCount[each]) >= repeatShare*float64(rows)
}
