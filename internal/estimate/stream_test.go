package estimate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"sync"
	"testing"
)

// sliced serves a Data in chunks of a fixed number of rows, reusing the
// chunk values it is handed back, as a file reader would. A chunk handed
// back is emptied at once, so that a fit still reading it fails.
type sliced struct {
	d      *Data
	size   int
	passes int
	mu     sync.Mutex
	spare  []*Data
}

func (s *sliced) Pass(ctx context.Context, each func(*Data, func()) error) error {
	s.passes++
	n, err := s.d.rows()
	if err != nil {
		return err
	}
	for start := 0; start < n; start += s.size {
		end := min(n, start+s.size)
		chunk := s.chunk()
		for j, c := range s.d.Columns {
			cc := Column{Name: c.Name}
			if c.Num != nil {
				cc.Num = c.Num[start:end]
			}
			if c.Text != nil && len(c.Text) == n {
				cc.Text = c.Text[start:end]
			}
			if c.Why != nil {
				cc.Why = c.Why[start:end]
			}
			chunk.Columns[j] = cc
		}
		chunk.RowLabels = nil
		if s.d.RowLabels != nil {
			chunk.RowLabels = s.d.RowLabels[start:end]
		} else {
			chunk.RowLabels = make([]int, end-start)
			for i := range chunk.RowLabels {
				chunk.RowLabels[i] = start + i + 1
			}
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		released := false
		if err := each(chunk, func() {
			if released {
				panic("a chunk released twice")
			}
			released = true
			s.mu.Lock()
			defer s.mu.Unlock()
			clear(chunk.Columns)
			chunk.RowLabels = nil
			s.spare = append(s.spare, chunk)
		}); err != nil {
			return err
		}
	}
	return nil
}

// chunk returns a chunk handed back, or a new one.
func (s *sliced) chunk() *Data {
	s.mu.Lock()
	defer s.mu.Unlock()
	if k := len(s.spare); k > 0 {
		d := s.spare[k-1]
		s.spare = s.spare[:k-1]
		return d
	}
	return &Data{Columns: make([]Column, len(s.d.Columns))}
}

// streamData is N rows with a text moderator of four groups, a numeric
// 0/1 moderator, a treatment as 0/1 and as labels, a dose, numeric and
// text controls, 60 clusters (numbered and named), weights, and some
// missing cells with and without a reason.
func streamData(n int) *Data {
	rng := rand.New(rand.NewPCG(5, 17))
	col := func(name string) Column { return Column{Name: name, Num: make([]float64, n)} }
	y, t, dose, m01, c1, c2, site, w := col("y"), col("t"), col("dose"), col("m01"), col("c1"), col("c2"), col("site"), col("w")
	g := Column{Name: "g", Text: make([]string, n)}
	arm := Column{Name: "arm", Text: make([]string, n)}
	kind := Column{Name: "kind", Text: make([]string, n)}
	siteName := Column{Name: "site name", Text: make([]string, n)}
	groups := []string{"north", "south", "east", "west"}
	u := make([]float64, 60)
	for i := range u {
		u[i] = rng.NormFloat64()
	}
	for i := range n {
		gi, s := rng.IntN(4), rng.IntN(60)
		ti := float64(rng.IntN(2))
		t.Num[i], dose.Num[i] = ti, float64(rng.IntN(5))
		m01.Num[i] = float64(rng.IntN(2))
		c1.Num[i], c2.Num[i] = rng.NormFloat64()*100+1000, rng.ExpFloat64()
		g.Text[i] = groups[gi]
		arm.Text[i] = map[bool]string{true: "coached", false: "waiting"}[ti == 1]
		kind.Text[i] = []string{"a", "b", "c"}[rng.IntN(3)]
		site.Num[i] = float64(100 + s)
		siteName.Text[i] = fmt.Sprintf("site %02d", s)
		w.Num[i] = 0.5 + rng.Float64()
		y.Num[i] = 3 + ti*(1+0.3*float64(gi)) + 0.2*dose.Num[i] + 0.001*c1.Num[i] + u[s] + rng.NormFloat64()*(1+ti)
	}
	y.Why = make([]string, n)
	for i := 0; i < n; i += 97 {
		y.Num[i] = math.NaN()
		if i%2 == 0 {
			y.Why[i] = "a spreadsheet error value"
		}
	}
	for i := 5; i < n; i += 211 {
		g.Text[i] = ""
		c2.Num[i] = math.Inf(1)
	}
	return &Data{Columns: []Column{y, t, dose, m01, c1, c2, site, w, g, arm, kind, siteName}}
}

// TestFitStreamEqualsFit checks that the streamed fit gives Fit's results:
// every number to 1e-10 relative (the coefficients differ by rounding
// only: the same R, one seminormal correction instead of refinement), and
// everything else exactly.
func TestFitStreamEqualsFit(t *testing.T) {
	d := streamData(5000)
	base := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical},
		Controls: []string{"c1", "c2"}}
	cases := map[string]func(*Spec){
		"HC3":                 func(s *Spec) {},
		"HC0":                 func(s *Spec) { s.Variance = HC0 },
		"HC1":                 func(s *Spec) { s.Variance = HC1 },
		"HC2":                 func(s *Spec) { s.Variance = HC2 },
		"classical":           func(s *Spec) { s.Variance = Classical },
		"CR1 numbered":        func(s *Spec) { s.Cluster = "site" },
		"CR1 named":           func(s *Spec) { s.Cluster = "site name" },
		"weights":             func(s *Spec) { s.Weights = "w" },
		"text control":        func(s *Spec) { s.Controls = append(s.Controls, "kind") },
		"labels":              func(s *Spec) { s.Treatment = Treatment{Column: "arm", Treated: "coached"} },
		"dose":                func(s *Spec) { s.Treatment = Treatment{Column: "dose", Kind: TreatmentContinuous} },
		"0/1 moderator":       func(s *Spec) { s.Moderator = Moderator{Column: "m01", Kind: ModeratorBinary} },
		"reference":           func(s *Spec) { s.Moderator.Reference = "west" },
		"everything together": func(s *Spec) { s.Weights, s.Cluster, s.Controls = "w", "site name", []string{"c1", "kind", "c2"} },
	}
	for name, change := range cases {
		t.Run(name, func(t *testing.T) {
			s := base
			s.Controls = append([]string(nil), base.Controls...)
			change(&s)
			want, err := Fit(d, s)
			if err != nil {
				t.Fatal(err)
			}
			for _, size := range []int{777, 5000} {
				src := &sliced{d: d, size: size}
				got, err := FitStream(context.Background(), src, s)
				if err != nil {
					t.Fatalf("chunks of %d: %v", size, err)
				}
				if src.passes != 3 {
					t.Errorf("chunks of %d: %d passes, want 3", size, src.passes)
				}
				compareResults(t, fmt.Sprintf("chunks of %d", size), got, want)
			}
		})
	}
}

