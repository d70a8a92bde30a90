package estimate

import (
	"math"
	"sort"
)

// AdjustHolm returns Holm's step-down adjusted p-values, in the order given
// (Holm 1979, Scand. J. Statistics 6): with p₍₁₎ ≤ … ≤ p₍ₘ₎,
//
//	p̃₍ᵢ₎ = max_{j≤i} min(1, (m − j + 1)·p₍ⱼ₎).
//
// It controls the family-wise error rate (METHODS §6).
func AdjustHolm(p []float64) []float64 {
	m := len(p)
	order := ascending(p)
	out := make([]float64, m)
	running := 0.0
	for j, i := range order {
		running = math.Max(running, math.Min(1, float64(m-j)*p[i]))
		out[i] = running
	}
	return out
}

// AdjustBH returns Benjamini–Hochberg adjusted p-values (q-values), in the
// order given (Benjamini & Hochberg 1995, JRSS B 57(1)):
//
//	p̃₍ᵢ₎ = min_{j≥i} min(1, m·p₍ⱼ₎ / j).
//
// It controls the false discovery rate (METHODS §6).
func AdjustBH(p []float64) []float64 {
	m := len(p)
	order := ascending(p)
	out := make([]float64, m)
	running := 1.0
	for j := m - 1; j >= 0; j-- {
		i := order[j]
		running = math.Min(running, math.Min(1, float64(m)*p[i]/float64(j+1)))
		out[i] = running
	}
	return out
}

// ascending returns the indices of p in increasing order of p, ties in
// their given order.
func ascending(p []float64) []int {
	order := make([]int, len(p))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return p[order[a]] < p[order[b]] })
	return order
}
