package estimate

import "fmt"

// More than one period before the start (METHODS §10). With a period
// column of more than two values, After names the first period after the
// start, and every period from it on (in level order) is after. The model
// then replaces the period's one column by one indicator a period (the
// last one before the start, the reference, left out), and adds the
// leads: the programme's units × each earlier period before the start.
// Each lead is the gap between the programme's units and the comparison
// units in that period, less their gap in the last period before the
// start; under common trends every lead is zero, so the leads and their
// joint Wald test are the check of that assumption the data can give
// (Angrist & Pischke 2009, ch. 5). The effect, T·P, is then the change
// from the last period before the start to the periods after it.

// role of the leads' columns.
const roleLead = "lead"

// LeadsCheck is the check of common trends in the periods before the
// start.
type LeadsCheck struct {
	// Reference is the last period before the start, against which each
	// lead is measured.
	Reference string `json:"reference"`
	Leads     []Lead `json:"leads"`
	// Test is the joint Wald test that every lead is zero; nil when it
	// cannot be computed or judged (NotJudged then says why).
	Test      *WaldTest  `json:"test,omitempty"`
	NotJudged *NotJudged `json:"not_judged,omitempty"`
	// Contradicts is true when the test rejects at α (by its bootstrap
	// p-value when the bootstrap ran): the data before the start
	// contradict common trends.
	Contradicts bool `json:"contradicts"`
}

// Lead is the gap between the programme's units and the comparison units
// in one period before the start, less their gap in the reference period.
type Lead struct {
	Period string `json:"period"`
	// Arm names the arm, with several arms.
	Arm string `json:"arm,omitempty"`
	Inference
}

// readPeriods reads a period column of more than two values; many is
// false (and nothing read) when it has two.
func (ds *design) readPeriods(c *Column, s Spec) (many bool, err error) {
	seen := map[string]int{}
	for _, i := range ds.used {
		seen[c.key(i)]++
	}
	labels := sortedLevels(seen)
	if len(labels) <= 2 {
		return false, nil
	}
	after, ok := findLevel(labels, s.After)
	if !ok {
		return true, fail(ErrValues, c.Name, fmt.Sprintf("The value %q, chosen as after, does not appear in the period column %q among the rows used; its values are %s.", ShortLabel(s.After), c.Name, quoteList(labels)))
	}
	first := levelIndex(labels, after)
	if first == 0 {
		return true, fail(ErrValues, c.Name, fmt.Sprintf("The value %q, chosen as the first period after the start, is the earliest of the period column %q (%s), so no row is from before the start. Name the first period after the start.", ShortLabel(after), c.Name, quoteList(labels)))
	}
	index := map[string]int{}
	for j, l := range labels {
		index[l] = j
	}
	ds.periodLevels, ds.refPeriod = labels, first-1
	ds.periodLevel = make([]int, ds.n)
	ds.period = make([]float64, ds.n)
	for r, i := range ds.used {
		j := index[c.key(i)]
		ds.periodLevel[r] = j
		if j >= first {
			ds.period[r] = 1
		}
	}
	return true, nil
}

// addPeriods adds one indicator a period but the reference, and returns
// the name of the after term: "year ≥ 2023".
func (ds *design) addPeriods(s Spec, add func(name, role string, f fill) int) string {
	for j, l := range ds.periodLevels {
		if j == ds.refPeriod {
			continue
		}
		add(fmt.Sprintf("%s = %s", s.Period, l), rolePeriod, func(x []float64, col, k, from, to int) {
			for r := from; r < to; r++ {
				if ds.periodLevel[r] == j {
					x[r*k+col] = 1
				}
			}
		})
	}
	return fmt.Sprintf("%s ≥ %s", s.Period, ds.periodLevels[ds.refPeriod+1])
}

// addLeads adds the leads of group g (the treated rows, or arm a): g ×
// each period before the reference.
func (ds *design) addLeads(s Spec, g treatGroup, a int, add func(name, role string, f fill) int) {
	for j := 0; j < ds.refPeriod; j++ {
		name := fmt.Sprintf("%s × %s = %s", g.name, s.Period, ds.periodLevels[j])
		ds.leadCols = append(ds.leadCols, add(name, roleLead, func(x []float64, col, k, from, to int) {
			for r := from; r < to; r++ {
				if ds.periodLevel[r] == j {
					x[r*k+col] = g.is(r)
				}
			}
		}))
		ds.leadLevels = append(ds.leadLevels, j)
		ds.leadArms = append(ds.leadArms, a)
	}
}

// leadsCheck reads the leads and their joint test from the fit.
func (ds *design) leadsCheck(s Spec, in *inferencer) *LeadsCheck {
	if ds.periodLevels == nil {
		return nil
	}
	lc := &LeadsCheck{Reference: ds.periodLevels[ds.refPeriod], Leads: []Lead{}}
	for l, j := range ds.leadCols {
		a := make([]float64, ds.k)
		a[j] = 1
		lead := Lead{Period: ds.periodLevels[ds.leadLevels[l]], Inference: in.combo(a)}
		if ds.arms != nil {
			lead.Arm = ds.armLabels[ds.leadArms[l]]
		}
		lc.Leads = append(lc.Leads, lead)
	}
	if len(ds.leadCols) == 0 {
		return lc
	}
	if nj := judgeJoint(len(ds.leadCols), len(ds.clusterLabels)); nj != nil {
		lc.NotJudged = nj
	} else if w, ok := in.wald(ds.leadCols); ok {
		lc.Test = &w
		lc.Contradicts = w.P < s.Alpha
	}
	return lc
}
