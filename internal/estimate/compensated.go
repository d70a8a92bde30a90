package estimate

import "math"

// Compensated arithmetic for the refinement step. Residuals of an accurate
// least-squares solution are the small difference of large numbers; computed
// in plain float64 they lose the digits that refinement is meant to win.
// dot2 evaluates a dot product as if in twice the working precision
// (Ogita, Rump & Oishi 2005, "Accurate sum and dot product", SIAM J. Sci.
// Comput. 26(6), Algorithm 5.3 "Dot2"), using math.FMA for the exact
// product error (TwoProduct) and Knuth's TwoSum for the exact sum error.

// twoSum returns s = fl(a+b) and the exact rounding error e, a+b = s+e.
func twoSum(a, b float64) (s, e float64) {
	s = a + b
	z := s - a
	e = (a - (s - z)) + (b - z)
	return s, e
}

// acc is a compensated accumulator: the running sum and its error term.
type acc struct{ s, c float64 }

// addProd adds a·b exactly up to the final rounding of the compensation.
func (a *acc) addProd(x, y float64) {
	p := x * y
	pe := math.FMA(x, y, -p)
	var se float64
	a.s, se = twoSum(a.s, p)
	a.c += pe + se
}

// add adds x with its rounding error kept.
func (a *acc) add(x float64) {
	var se float64
	a.s, se = twoSum(a.s, x)
	a.c += se
}

func (a *acc) value() float64 { return a.s + a.c }
