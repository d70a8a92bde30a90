package estimate

import (
	"math"
	"path/filepath"
	"strconv"
	"testing"
)

// TestPetersen checks OLS and firm-clustered standard errors on Petersen's
// (2009, Review of Financial Studies 22(1)) clustered-errors test data, as
// shipped with R's sandwich package (PetersenCL, written to
// testdata/r/petersen.csv by make_reference.R). Published values, from
// memory of Petersen's test-data page: slope 1.034833, OLS SE 0.0285833,
// firm-clustered SE 0.0505957 — compared to 4 significant digits. The same
// numbers from R 4.2.2 sandwich::vcovCL(type = "HC1") are compared at 1e-8.
func TestPetersen(t *testing.T) {
	data := loadCSV(t, filepath.Join(rDir, "petersen.csv"))
	col := func(name string) []float64 {
		c, err := data.column(name, "test")
		if err != nil {
			t.Fatal(err)
		}
		return c.Num
	}
	x, y, firm := col("x"), col("y"), col("firm")
	n := len(y)
	ds := &design{n: n, k: 2, x: make([]float64, 2*n), y: y, cluster: make([]int, n)}
	index := map[float64]int{}
	for i := range y {
		ds.x[2*i], ds.x[2*i+1] = 1, x[i]
		if _, ok := index[firm[i]]; !ok {
			index[firm[i]] = len(ds.clusterLabels)
			ds.clusterLabels = append(ds.clusterLabels, formatNumber(firm[i]))
		}
		ds.cluster[i] = index[firm[i]]
		ds.used = append(ds.used, i)
	}
	f, aliased := fitLS(ds.x, ds.y, n, 2)
	if aliased != nil {
		t.Fatalf("aliased: %v", aliased)
	}
	se := func(vt VarianceType) float64 {
		v, _, _, _, err := ds.variance(data, f, Spec{Variance: vt})
		if err != nil {
			t.Fatal(err)
		}
		return math.Sqrt(v[3])
	}
	sig4 := func(v float64) string { return strconv.FormatFloat(v, 'g', 4, 64) }
	published := []struct {
		what      string
		got, want float64
	}{
		{"slope", f.coef[1], 1.034833},
		{"OLS SE", se(Classical), 0.0285833},
		{"firm-clustered SE", se(CR1), 0.0505957},
	}
	for _, p := range published {
		if sig4(p.got) != sig4(p.want) {
			t.Errorf("%s = %.7g, Petersen (2009) publishes %.7g (4 significant digits: %s vs %s)", p.what, p.got, p.want, sig4(p.got), sig4(p.want))
		}
	}
	ref := readReference(t, filepath.Join(rDir, "reference.txt"))["petersen"]
	for _, c := range []struct {
		vt  VarianceType
		key string
	}{{Classical, "classical"}, {CR1, "CR1"}} {
		want, err := strconv.ParseFloat(ref[c.key]["se[2]"], 64)
		if err != nil {
			t.Fatal(err)
		}
		if got := se(c.vt); !closeRel(got, want, 1e-8, 0) {
			t.Errorf("%s slope SE = %.17g, R sandwich gives %.17g", c.vt, got, want)
		}
	}
}
