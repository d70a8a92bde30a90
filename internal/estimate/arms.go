package estimate

import (
	"fmt"
	"strings"
)

// A treatment of several arms (METHODS §11): a column of two or more arms,
// one of them the comparison. The model is
//
//	y = b0 + Σ_a b_a·A_a + M + Σ_a A_a×M + controls + e,
//
// columns in that order (the interactions arm by arm), so that arm a's
// effect in group l is b_a + b_{a×M,l}, the differences between groups
// for arm a are its interaction coefficients, its own heterogeneity F
// tests them, and the joint F tests every interaction at once. The
// arms' heterogeneity p-values are adjusted by Holm (1979) over the arms.

// armTerms are one arm's columns of the model.
type armTerms struct {
	label string
	tCol  int
	iCols []int
}

// ArmResult is what is said of one arm beyond its effects and
// differences (which carry its name): whether its effect is the same in
// every group.
type ArmResult struct {
	Arm string `json:"arm"`
	// Rows used in the arm.
	Rows          int       `json:"rows"`
	Heterogeneity *WaldTest `json:"heterogeneity,omitempty"`
	// HeterogeneityNotJudged is set instead when its terms outnumber what
	// the clusters can judge (joint.go).
	HeterogeneityNotJudged *NotJudged `json:"heterogeneity_not_judged,omitempty"`
	// HolmP is the heterogeneity p-value adjusted by Holm over the arms
	// (the bootstrap's p-value when it ran); 1 when it cannot be computed.
	HolmP float64 `json:"holm_p"`
}

// armName is arm a's term name: "column = label".
func armName(s Spec, label string) string {
	return fmt.Sprintf("%s = %s", s.Treatment.Column, label)
}

// readArms reads a treatment of several arms: the comparison arm named,
// the others in level order.
func (ds *design) readArms(d *Data, s Spec, c *Column) error {
	seen := map[string]int{}
	for _, i := range ds.used {
		seen[c.key(i)]++
	}
	labels := sortedLevels(seen)
	control, ok := findLevel(labels, s.Treatment.Control)
	if !ok {
		return fail(ErrValues, c.Name, fmt.Sprintf("The arm %q, chosen as the comparison, does not appear in the treatment column %q among the rows used; its arms are %s.", ShortLabel(s.Treatment.Control), c.Name, quoteList(labels)))
	}
	if len(labels) < 2 {
		return fail(ErrConstant, c.Name, fmt.Sprintf("The treatment column %q holds only the comparison arm %q among the rows used, so there is nothing to compare it with.", c.Name, ShortLabel(control)))
	}
	index := map[string]int{}
	for _, l := range labels {
		if l != control {
			ds.armLabels = append(ds.armLabels, l)
			index[l] = len(ds.armLabels)
		}
	}
	ds.arm = make([]int, ds.n)
	ds.treat = make([]float64, ds.n)
	for r, i := range ds.used {
		if a := index[c.key(i)]; a > 0 {
			ds.arm[r], ds.treat[r] = a, 1
		}
	}
	return nil
}

// checkArms refuses groups in which an arm has no rows (in a
// before-and-after design, no rows before or after the start): its effect
// there cannot be estimated.
func (ds *design) checkArms(d *Data, s Spec) error {
	if ds.arm == nil || ds.modLevel == nil {
		return nil
	}
	arms := len(ds.armLabels) + 1
	count := make([]int, len(ds.levels)*arms*2)
	for r, l := range ds.modLevel {
		p := 0
		if ds.period != nil {
			p = int(ds.period[r])
		}
		count[(l*arms+ds.arm[r])*2+p]++
	}
	var problems []string
	for l, level := range ds.levels {
		for a := 0; a < arms; a++ {
			arm := s.Treatment.Control
			if a > 0 {
				arm = ds.armLabels[a-1]
			}
			before, after := count[(l*arms+a)*2], count[(l*arms+a)*2+1]
			switch {
			case before+after == 0:
				problems = append(problems, fmt.Sprintf("group %q has no rows of the arm %q", ShortLabel(level), ShortLabel(arm)))
			case ds.period != nil && before == 0:
				problems = append(problems, fmt.Sprintf("group %q has no rows of the arm %q before the start", ShortLabel(level), ShortLabel(arm)))
			case ds.period != nil && after == 0:
				problems = append(problems, fmt.Sprintf("group %q has no rows of the arm %q after the start", ShortLabel(level), ShortLabel(arm)))
			}
		}
	}
	if problems != nil {
		return fail(ErrNoContrast, s.Moderator.Column, fmt.Sprintf("Each arm's effect cannot be estimated in every group of %q: %s. Each group needs rows of every arm; merge small groups with a neighbour or leave them out.", s.Moderator.Column, joinProblems(problems)))
	}
	return nil
}

func joinProblems(ps []string) string {
	const show = 6
	if len(ps) > show {
		return fmt.Sprintf("%s; and %d more", strings.Join(ps[:show], "; "), len(ps)-show)
	}
	return strings.Join(ps, "; ")
}

// armEffects fills each arm's effects and differences (named by the arm)
// and its heterogeneity test, Holm-adjusted over the arms.
func (ds *design) armEffects(s Spec, in *inferencer, res *Result, facts *rowFacts) {
	counts := make([][]int, len(ds.armLabels)+1) // by arm, by level
	for a := range counts {
		counts[a] = make([]int, len(ds.levels))
	}
	for r, l := range ds.modLevel {
		counts[ds.arm[r]][l]++
	}
	for a, at := range ds.arms {
		arm := at.label
		first, firstDiff := len(res.Effects), len(res.Differences)
		ds.groupEffectsOf(s, in, res, facts, at.tCol, at.iCols)
		for i := first; i < len(res.Effects); i++ {
			e := &res.Effects[i]
			e.Arm = arm
			j := levelIndex(ds.levels, e.Group)
			e.Treated, e.Untreated, e.Rows = counts[a+1][j], counts[0][j], counts[a+1][j]+counts[0][j]
		}
		for i := firstDiff; i < len(res.Differences); i++ {
			res.Differences[i].Arm = arm
		}
		ar := ArmResult{Arm: arm, HolmP: 1}
		for _, n := range counts[a+1] {
			ar.Rows += n
		}
		if nj := judgeJoint(len(at.iCols), len(ds.clusterLabels)); nj != nil {
			ar.HeterogeneityNotJudged = nj
		} else if w, ok := in.wald(at.iCols); ok {
			ar.Heterogeneity = &w
		}
		res.Arms = append(res.Arms, ar)
	}
	adjustArms(res)
}

// adjustArms adjusts the arms' heterogeneity p-values by Holm over the
// arms (METHODS §11): the bootstrap's when it ran, 1 when there is none.
func adjustArms(res *Result) {
	ps := make([]float64, len(res.Arms))
	for a, ar := range res.Arms {
		ps[a] = 1
		if h := ar.Heterogeneity; h != nil {
			ps[a] = h.P
			if h.PBoot != nil {
				ps[a] = *h.PBoot
			}
		}
	}
	for a, p := range AdjustHolm(ps) {
		res.Arms[a].HolmP = p
	}
}

func levelIndex(levels []string, l string) int {
	for j, v := range levels {
		if v == l {
			return j
		}
	}
	return -1
}
