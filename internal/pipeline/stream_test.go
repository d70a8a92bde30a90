package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// writePilot writes a CSV of n rows: an outcome with a few error values
// and blanks, a 0/1 treatment, a moderator of three groups, a numeric and
// a text control, and 50 sites.
func writePilot(t *testing.T, n int) string {
	rng := rand.New(rand.NewPCG(2, 3))
	var b strings.Builder
	b.WriteString("outcome,treated,region,age,sector,site\n")
	for i := 0; i < n; i++ {
		tr, g := rng.IntN(2), rng.IntN(3)
		y := fmt.Sprintf("%.3f", 10+float64(tr)*(1+float64(g))+rng.NormFloat64())
		switch i % 173 {
		case 5:
			y = "#N/A"
		case 9:
			y = ""
		}
		fmt.Fprintf(&b, "%s,%d,%s,%d,%s,S%02d\n", y, tr, []string{"coast", "hills", "plain"}[g], 18+rng.IntN(50),
			[]string{"retail", "care", "farm"}[rng.IntN(3)], rng.IntN(50))
	}
	path := filepath.Join(t.TempDir(), "pilot.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestStreamedAnalysisEqualsTable checks that a CSV analyzed through a
// stream gives the result of the table read whole: the same rows, the
// same hash, every effect to 1e-10; and that a spec the streamed fit hands
// back (a continuous moderator) gives the table's result exactly.
func TestStreamedAnalysisEqualsTable(t *testing.T) {
	path := writePilot(t, 4000)
	specs := map[string]estimate.Spec{
		"HC3": {Outcome: "outcome", Treatment: estimate.Treatment{Column: "treated"},
			Moderator: estimate.Moderator{Column: "region", Kind: estimate.ModeratorCategorical}, Controls: []string{"age", "sector"}},
		"CR1": {Outcome: "outcome", Treatment: estimate.Treatment{Column: "treated"},
			Moderator: estimate.Moderator{Column: "region", Kind: estimate.ModeratorCategorical}, Controls: []string{"age"}, Cluster: "site"},
		"continuous": {Outcome: "outcome", Treatment: estimate.Treatment{Column: "treated"},
			Moderator: estimate.Moderator{Column: "age", Kind: estimate.ModeratorContinuous}},
	}
	for name, s := range specs {
		t.Run(name, func(t *testing.T) {
			got, want := streamedAndTable(t, report.Run{File: path, Spec: s})
			g, w := got.Result, want.Result
			if g.Rows.Used != w.Rows.Used || g.Rows.Dropped != w.Rows.Dropped || g.Model.DataSHA256 != w.Model.DataSHA256 {
				t.Fatalf("rows %+v, hash %s; want %+v, %s", g.Rows.Reasons, g.Model.DataSHA256, w.Rows.Reasons, w.Model.DataSHA256)
			}
			if got.Run.HeaderRow != want.Run.HeaderRow {
				t.Errorf("header row %d, want %d", got.Run.HeaderRow, want.Run.HeaderRow)
			}
			for i := range w.Effects {
				for _, p := range [][2]float64{{g.Effects[i].Estimate, w.Effects[i].Estimate}, {g.Effects[i].SE, w.Effects[i].SE}} {
					if math.Abs(p[0]-p[1]) > 1e-10*math.Abs(p[1]) {
						t.Errorf("effect %d: %v, want %v", i, p[0], p[1])
					}
				}
			}
		})
	}
}

// streamedAndTable analyzes a text file through its stream (got) and read
// whole (want).
func streamedAndTable(t *testing.T, run report.Run) (got, want *Analysis) {
	t.Helper()
	src, err := Open(context.Background(), run)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if src.Stream == nil {
		t.Fatal("the CSV was not streamed")
	}
	if got, err = src.Analyze(context.Background(), run); err != nil {
		t.Fatal(err)
	}
	tab, err := Read(context.Background(), run, nil)
	if err != nil {
		t.Fatal(err)
	}
	if want, err = AnalyzeTable(context.Background(), run, tab); err != nil {
		t.Fatal(err)
	}
	return got, want
}

// TestStreamChunksStopEarly checks that a fit that stops at a chunk stops
// the reader ahead of it and gets its own error back.
func TestStreamChunksStopEarly(t *testing.T) {
	path := writePilot(t, 3*streamChunkRows)
	s, err := workbook.OpenStream(context.Background(), path, workbook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	stop := errors.New("stop")
	n := 0
	err = (&streamChunks{s: s, names: []string{"outcome", "region"}}).Pass(context.Background(), func(d *estimate.Data, release func()) error {
		n++
		release()
		return stop
	})
	if !errors.Is(err, stop) || n != 1 {
		t.Errorf("got %v after %d chunks, want the fit's own error after 1", err, n)
	}
	rows := 0
	err = (&streamChunks{s: s, names: []string{"outcome", "region"}}).Pass(context.Background(), func(d *estimate.Data, release func()) error {
		rows += len(d.RowLabels)
		release()
		return nil
	})
	if err != nil || rows != s.Rows {
		t.Errorf("a whole pass: %d rows, %v; want %d", rows, err, s.Rows)
	}
}

// TestStreamChunksKeptUntilReleased checks that a chunk the fit has not
// released is not reused for a later one, and that released chunks are:
// the fit keeps a few chunks at once and checks each, when it releases
// it, against what it held when it came.
func TestStreamChunksKeptUntilReleased(t *testing.T) {
	path := writePilot(t, 12*streamChunkRows+100)
	s, err := workbook.OpenStream(context.Background(), path, workbook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	type kept struct {
		d       *estimate.Data
		labels  []int
		region  []string
		release func()
	}
	check := func(k kept) {
		if !slices.Equal(k.d.RowLabels, k.labels) || !slices.Equal(k.d.Columns[1].Text, k.region) {
			t.Fatalf("the chunk of rows %d to %d changed before it was released", k.labels[0], k.labels[len(k.labels)-1])
		}
		k.release()
	}
	for _, hold := range []int{1, 5} {
		var held []kept
		seen := map[*estimate.Data]bool{}
		reused, next := 0, 2 // the header is row 1
		err = (&streamChunks{s: s, names: []string{"outcome", "region"}}).Pass(context.Background(), func(d *estimate.Data, release func()) error {
			if d.RowLabels[0] != next {
				t.Fatalf("a chunk from row %d, want %d", d.RowLabels[0], next)
			}
			next = d.RowLabels[len(d.RowLabels)-1] + 1
			if seen[d] {
				reused++
			}
			seen[d] = true
			held = append(held, kept{d, slices.Clone(d.RowLabels), slices.Clone(d.Columns[1].Text), release})
			if len(held) > hold {
				check(held[0])
				held = held[1:]
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		for _, k := range held {
			check(k)
		}
		if reused == 0 {
			t.Errorf("holding %d: no chunk was reused", hold)
		}
	}
}

// TestCopyChunkIsEngineColumn checks that a chunk's copy holds, to the
// bit, what engineColumn makes of its columns, yes/no columns of numbers
// (whose levels copyChunk parses once) included.
func TestCopyChunkIsEngineColumn(t *testing.T) {
	cols := []*workbook.Column{
		{Name: "treated", Kind: workbook.YesNo, Levels: []string{"0", "1"}, Texts: []string{"1", "", "0", "1", "0"}},
		{Name: "dose", Kind: workbook.YesNo, Levels: []string{"0.10", "2.5e1"}, Texts: []string{"2.5e1", "0.10", "", "0.1", "25"}},
		{Name: "arm", Kind: workbook.YesNo, Levels: []string{"no", "yes"}, Texts: []string{"yes", "no", "", "yes", "no"}},
		{Name: "age", Kind: workbook.Number, Numbers: []float64{1, math.NaN(), 3, 4, 5}, Missing: []workbook.Reason{0, workbook.ErrorValue, 0, 0, 0}},
	}
	d := &estimate.Data{}
	for range 2 { // the second time into the first's slices
		copyChunk(d, []int{2, 3, 4, 5, 6}, cols)
		for j, col := range cols {
			want, got := engineColumn(col, 5), d.Columns[j]
			same := func(a, b float64) bool {
				return math.Float64bits(a) == math.Float64bits(b) || math.IsNaN(a) && math.IsNaN(b)
			}
			if got.Name != want.Name || !slices.Equal(got.Text, want.Text) || !slices.Equal(got.Why, want.Why) ||
				!slices.EqualFunc(got.Num, want.Num, same) || (got.Num == nil) != (want.Num == nil) {
				t.Errorf("column %q: %+v, want %+v", col.Name, got, want)
			}
		}
	}
}

// writePanel writes a CSV of units people, each measured in 2023 and
// 2024, half of them coached from 2024 on, with an effect by region (1, 2
// or 3) and each person's own level; a few outcomes missing.
func writePanel(t *testing.T, units int) string {
	rng := rand.New(rand.NewPCG(4, 5))
	var b strings.Builder
	b.WriteString("person,year,coached,region,age,earnings\n")
	for u := 0; u < units; u++ {
		tr, g, level := rng.IntN(2), rng.IntN(3), 2*rng.NormFloat64()
		for p := 0; p < 2; p++ {
			y := fmt.Sprintf("%.4f", 20+level+1.5*float64(p)+float64(tr*p*(1+g))+rng.NormFloat64())
			if (2*u+p)%997 == 3 {
				y = ""
			}
			fmt.Fprintf(&b, "P%06d,%d,%d,%s,%d,%s\n", u, 2023+p, tr, []string{"coast", "hills", "plain"}[g], 20+rng.IntN(40), y)
		}
	}
	path := filepath.Join(t.TempDir(), "panel.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestStreamedUnitEffectsEqualTable: a 200,000-row CSV (100,000 people
// before and after) with unit effects and CR1 by person, fitted through
// the stream, gives the table's result: the same rows and hash, every
// coefficient, covariance, effect, difference and test to 1e-10.
func TestStreamedUnitEffectsEqualTable(t *testing.T) {
	if testing.Short() {
		t.Skip("200,000 rows")
	}
	path := writePanel(t, 100000)
	s := estimate.Spec{Outcome: "earnings", Treatment: estimate.Treatment{Column: "coached"}, Period: "year", After: "2024",
		Moderator: estimate.Moderator{Column: "region", Kind: estimate.ModeratorCategorical}, Controls: []string{"age"},
		Unit: "person", UnitEffects: true}
	got, want := streamedAndTable(t, report.Run{File: path, Spec: s})
	if got.Table != nil {
		t.Fatal("the streamed fit handed the file back")
	}
	g, w := got.Result, want.Result
	if g.Rows.Used != w.Rows.Used || g.Rows.Used != 199799 || g.Model.DataSHA256 != w.Model.DataSHA256 || g.Design.Units != 100000 {
		t.Fatalf("rows %d, hash %s, units %d; want %d, %s", g.Rows.Used, g.Model.DataSHA256, g.Design.Units, w.Rows.Used, w.Model.DataSHA256)
	}
	var pairs [][2]float64
	add := func(a, b estimate.Inference) {
		pairs = append(pairs, [2]float64{a.Estimate, b.Estimate}, [2]float64{a.SE, b.SE}, [2]float64{a.P, b.P}, [2]float64{a.CILow, b.CILow})
	}
	for i := range w.Coefficients {
		add(g.Coefficients[i].Inference, w.Coefficients[i].Inference)
		for j := range w.Covariance[i] {
			pairs = append(pairs, [2]float64{g.Covariance[i][j], w.Covariance[i][j]})
		}
	}
	for i := range w.Effects {
		add(g.Effects[i].Inference, w.Effects[i].Inference)
	}
	for i := range w.Differences {
		add(g.Differences[i].Inference, w.Differences[i].Inference)
	}
	pairs = append(pairs, [2]float64{g.Heterogeneity.F, w.Heterogeneity.F}, [2]float64{g.Model.R2, w.Model.R2}, [2]float64{g.Model.Sigma, w.Model.Sigma})
	for i, p := range pairs {
		if math.Abs(p[0]-p[1]) > 1e-10*math.Abs(p[1]) {
			t.Errorf("value %d: %.17g, want %.17g", i, p[0], p[1])
		}
	}
	if len(g.Coefficients) != len(w.Coefficients) || len(pairs) < 60 {
		t.Errorf("%d coefficients, want %d; %d values compared", len(g.Coefficients), len(w.Coefficients), len(pairs))
	}
}