// compareResults compares every float of two results to 1e-10 relative
// and everything else exactly.
func compareResults(t *testing.T, where string, got, want *Result) {
	t.Helper()
	compareResultsWithin(t, where, got, want, 1e-10)
}

// compareResultsWithin compares every float of two results to tol relative
// (0: the same value) and everything else exactly.
func compareResultsWithin(t *testing.T, where string, got, want *Result, tol float64) {
	t.Helper()
	var walk func(path string, a, b reflect.Value)
	walk = func(path string, a, b reflect.Value) {
		switch a.Kind() {
		case reflect.Float64:
			x, y := a.Float(), b.Float()
			if x == y || math.IsNaN(x) && math.IsNaN(y) {
				return
			}
			if d := math.Abs(x - y); d > tol*math.Max(math.Abs(x), math.Abs(y)) && (tol == 0 || d > 1e-300) {
				t.Errorf("%s: %s = %.17g, want %.17g", where, path, x, y)
			}
		case reflect.Pointer, reflect.Interface:
			if a.IsNil() != b.IsNil() {
				t.Errorf("%s: %s: nil %v, want nil %v", where, path, a.IsNil(), b.IsNil())
				return
			}
			if !a.IsNil() {
				walk(path, a.Elem(), b.Elem())
			}
		case reflect.Struct:
			for i := 0; i < a.NumField(); i++ {
				walk(path+"."+a.Type().Field(i).Name, a.Field(i), b.Field(i))
			}
		case reflect.Slice, reflect.Array:
			if a.Len() != b.Len() {
				t.Errorf("%s: %s has %d entries, want %d", where, path, a.Len(), b.Len())
				return
			}
			for i := 0; i < a.Len(); i++ {
				walk(fmt.Sprintf("%s[%d]", path, i), a.Index(i), b.Index(i))
			}
		default:
			if !reflect.DeepEqual(a.Interface(), b.Interface()) {
				t.Errorf("%s: %s = %v, want %v", where, path, a.Interface(), b.Interface())
			}
		}
	}
	walk("Result", reflect.ValueOf(got).Elem(), reflect.ValueOf(want).Elem())
}

