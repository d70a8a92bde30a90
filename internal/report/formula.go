package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"slopewise/internal/estimate"
)

// Where the sheet's formulas find their inputs: the estimates in column 2
// of the coefficients block, one row a coefficient below the headings; the
// covariance of the terms used in a block of its own, a row and a column
// a term.
const coefficientColumn = 2

// usedTerms are the indices of the coefficients that some effect or
// difference of res is built from, in the coefficients' order; nil when
// the result carries no contrasts that match its coefficients and their
// covariance (then the sheet holds values only).
func usedTerms(res *estimate.Result) []int {
	k := len(res.Coefficients)
	if len(res.Covariance) != k {
		return nil
	}
	used := make([]bool, k)
	mark := func(a []float64) bool {
		if len(a) != k {
			return false
		}
		for i, w := range a {
			if w != 0 {
				used[i] = true
			}
		}
		return true
	}
	for _, e := range res.Effects {
		if !mark(e.Contrast) {
			return nil
		}
	}
	for _, d := range res.Differences {
		if !mark(d.Contrast) {
			return nil
		}
	}
	var out []int
	for i, u := range used {
		if u {
			if len(res.Covariance[i]) != k {
				return nil
			}
			out = append(out, i)
		}
	}
	return out
}

// contrastCells returns the estimate and standard-error cells of a'b: the
// estimate as the sum of the weighted coefficient cells, the standard
// error as the square root of the weighted sum of the covariance cells
// (Σᵢ aᵢ²·Vᵢᵢ + Σᵢ<ⱼ 2·aᵢ·aⱼ·Vᵢⱼ), each holding the engine's value as
// the number to show; plain numbers when the sheet has no covariance
// block or the values are not numbers.
func (b *sheetBuilder) contrastCells(a []float64, est, se float64, format string) (Cell, Cell) {
	e, s := NumberCell(est, format), NumberCell(se, format)
	terms := b.usedTerms()
	if terms == nil || len(a) != len(b.res.Coefficients) || !finite(est) || !finite(se) {
		return e, s
	}
	pos := map[int]int{}
	for p, i := range terms {
		pos[i] = p
	}
	var nz []int
	for i, w := range a {
		if w != 0 {
			nz = append(nz, i)
		}
	}
	if len(nz) == 0 {
		return e, s
	}
	var sum strings.Builder
	for n, i := range nz {
		sum.WriteString(weighted(a[i], n, n == 0))
		e.Refs = append(e.Refs, Ref{Block: "coefficients" + b.keySuffix, Row: 1 + i, Col: coefficientColumn})
	}
	e.Formula = sum.String()
	var v strings.Builder
	n := 0
	for x, i := range nz {
		for _, j := range nz[x:] {
			w := a[i] * a[j]
			if i != j {
				w *= 2
			}
			v.WriteString(weighted(w, n, n == 0))
			s.Refs = append(s.Refs, Ref{Block: "covariance" + b.keySuffix, Row: 1 + pos[i], Col: 1 + pos[j]})
			n++
		}
	}
	s.Formula = "SQRT(" + v.String() + ")"
	return e, s
}

// weighted writes w·{n} as a term of a sum: "{0}", "-{1}", "+{2}",
// "+0.5*{3}".
func weighted(w float64, n int, first bool) string {
	ref := fmt.Sprintf("{%d}", n)
	sign := "+"
	if w < 0 {
		sign = "-"
	}
	if first && w > 0 {
		sign = ""
	}
	if a := math.Abs(w); a != 1 {
		ref = strconv.FormatFloat(a, 'g', -1, 64) + "*" + ref
	}
	return sign + ref
}

// covariance is the block of the estimated covariance of the terms that
// the effects and differences are built from, which their standard-error
// formulas read.
func (b *sheetBuilder) covariance() {
	res := b.res
	terms := b.usedTerms()
	if terms == nil {
		return
	}
	head := []Cell{HeadingCell("Term")}
	for _, i := range terms {
		head = append(head, HeadingCell(res.Coefficients[i].Term))
	}
	var vals []float64
	for _, i := range terms {
		for _, j := range terms {
			vals = append(vals, res.Covariance[i][j])
		}
	}
	f := numberFormat(vals)
	rows := [][]Cell{head}
	for _, i := range terms {
		row := []Cell{TextCell(res.Coefficients[i].Term)}
		for _, j := range terms {
			row = append(row, NumberCell(res.Covariance[i][j], f))
		}
		rows = append(rows, row)
	}
	rows = append(rows, []Cell{ParagraphCell("The standard errors of the effects and differences above are formulas over these cells: the square root of the sum of the variances and covariances of the terms each one adds up. "+seWords(res)+".", tableWidth)})
	b.add("covariance", "Covariance of the estimates", rows)
}

// formulaCaption is the one line under a table whose numbers are formulas.
const formulaCaption = "In the workbook, estimates and standard errors are formulas: an effect adds up coefficients of “All terms of the model” (for a group, the treatment's plus the group's interaction term); its standard error is the square root of the matching sum in “Covariance of the estimates”. Select a cell to see it."
