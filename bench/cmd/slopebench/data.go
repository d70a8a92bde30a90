package main

import (
	"bufio"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strconv"

	"github.com/xuri/excelize/v2"
)

// The benchmark's data: an invented tutoring pilot with a known truth.
// Pupils in 1,000 schools (the clusters) in four kinds of area (the
// moderator) are tutored or not at random; five controls; two columns the
// model does not use, so that the reader has twelve columns to parse.
//
//	score = 20 + 0.5·baseline + 0.3·age + 5·attendance + 0.1·prior_sessions
//	        − 0.2·household + area[a] + tutored·effect[a] + u[school] + e
//
// with u ~ N(0, 2²) a school's level and e ~ N(0, (5·(1 + tutored/2))²),
// so the errors are heteroskedastic and clustered.
var header = []string{"pupil", "score", "tutored", "area", "school", "baseline", "age",
	"attendance", "prior_sessions", "household", "cohort", "comment"}

// areas, their shares of the pupils, their level and the true effect of
// tutoring in each. The largest, "city", is the reference group.
var areas = []struct {
	name          string
	share         float64
	level, effect float64
}{
	{"city", 0.40, 0, 3.0},
	{"suburb", 0.25, 1, 2.5},
	{"town", 0.20, -1, 2.0},
	{"rural", 0.15, -2, 4.0},
}

const schools = 1000

// spec is the model the harness fits, as analyze options.
var specArgs = []string{"--outcome", "score", "--treatment", "tutored", "--moderator", "area",
	"--moderator-type", "category", "--controls", "baseline,age,attendance,prior_sessions,household"}

// generator draws the rows in order from a fixed seed.
type generator struct {
	rng    *rand.Rand
	school []float64
}

func newGenerator(seed uint64) *generator {
	g := &generator{rng: rand.New(rand.NewPCG(seed, 7)), school: make([]float64, schools)}
	for i := range g.school {
		g.school[i] = 2 * g.rng.NormFloat64()
	}
	return g
}

// row returns row i's twelve values: float64, int or string.
func (g *generator) row(i int) []any {
	r := g.rng
	u := r.Float64()
	a := 0
	for acc := areas[0].share; u > acc && a < len(areas)-1; {
		a++
		acc += areas[a].share
	}
	s := r.IntN(schools)
	t := r.IntN(2)
	baseline := round(50+10*r.NormFloat64(), 1)
	age := 11 + r.IntN(6)
	att := round(0.6+0.4*r.Float64(), 3)
	prior := r.IntN(21)
	house := 1 + r.IntN(8)
	score := 20 + 0.5*baseline + 0.3*float64(age) + 5*att + 0.1*float64(prior) - 0.2*float64(house) +
		areas[a].level + float64(t)*areas[a].effect + g.school[s] + 5*(1+float64(t)/2)*r.NormFloat64()
	comment := ""
	if r.IntN(10) == 0 {
		comment = "moved mid-year"
	}
	return []any{i + 1, round(score, 2), t, areas[a].name, s + 1, baseline, age, att, prior, house,
		2021 + r.IntN(4), comment}
}

func round(v float64, digits int) float64 {
	p := math.Pow10(digits)
	return math.Round(v*p) / p
}

// writeCSV writes n rows and the header to path.
func writeCSV(path string, n int, seed uint64) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	g := newGenerator(seed)
	var buf []byte
	for j, h := range header {
		if j > 0 {
			buf = append(buf, ',')
		}
		buf = append(buf, h...)
	}
	buf = append(buf, '\n')
	for i := 0; i < n; i++ {
		for j, v := range g.row(i) {
			if j > 0 {
				buf = append(buf, ',')
			}
			switch v := v.(type) {
			case float64:
				buf = strconv.AppendFloat(buf, v, 'f', -1, 64)
			case int:
				buf = strconv.AppendInt(buf, int64(v), 10)
			case string:
				buf = append(buf, v...)
			}
		}
		buf = append(buf, '\n')
		if len(buf) > 1<<16 {
			if _, err := w.Write(buf); err != nil {
				f.Close()
				return err
			}
			buf = buf[:0]
		}
	}
	if _, err := w.Write(buf); err != nil {
		f.Close()
		return err
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// writeXLSX writes the same rows as a workbook with excelize's stream
// writer (numbers as numbers, text as shared strings).
func writeXLSX(path string, n int, seed uint64) error {
	if n+1 > excelize.TotalRows {
		return fmt.Errorf("%d rows do not fit on a sheet (at most %d)", n, excelize.TotalRows-1)
	}
	f := excelize.NewFile()
	defer f.Close()
	sw, err := f.NewStreamWriter("Sheet1")
	if err != nil {
		return err
	}
	row := make([]any, len(header))
	for j, h := range header {
		row[j] = h
	}
	if err := sw.SetRow("A1", row); err != nil {
		return err
	}
	g := newGenerator(seed)
	for i := 0; i < n; i++ {
		values := g.row(i)
		if values[11] == "" {
			values[11] = nil
		}
		cell, _ := excelize.CoordinatesToCellName(1, i+2)
		if err := sw.SetRow(cell, values); err != nil {
			return err
		}
	}
	if err := sw.Flush(); err != nil {
		return err
	}
	return f.SaveAs(path)
}
