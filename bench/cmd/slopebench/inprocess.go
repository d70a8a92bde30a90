package main

import (
	"context"
	"fmt"
	"runtime"
	"time"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
)

// stepTimes are the read and the fit measured inside this process.
type stepTimes struct {
	read time.Duration
	fit  map[string]time.Duration // by --se value
}

// benchSpec is specArgs as an engine spec.
func benchSpec(se string) estimate.Spec {
	s := estimate.Spec{Outcome: "score", Treatment: estimate.Treatment{Column: "tutored", Kind: estimate.TreatmentBinary},
		Moderator: estimate.Moderator{Column: "area", Kind: estimate.ModeratorCategorical},
		Controls:  []string{"baseline", "age", "attendance", "prior_sessions", "household"}, Variance: estimate.HC3}
	if se == "cluster" {
		s.Variance, s.Cluster = estimate.CR1, "school"
	}
	return s
}

// inProcess times workbook.Read of the file and estimate.Fit of the table
// with each variance type, the best of three fits.
func inProcess(path string) (*stepTimes, error) {
	runtime.GC()
	start := time.Now()
	t, err := workbook.Read(context.Background(), path, workbook.Options{})
	if err != nil {
		return nil, err
	}
	st := &stepTimes{read: time.Since(start), fit: map[string]time.Duration{}}
	d := pipeline.EngineData(t)
	for _, se := range []string{"hc3", "cluster"} {
		best := time.Duration(1 << 62)
		for range 3 {
			runtime.GC()
			start := time.Now()
			res, err := estimate.Fit(d, benchSpec(se))
			if err != nil {
				return nil, err
			}
			best = min(best, time.Since(start))
			if len(res.Effects) != len(areas) {
				return nil, fmt.Errorf("%d effects", len(res.Effects))
			}
		}
		st.fit[se] = best
	}
	return st, nil
}
