package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
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
			run := report.Run{File: path, Spec: s}
			src, err := Open(context.Background(), run)
			if err != nil {
				t.Fatal(err)
			}
			if src.Stream == nil {
				t.Fatal("the CSV was not streamed")
			}
			got, err := src.Analyze(context.Background(), run)
			if err != nil {
				t.Fatal(err)
			}
			tab, err := Read(context.Background(), run, nil)
			if err != nil {
				t.Fatal(err)
			}
			want, err := AnalyzeTable(context.Background(), run, tab)
			if err != nil {
				t.Fatal(err)
			}
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
	err = streamChunks{s, []string{"outcome", "region"}}.Pass(context.Background(), func(d *estimate.Data) error {
		n++
		return stop
	})
	if !errors.Is(err, stop) || n != 1 {
		t.Errorf("got %v after %d chunks, want the fit's own error after 1", err, n)
	}
	rows := 0
	err = streamChunks{s, []string{"outcome", "region"}}.Pass(context.Background(), func(d *estimate.Data) error {
		rows += len(d.RowLabels)
		return nil
	})
	if err != nil || rows != s.Rows {
		t.Errorf("a whole pass: %d rows, %v; want %d", rows, err, s.Rows)
	}
}
