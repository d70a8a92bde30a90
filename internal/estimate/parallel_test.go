package estimate

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"reflect"
	"runtime"
	"testing"
)

// TestSameOnAnyNumberOfCores fits specs on data of several blocks of rows
// (parallel.go) with one core and with four, and requires the results, as
// JSON, to be the same to the byte: blocks are fixed by the number of rows
// and their partial results combined in block order, so the number of
// goroutines must change nothing.
func TestSameOnAnyNumberOfCores(t *testing.T) {
	n := 3*blockRows + 1234
	d := streamData(n)
	// c3 is nearly 2·c1 + 1 (condition estimate above condRefine, so the
	// inverse cross-product is refined too); c4 is exactly that (aliased).
	rng := rand.New(rand.NewPCG(3, 4))
	c1 := d.Columns[4].Num
	c3 := Column{Name: "c3", Num: make([]float64, n)}
	c4 := Column{Name: "c4", Num: make([]float64, n)}
	for i, v := range c1 {
		c3.Num[i] = 2*v + 1 + 1e-4*rng.NormFloat64()
		c4.Num[i] = 2*v + 1
	}
	d.Columns = append(d.Columns, c3, c4)
	base := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical},
		Controls: []string{"c1", "c2"}}
	cases := []struct {
		name   string
		change func(*Spec)
	}{
		{"HC3", func(s *Spec) {}},
		{"HC2", func(s *Spec) { s.Variance = HC2 }},
		{"CR1", func(s *Spec) { s.Cluster = "site name" }},
		{"weights", func(s *Spec) { s.Weights = "w" }},
		{"text control", func(s *Spec) { s.Controls = append(s.Controls, "kind") }},
		{"continuous moderator", func(s *Spec) {
			s.Moderator, s.Controls = Moderator{Column: "c2", Kind: ModeratorContinuous}, []string{"c1"}
		}},
		{"nearly collinear", func(s *Spec) { s.Controls = append(s.Controls, "c3") }},
		{"aliased", func(s *Spec) { s.Controls = append(s.Controls, "c4") }},
	}
	type outcome struct {
		res *Result
		err error
	}
	fit := func(procs int, s Spec) outcome {
		defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(procs))
		res, err := FitContext(context.Background(), d, s, nil)
		return outcome{res, err}
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := base
			s.Controls = append([]string(nil), base.Controls...)
			c.change(&s)
			one, four := fit(1, s), fit(4, s)
			if one.err != nil || four.err != nil {
				if !reflect.DeepEqual(one.err, four.err) {
					t.Errorf("errors differ between 1 and 4 cores:\n%v\n%v", one.err, four.err)
				}
				if c.name != "aliased" {
					t.Error(one.err)
				}
				return
			}
			// JSON, as the results are saved, when it can be written (it
			// cannot hold the infinities of some Johnson–Neyman bounds),
			// and every number to the bit.
			a, errA := json.Marshal(one.res)
			b, errB := json.Marshal(four.res)
			if errA == nil && errB == nil && !bytes.Equal(a, b) {
				t.Errorf("JSON differs between 1 and 4 cores:\n%s\n%s", a, b)
			}
			compareResultsWithin(t, "4 cores", four.res, one.res, 0)
			if c.name == "nearly collinear" && one.res.Model.Condition <= condRefine {
				t.Errorf("condition estimate %.3g, want above %g (refinement of the inverse)", one.res.Model.Condition, condRefine)
			}
		})
	}
}

// TestFitStreamEqualsFitBlocks is TestFitStreamEqualsFit on data of
// several blocks of rows, where the streamed fit must merge its blocks'
// triangles and sum its blocks' sandwich parts as Fit does. (CR1 is left
// out: its code is the same for one block or many, and at this size a few
// small off-diagonal covariances, the difference of large cluster scores,
// already differed by a few 1e-10 between the two fits before blocks.)
func TestFitStreamEqualsFitBlocks(t *testing.T) {
	d := streamData(3*blockRows + 1234)
	base := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical},
		Controls: []string{"c1", "c2"}}
	for name, change := range map[string]func(*Spec){
		"HC3":     func(s *Spec) {},
		"weights": func(s *Spec) { s.Weights, s.Variance = "w", HC1 },
	} {
		t.Run(name, func(t *testing.T) {
			s := base
			change(&s)
			want, err := Fit(d, s)
			if err != nil {
				t.Fatal(err)
			}
			got, err := FitStream(context.Background(), &sliced{d: d, size: 777}, s)
			if err != nil {
				t.Fatal(err)
			}
			compareResults(t, "chunks of 777", got, want)
		})
	}
}

// TestFitStreamSameOnAnyNumberOfCores checks that the streamed fit, whose
// chunks are worked on side by side (streampipe.go), gives the same result
// to the bit with one core and with four, on several chunks and blocks of
// rows, with chunks that do not line up with the blocks.
func TestFitStreamSameOnAnyNumberOfCores(t *testing.T) {
	d := streamData(3*blockRows + 1234)
	base := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical},
		Controls: []string{"c1", "c2"}}
	fit := func(procs, size int, s Spec) *Result {
		t.Helper()
		defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(procs))
		res, err := FitStream(context.Background(), &sliced{d: d, size: size}, s)
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	for name, change := range map[string]func(*Spec){
		"HC3":     func(s *Spec) {},
		"CR1":     func(s *Spec) { s.Cluster = "site name" },
		"weights": func(s *Spec) { s.Weights, s.Controls = "w", []string{"c1", "kind", "c2"} },
	} {
		t.Run(name, func(t *testing.T) {
			s := base
			change(&s)
			for _, size := range []int{777, 8192} {
				one, four := fit(1, size, s), fit(4, size, s)
				a, errA := json.Marshal(one)
				b, errB := json.Marshal(four)
				if errA == nil && errB == nil && !bytes.Equal(a, b) {
					t.Errorf("chunks of %d: JSON differs between 1 and 4 cores:\n%s\n%s", size, a, b)
				}
				compareResultsWithin(t, fmt.Sprintf("chunks of %d, 4 cores", size), four, one, 0)
			}
		})
	}
}

// TestLeverageIsSolveRT checks that leverage, which solves four rows side
// by side (leverageRows, as the streamed fit does a chunk's rows), gives
// for every row exactly what solveRT gives it alone, on blocks whose ends
// fall inside a group of four.
func TestLeverageIsSolveRT(t *testing.T) {
	n := 2*blockRows + 3
	d := streamData(n)
	s, err := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical},
		Controls: []string{"c1", "c2", "kind"}}.withDefaults()
	if err != nil {
		t.Fatal(err)
	}
	ds, err := buildDesign(d, s)
	if err != nil {
		t.Fatal(err)
	}
	if ds.n%4 == 0 {
		t.Fatalf("%d rows used: a multiple of four", ds.n)
	}
	f, aliased := fitLS(ds.x, ds.y, ds.n, ds.k)
	if aliased != nil {
		t.Fatal(aliased)
	}
	h := f.leverage()
	k, q := f.k, f.qr
	u := make([]float64, k)
	for i := range ds.n {
		for j, p := range q.perm {
			u[j] = ds.x[i*k+p] / q.d[p]
		}
		q.solveRT(u)
		var want float64
		for _, v := range u {
			want += v * v
		}
		if h[i] != want {
			t.Fatalf("row %d: leverage %.17g, solveRT %.17g", i, h[i], want)
		}
	}
}
