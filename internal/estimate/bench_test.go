package estimate

import (
	"context"
	"fmt"
	"math/rand/v2"
	"runtime"
	"testing"
)

// benchData is N rows for a K = 20 model: intercept, treatment, a
// four-group moderator (3 columns) and its interaction (3), 12 numeric
// controls; 1,000 clusters.
func benchData(n int) *Data {
	rng := rand.New(rand.NewPCG(11, 11))
	groups := []string{"a", "b", "c", "d"}
	cols := []Column{{Name: "y"}, {Name: "t"}, {Name: "g"}, {Name: "site"}}
	controls := make([]Column, 12)
	for j := range controls {
		controls[j] = Column{Name: fmt.Sprintf("c%d", j+1), Num: make([]float64, n)}
	}
	cols[0].Num = make([]float64, n)
	cols[1].Num = make([]float64, n)
	cols[2].Text = make([]string, n)
	cols[3].Num = make([]float64, n)
	for i := 0; i < n; i++ {
		t := float64(rng.IntN(2))
		g := rng.IntN(4)
		y := 1 + t*(0.5+0.2*float64(g)) + rng.NormFloat64()
		for j := range controls {
			v := rng.NormFloat64()
			controls[j].Num[i] = v
			y += 0.1 * v
		}
		cols[0].Num[i], cols[1].Num[i], cols[2].Text[i] = y, t, groups[g]
		cols[3].Num[i] = float64(rng.IntN(1000))
	}
	return &Data{Columns: append(cols, controls...)}
}

func benchSpec() Spec {
	s := Spec{Outcome: "y", Treatment: Treatment{Column: "t"},
		Moderator: Moderator{Column: "g", Kind: ModeratorCategorical}}
	for j := 1; j <= 12; j++ {
		s.Controls = append(s.Controls, fmt.Sprintf("c%d", j))
	}
	return s
}

// BenchmarkFit times the whole fit (design, QR with refinement, variance,
// effects, tests) on 1,000,000 rows and K = 20, with HC3 and with CR1 on
// 1,000 clusters.
func BenchmarkFit(b *testing.B) {
	d := benchData(1_000_000)
	for _, vt := range []VarianceType{HC3, CR1} {
		b.Run(string(vt), func(b *testing.B) {
			s := benchSpec()
			s.Variance = vt
			if vt == CR1 {
				s.Cluster = "site"
			}
			// Collect the garbage of generating the data, so that it is not
			// charged to whichever variance type runs first.
			runtime.GC()
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				res, err := Fit(d, s)
				if err != nil {
					b.Fatal(err)
				}
				if len(res.Coefficients) != 20 {
					b.Fatalf("K = %d", len(res.Coefficients))
				}
			}
		})
	}
}

// bootBenchData is N rows for a K = 10 model (intercept, treatment, a 0/1
// moderator, its interaction, 6 numeric controls) in 30 clusters.
func bootBenchData(n int) *Data {
	rng := rand.New(rand.NewPCG(30, 10))
	cols := []Column{{Name: "y", Num: make([]float64, n)}, {Name: "t", Num: make([]float64, n)},
		{Name: "m", Num: make([]float64, n)}, {Name: "site", Num: make([]float64, n)}}
	controls := make([]Column, 6)
	for j := range controls {
		controls[j] = Column{Name: fmt.Sprintf("c%d", j+1), Num: make([]float64, n)}
	}
	u := make([]float64, 30)
	for g := range u {
		u[g] = rng.NormFloat64()
	}
	for i := range n {
		g := rng.IntN(30)
		t, m := float64(rng.IntN(2)), float64(rng.IntN(2))
		y := u[g] + t*(0.5+0.3*m) + 0.2*m + rng.NormFloat64()
		for j := range controls {
			v := rng.NormFloat64()
			controls[j].Num[i] = v
			y += 0.1 * v
		}
		cols[0].Num[i], cols[1].Num[i], cols[2].Num[i], cols[3].Num[i] = y, t, m, float64(g)
	}
	return &Data{Columns: append(cols, controls...)}
}

// BenchmarkBootstrap times the whole fit with the wild cluster bootstrap on
// G = 30 clusters, N = 100,000 rows, K = 10 terms and B = 9,999 draws:
// two effects, one difference and the test that the effects are equal,
// each with its p-value and (but the test) its interval by test inversion.
// Issue 6 asks for under 10 s.
func BenchmarkBootstrap(b *testing.B) {
	d := bootBenchData(100_000)
	s := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "m", Kind: ModeratorBinary},
		Controls: []string{"c1", "c2", "c3", "c4", "c5", "c6"}, Cluster: "site"}
	runtime.GC()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		res, err := Fit(d, s)
		if err != nil {
			b.Fatal(err)
		}
		if res.Bootstrap == nil || res.Bootstrap.Draws != 9999 || len(res.Coefficients) != 10 {
			b.Fatalf("bootstrap %+v, K = %d", res.Bootstrap, len(res.Coefficients))
		}
	}
}

// BenchmarkUnitEffects fits a before-and-after design with unit effects
// and CR1 by unit on 1,000,000 rows of 100,000 units (10 periods, 5 after
// the start): in memory (Fit) and streamed in chunks of 8,192 rows
// (FitStream, one pass more for the unit means). bench/did.sh times the
// whole headless run beside statsmodels.
func BenchmarkUnitEffects(b *testing.B) {
	d := panelYears(100_000, 10, 3)
	s := panelSpec()
	s.UnitEffects = true
	b.Run("Fit", func(b *testing.B) {
		b.ReportAllocs()
		for range b.N {
			if _, err := Fit(d, s); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("FitStream", func(b *testing.B) {
		b.ReportAllocs()
		for range b.N {
			if _, err := FitStream(context.Background(), &sliced{d: d, size: 8192}, s); err != nil {
				b.Fatal(err)
			}
		}
	})
}