// TestFitStreamHandsBack checks that the streamed fit hands back, with
// ErrNeedsMemory, what only Fit can do or word, and that Fit then says
// what it says.
func TestFitStreamHandsBack(t *testing.T) {
	d := streamData(600)
	few := streamData(600)
	for i := range few.Columns[6].Num {
		few.Columns[6].Num[i] = float64(i % 10)
	}
	collinear := streamData(600)
	collinear.Columns[5].Num = append([]float64(nil), collinear.Columns[4].Num...)
	for i := range collinear.Columns[5].Num {
		collinear.Columns[5].Num[i] = 2*collinear.Columns[5].Num[i] + 1
	}
	base := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical},
		Controls: []string{"c1", "c2"}}
	cases := []struct {
		name   string
		d      *Data
		change func(*Spec)
	}{
		{"continuous moderator", d, func(s *Spec) {
			s.Moderator, s.Controls = Moderator{Column: "c2", Kind: ModeratorContinuous}, []string{"c1"}
		}},
		{"bootstrap", few, func(s *Spec) { s.Cluster = "site" }},
		{"aliased control", collinear, func(s *Spec) {}},
		{"treatment not 0/1", d, func(s *Spec) { s.Treatment.Column = "dose" }},
		{"binary moderator of four groups", d, func(s *Spec) { s.Moderator.Kind = ModeratorBinary }},
		{"unknown column", d, func(s *Spec) { s.Controls = []string{"nowhere"} }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := base
			c.change(&s)
			_, err := FitStream(context.Background(), &sliced{d: c.d, size: 250}, s)
			if !errors.Is(err, ErrNeedsMemory) {
				t.Fatalf("got %v, want ErrNeedsMemory", err)
			}
		})
	}
	// No rows at all: the streamed fit words it as Fit does.
	empty := streamData(50)
	for i := range empty.Columns[0].Num {
		empty.Columns[0].Num[i] = math.NaN()
	}
	_, want := Fit(empty, base)
	_, got := FitStream(context.Background(), &sliced{d: empty, size: 7}, base)
	if got == nil || want == nil || got.Error() != want.Error() {
		t.Errorf("no rows: got %v, want %v", got, want)
	}
}

// TestFineIsProblem checks that fine, which the later passes use, takes
// a row exactly when problem finds nothing, for every role, on cells of
// every kind: numbers, missing with and without a reason, text in numbers,
// infinities, weights of 0 and less, blanks in text.
func TestFineIsProblem(t *testing.T) {
	d := streamData(2000)
	w := &d.Columns[7]
	w.Num[3], w.Num[4], w.Num[5] = 0, -1, math.NaN()
	w.Text = make([]string, len(w.Num))
	w.Text[5] = "n/a"
	for _, c := range d.Columns {
		for _, role := range []string{"outcome", "treatment", "moderator", "control", "cluster", "weight"} {
			rc := roleColumn{col: &c, role: role, numeric: c.IsNumeric()}
			for i := range c.Len() {
				if reason, _ := rc.problem(i); rc.fine(i) != (reason == "") {
					t.Fatalf("column %q as %s, row %d: fine %v, problem %q", c.Name, role, i, rc.fine(i), reason)
				}
			}
		}
	}
}

// TestFitStreamCancelled checks that a cancelled context stops the fit.
func TestFitStreamCancelled(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	s := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical}}
	if _, err := FitStream(ctx, &sliced{d: streamData(100), size: 10}, s); !errors.Is(err, context.Canceled) {
		t.Errorf("got %v, want context.Canceled", err)
	}
}

// BenchmarkFitStream times the streamed fit of BenchmarkFit's data (from
// memory, so that only the fit is timed), with HC3 and with CR1.
func BenchmarkFitStream(b *testing.B) {
	d := benchData(1_000_000)
	for _, vt := range []VarianceType{HC3, CR1} {
		b.Run(string(vt), func(b *testing.B) {
			s := benchSpec()
			s.Variance = vt
			if vt == CR1 {
				s.Cluster = "site"
			}
			b.ReportAllocs()
			for b.Loop() {
				if _, err := FitStream(context.Background(), &sliced{d: d, size: 4096}, s); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// changing serves its data, but from the given pass on with one cell set
// to a value the earlier passes did not see, as a file edited meanwhile.
type changing struct {
	sliced
	from   int
	change func(*Data)
}

func (c *changing) Pass(ctx context.Context, each func(*Data, func()) error) error {
	if c.passes+1 == c.from {
		c.change(c.d)
	}
	return c.sliced.Pass(ctx, each)
}

// TestFitStreamDataChanged checks that a group, control level or cluster
// first met after the survey stops the fit with ErrChangedBetweenPasses.
func TestFitStreamDataChanged(t *testing.T) {
	s := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "g", Kind: ModeratorCategorical},
		Controls: []string{"kind"}, Cluster: "site"}
	for name, change := range map[string]func(*Data){
		"group":   func(d *Data) { d.Columns[8].Text[3] = "elsewhere" },
		"level":   func(d *Data) { d.Columns[10].Text[3] = "z" },
		"cluster": func(d *Data) { d.Columns[6].Num[3] = 1e9 },
	} {
		for _, from := range []int{2, 3} {
			src := &changing{sliced: sliced{d: streamData(600), size: 100}, from: from, change: change}
			if _, err := FitStream(context.Background(), src, s); !errors.Is(err, ErrChangedBetweenPasses) {
				t.Errorf("%s changed from pass %d: got %v", name, from, err)
			}
		}
	}
}
