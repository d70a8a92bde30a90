package estimate

import (
	"math"
	"sort"
)

// JohnsonNeyman is the Johnson–Neyman analysis of a continuous moderator:
// the moderator values where the treatment's effect is distinguishable
// from zero at level α (Johnson & Neyman 1936; Bauer & Curran 2005,
// Multivariate Behavioral Research 40(3)).
//
// With u = m − c (c the centre), θ(u) = b1 + b3·u and
// Var θ(u) = V11 + 2u·V13 + u²·V33, the bounds solve
//
//	(b3² − t²V33)u² + 2(b1b3 − t²V13)u + (b1² − t²V11) = 0.
//
// If the leading coefficient is positive the effect is significant outside
// the roots, if negative between them; with no real roots, everywhere or
// nowhere (METHODS §5). A positive leading coefficient with no real roots
// cannot occur with a positive variance (θ crosses zero somewhere and is not
// significant there), so "everywhere" arises only in the degenerate linear
// case; "significant across the observed range" is read from Regions.
type JohnsonNeyman struct {
	// Case is "outside" (significant outside the roots), "between"
	// (significant between them), "everywhere", "nowhere", or "one-sided"
	// (the leading coefficient is zero: one root).
	Case string `json:"case"`
	// Roots are the real roots in moderator units, in increasing order,
	// whether or not they fall inside the observed range.
	Roots []float64 `json:"roots,omitempty"`
	// Min and Max are the observed range of the moderator.
	Min float64 `json:"min"`
	Max float64 `json:"max"`
	// Regions split the observed range into stretches where the effect is
	// or is not distinguishable from zero.
	Regions []Region `json:"regions"`
}

// Region is a stretch of the moderator's observed range.
type Region struct {
	From        float64 `json:"from"`
	To          float64 `json:"to"`
	Significant bool    `json:"significant"`
	// Sign is the sign of the effect in the middle of the stretch: +1 or −1.
	Sign int `json:"sign"`
}

// johnsonNeyman computes the analysis for the effect b1 + b3·(m − c)
// whose coefficients are at index i (b1) and j (b3).
func johnsonNeyman(in *inferencer, i, j int, centre, lo, hi float64) *JohnsonNeyman {
	k := in.k
	b1, b3 := in.coef[i], in.coef[j]
	v11, v13, v33 := in.v[i*k+i], in.v[i*k+j], in.v[j*k+j]
	t2 := in.tcrit * in.tcrit
	a := b3*b3 - t2*v33
	b := 2 * (b1*b3 - t2*v13)
	c := b1*b1 - t2*v11
	jn := &JohnsonNeyman{Min: lo, Max: hi}

	var roots []float64
	switch disc := b*b - 4*a*c; {
	case a == 0 && b != 0:
		jn.Case = "one-sided"
		roots = []float64{-c / b}
	case a == 0:
		jn.Case = "nowhere"
		if c > 0 {
			jn.Case = "everywhere"
		}
	case disc < 0:
		jn.Case = "nowhere"
		if a > 0 {
			jn.Case = "everywhere"
		}
	default:
		// The root formula that avoids cancellation (Press et al.,
		// Numerical Recipes, 3rd ed., §5.6).
		q := -(b + math.Copysign(math.Sqrt(disc), b)) / 2
		r1, r2 := q/a, c/q
		if q == 0 {
			r2 = r1
		}
		roots = []float64{r1, r2}
		jn.Case = "between"
		if a > 0 {
			jn.Case = "outside"
		}
	}
	for _, r := range roots {
		jn.Roots = append(jn.Roots, r+centre)
	}
	sort.Float64s(jn.Roots)

	// Split the observed range at the roots inside it and label each piece
	// by the sign of the quadratic (significant where it is positive).
	cuts := []float64{lo}
	for _, r := range jn.Roots {
		if r > lo && r < hi {
			cuts = append(cuts, r)
		}
	}
	cuts = append(cuts, hi)
	for p := 0; p+1 < len(cuts); p++ {
		u := (cuts[p]+cuts[p+1])/2 - centre
		sign := 1
		if b1+b3*u < 0 {
			sign = -1
		}
		jn.Regions = append(jn.Regions, Region{
			From: cuts[p], To: cuts[p+1],
			Significant: a*u*u+b*u+c > 0,
			Sign:        sign,
		})
	}
	return jn
}
