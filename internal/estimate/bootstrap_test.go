package estimate

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// bootCase is one case of testdata/r/bootstrap.txt: its data file and the
// spec that states the same model as testdata/r/make_bootstrap.R.
type bootCase struct {
	name, file string
	spec       Spec
}

func bootCases() []bootCase {
	return []bootCase{
		{"co2_type", "co2_cluster.csv", Spec{Outcome: "uptake",
			Treatment: Treatment{Column: "Treatment", Kind: TreatmentLabels, Treated: "chilled"},
			Moderator: Moderator{Column: "Type", Kind: ModeratorBinary},
			Controls:  []string{"conc"}, Cluster: "Plant",
			Bootstrap: Bootstrap{Weights: Rademacher}}},
		{"co2_conc", "co2_cluster.csv", Spec{Outcome: "uptake",
			Treatment: Treatment{Column: "Treatment", Kind: TreatmentLabels, Treated: "chilled"},
			Moderator: Moderator{Column: "conc", Kind: ModeratorCategorical},
			Cluster:   "Plant", Bootstrap: Bootstrap{Weights: Rademacher}}},
		{"airq_cont", "airq_weighted78.csv", Spec{Outcome: "Ozone",
			Treatment: Treatment{Column: "hot", Kind: TreatmentBinary},
			Moderator: Moderator{Column: "Wind", Kind: ModeratorContinuous},
			Controls:  []string{"Solar.R"}, Weights: "w", Cluster: "Month"}},
		{"schools10", "schools10.csv", Spec{Outcome: "reading", Treatment: Treatment{Column: "tutored"},
			Moderator: Moderator{Column: "prior", Kind: ModeratorContinuous},
			Cluster:   "school", Bootstrap: Bootstrap{Weights: Rademacher}}},
		{"co2_lin", "co2_cluster.csv", Spec{Outcome: "uptake",
			Treatment: Treatment{Column: "Treatment", Kind: TreatmentLabels, Treated: "chilled"},
			Moderator: Moderator{Column: "conc", Kind: ModeratorContinuous},
			Controls:  []string{"Type"}, Cluster: "Plant", Bootstrap: Bootstrap{Weights: Rademacher}}},
	}
}

// TestBootstrapAgainstR compares the bootstrap p-values, with every draw
// listed, with a direct implementation that refits the model for each draw
// (effects, differences, the test that the groups' effects are equal and
// the linearity check's test of the line):
// R 4.2.2 base R, testdata/r/make_bootstrap.R, from the formulas of
// Cameron, Gelbach & Miller (2008). Both count the same finite set of
// draws, so the p-values must be equal exactly.
func TestBootstrapAgainstR(t *testing.T) {
	compareBootstrapWithR(t, filepath.Join(rDir, "bootstrap.txt"))
}

// TestBootstrapAgainstRLive reruns the R script into a temporary folder.
func TestBootstrapAgainstRLive(t *testing.T) {
	compareBootstrapWithR(t, filepath.Join(runRScript(t, "make_bootstrap.R"), "bootstrap.txt"))
}

func compareBootstrapWithR(t *testing.T, path string) {
	t.Helper()
	ref := map[string]map[string]float64{}
	for c, m := range readReference3(t, path) {
		ref[c] = map[string]float64{}
		for k, v := range m {
			f, err := strconv.ParseFloat(v, 64)
			if err != nil {
				t.Fatalf("%s %s: %v", c, k, err)
			}
			ref[c][k] = f
		}
	}
	checked := 0
	for _, c := range bootCases() {
		want := ref[c.name]
		if want == nil {
			t.Fatalf("no reference values for %s", c.name)
		}
		res, err := Fit(loadCSV(t, filepath.Join(rDir, c.file)), c.spec)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if res.Bootstrap == nil || !res.Bootstrap.Enumerated || float64(res.Bootstrap.Draws) != want["draws"] {
			t.Fatalf("%s: bootstrap %+v, R enumerates %g draws", c.name, res.Bootstrap, want["draws"])
		}
		check := func(key string, inf Inference, b *BootInference) {
			wt, ok := want[key+".t"]
			if !ok {
				t.Errorf("%s: R has no %s", c.name, key)
				return
			}
			if !closeRel(inf.T, wt, 1e-8, 0) {
				t.Errorf("%s %s: t = %.17g, R gives %.17g", c.name, key, inf.T, wt)
			}
			if b == nil || b.P != want[key+".pboot"] {
				t.Errorf("%s %s: bootstrap %+v, R's p = %.17g", c.name, key, b, want[key+".pboot"])
			}
			checked++
		}
		for _, e := range res.Effects {
			check("effect["+e.Group+"]", e.Inference, e.Boot)
		}
		for _, d := range res.Differences {
			key := "diff[" + d.From + "|" + d.To + "]"
			if d.PerUnit {
				key = "diff[unit]"
			}
			check(key, d.Inference, d.Boot)
		}
		if wp, ok := want["het.pboot"]; ok {
			h := res.Heterogeneity
			if !closeRel(h.F, want["het.F"], 1e-8, 0) || h.PBoot == nil || *h.PBoot != wp {
				t.Errorf("%s: heterogeneity %+v (p_boot %v), R gives F %.17g p %.17g", c.name, h, h.PBoot, want["het.F"], wp)
			}
			checked++
		}
		if wp, ok := want["lin.pboot"]; ok {
			l := res.Linearity
			if l == nil || l.Wald == nil || !closeRel(l.Wald.F, want["lin.F"], 1e-8, 0) || l.Wald.PBoot == nil || *l.Wald.PBoot != wp {
				t.Errorf("%s: linearity %+v, R gives F %.17g p %.17g", c.name, l, want["lin.F"], wp)
			} else if l.Contradicts != (wp < 0.05) {
				t.Errorf("%s: contradicts %v with bootstrap p %g", c.name, l.Contradicts, wp)
			}
			checked++
		}
	}
	if checked < 40 {
		t.Errorf("only %d bootstrap p-values compared", checked)
	}
	t.Logf("%d bootstrap p-values equal R's", checked)
}

// readReference3 reads a "<case> <key> <value>" file.
func readReference3(t *testing.T, path string) map[string]map[string]string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]map[string]string{}
	for _, line := range strings.Split(string(b), "\n") {
		f := strings.Fields(line)
		if len(f) != 3 || strings.HasPrefix(f[0], "#") {
			continue
		}
		if out[f[0]] == nil {
			out[f[0]] = map[string]string{}
		}
		out[f[0]][f[1]] = f[2]
	}
	return out
}

// clusterData is n rows in g clusters of unequal size with a binary
// moderator, a control and a treatment effect that varies by cluster.
func clusterData(n, g int, seed uint64) *Data {
	rng := rand.New(rand.NewPCG(seed, 3))
	var y, t, x, site []float64
	var m []string
	u := make([]float64, g)
	slope := make([]float64, g)
	for c := range u {
		u[c], slope[c] = rng.NormFloat64(), 0.5*rng.NormFloat64()
	}
	for i := range n {
		// Cluster c takes a share of the rows that grows with c.
		c := int(math.Sqrt(float64(i)/float64(n)) * float64(g))
		ti := float64(rng.IntN(2))
		xi := rng.NormFloat64()
		grp := "a"
		if rng.IntN(2) == 1 {
			grp = "b"
		}
		y = append(y, 1+u[c]+(1+slope[c])*ti+0.3*xi+(1+float64(c%3))*rng.NormFloat64())
		t = append(t, ti)
		x = append(x, xi)
		site = append(site, float64(c))
		m = append(m, grp)
	}
	return &Data{Columns: []Column{{Name: "y", Num: y}, {Name: "t", Num: t}, {Name: "m", Text: m},
		{Name: "x", Num: x}, {Name: "site", Num: site}}}
}

func clusterSpec() Spec {
	return Spec{Outcome: "y", Treatment: Treatment{Column: "t"},
		Moderator: Moderator{Column: "m", Kind: ModeratorBinary}, Controls: []string{"x"}, Cluster: "site"}
}

// TestBootstrapDrawsMatchRefits checks the O(G·K) algebra of a draw against
// the definition (Cameron, Gelbach & Miller 2008): impose a'β = r, rebuild
// y* = Xβ̃ + v_g·ũ, refit by QR and recompute the CR1 t from the refit's
// residuals — for several null values r, not only zero.
func TestBootstrapDrawsMatchRefits(t *testing.T) {
	d := clusterData(400, 9, 5)
	s, err := clusterSpec().withDefaults()
	if err != nil {
		t.Fatal(err)
	}
	s.Bootstrap.Draws = 50
	ds, err := buildDesign(d, s)
	if err != nil {
		t.Fatal(err)
	}
	f, aliased := fitLS(ds.x, ds.y, ds.n, ds.k)
	if aliased != nil {
		t.Fatal(aliased)
	}
	g := len(ds.clusterLabels)
	plan := planBootstrap(g, g, s.Bootstrap)
	w := newWild(context.Background(), f, ds.cluster, g, plan)
	n, k := ds.n, ds.k
	scale := float64(g) / float64(g-1) * float64(n-1) / float64(n-k)
	cr1 := func(coef, resid []float64, a []float64) float64 {
		// a'V a with V = c·B(Σ s_g s_gᵀ)B, from scratch.
		ba := make([]float64, k)
		matVec(ba, f.bread, a, k)
		wg := make([]float64, g)
		for i, c := range ds.cluster {
			wg[c] += dot(ba, ds.x[i*k:(i+1)*k]) * resid[i]
		}
		var v float64
		for _, x := range wg {
			v += x * x
		}
		return scale * v
	}
	for _, a := range [][]float64{{0, 1, 0, 0, 0}, {0, 1, 0, 1, 0}, {0, 0, 0, 1, 0}} {
		est := dot(a, f.coef)
		se := math.Sqrt(cr1(f.coef, f.resid, a))
		sd, _ := w.single(a, est, se)
		for _, sval := range []float64{-3, -0.7, 0, 1.9} {
			r := est + sval*se
			ba := make([]float64, k)
			matVec(ba, f.bread, a, k)
			restricted := make([]float64, k)
			for j := range restricted {
				restricted[j] = f.coef[j] - ba[j]*(est-r)/dot(a, ba)
			}
			fitted := residuals(ds.x, make([]float64, n), restricted, k) // −Xβ̃
			for b := range plan.info.Draws {
				ystar := make([]float64, n)
				for i, c := range ds.cluster {
					fi := -fitted[i]
					ystar[i] = fi + plan.weight(b, c)*(ds.y[i]-fi)
				}
				fs, _ := fitLS(ds.x, ystar, n, k)
				want := (dot(a, fs.coef) - r) / math.Sqrt(cr1(fs.coef, fs.resid, a))
				num := sd.n0[b] - sval*sd.n1[b]
				got := num / math.Sqrt(sd.scale*(sd.q0[b]-2*sval*sd.q1[b]+sval*sval*sd.q2[b]))
				if !closeRel(got, want, 1e-8, 1) {
					t.Fatalf("a %v, s %g, draw %d: t* = %.12g, refit gives %.12g", a, sval, b, got, want)
				}
			}
		}
	}
}

// TestBootstrapPlan checks the choice of weights and enumeration of
// METHODS §8: Webb's weights with 12 clusters or fewer (and, our
// extension, when a group of the moderator lies in 12 clusters or fewer),
// all draws listed when there are no more than B of them.
func TestBootstrapPlan(t *testing.T) {
	for _, c := range []struct {
		g, fewest, draws int
		weights          BootWeights
		want             BootWeights
		enumerated       bool
		n                int
	}{
		{4, 4, 9999, "", Webb, true, 1296},
		{5, 5, 9999, "", Webb, true, 7776},
		{6, 6, 9999, "", Webb, false, 9999},
		{12, 12, 9999, "", Webb, false, 9999},
		{13, 13, 9999, "", Rademacher, true, 8192},
		{14, 14, 9999, "", Rademacher, false, 9999},
		{41, 41, 9999, "", Rademacher, false, 9999},
		{24, 6, 9999, "", Webb, false, 9999},
		{24, 13, 9999, "", Rademacher, false, 9999},
		{12, 12, 9999, Rademacher, Rademacher, true, 4096},
		{14, 14, 20000, "", Rademacher, true, 16384},
	} {
		p := planBootstrap(c.g, c.fewest, Bootstrap{Draws: c.draws, Weights: c.weights, Seed: 3})
		if p.info.Weights != c.want || p.info.Enumerated != c.enumerated || p.info.Draws != c.n {
			t.Errorf("G = %d (fewest %d), B = %d, %q: %+v; want %s, enumerated %v, %d draws", c.g, c.fewest, c.draws, c.weights, p.info, c.want, c.enumerated, c.n)
		}
		if c.enumerated {
			seen := map[string]bool{}
			for b := range p.info.Draws {
				seen[string(p.idx[b*c.g:(b+1)*c.g])] = true
			}
			if len(seen) != p.info.Draws {
				t.Errorf("G = %d: %d distinct draws of %d", c.g, len(seen), p.info.Draws)
			}
		}
	}
}

// TestBootstrapSeeded checks that the same seed gives the same answer and
// another seed a different one.
func TestBootstrapSeeded(t *testing.T) {
	d := clusterData(300, 20, 8)
	run := func(seed uint64) *Result {
		s := clusterSpec()
		s.Bootstrap = Bootstrap{Seed: seed, Draws: 999}
		res, err := Fit(d, s)
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	a, b, c := run(7), run(7), run(8)
	ja, _ := json.Marshal(a)
	jb, _ := json.Marshal(b)
	if string(ja) != string(jb) {
		t.Error("the same seed gave different results")
	}
	if a.Bootstrap.Weights != Rademacher || a.Bootstrap.Enumerated || a.Bootstrap.Draws != 999 || a.Bootstrap.Seed != 7 {
		t.Errorf("bootstrap %+v", a.Bootstrap)
	}
	if *a.Effects[0].Boot == *c.Effects[0].Boot && *a.Effects[1].Boot == *c.Effects[1].Boot {
		t.Error("seeds 7 and 8 gave the same bootstrap answers")
	}
}

// TestBootstrapInterval checks the test inversion: just inside each end of
// the interval the test does not reject at α, just outside it does; and
// the interval holds the estimate.
func TestBootstrapInterval(t *testing.T) {
	d := clusterData(500, 15, 21)
	s, _ := clusterSpec().withDefaults()
	ds, _ := buildDesign(d, s)
	f, _ := fitLS(ds.x, ds.y, ds.n, ds.k)
	v, used, df, notes, err := ds.variance(d, f, s)
	if err != nil {
		t.Fatal(err)
	}
	res := ds.result(s, f, v, used, df, notes)
	if err := ds.bootstrap(context.Background(), f, s, res, nil); err != nil {
		t.Fatal(err)
	}
	g := len(ds.clusterLabels)
	w := newWild(context.Background(), f, ds.cluster, g, planBootstrap(g, ds.fewestClusters(), s.Bootstrap))
	for i, e := range res.Effects {
		b := e.Boot
		if b == nil || !b.Bounded || !(b.CILow < e.Estimate && e.Estimate < b.CIHigh) {
			t.Fatalf("effect %s: bootstrap %+v around %g", e.Group, b, e.Estimate)
		}
		sd, _ := w.single(ds.effectA[i], e.Estimate, e.SE)
		eps := 1e-6 * e.SE
		for _, end := range []struct {
			r, out float64
		}{{b.CILow, -eps}, {b.CIHigh, eps}} {
			if in, out := sd.pAt(end.r-end.out), sd.pAt(end.r+end.out); !(in >= s.Alpha && out < s.Alpha) {
				t.Errorf("effect %s end %g: p inside %g, outside %g; want ≥ and < %g", e.Group, end.r, in, out, s.Alpha)
			}
		}
	}
}

// TestBootstrapWhen checks when the bootstrap runs: by default with a
// cluster column of fewer than 42 clusters; not with 42, not when turned
// off, not without clusters.
func TestBootstrapWhen(t *testing.T) {
	for _, c := range []struct {
		name     string
		clusters int
		off      bool
		noClust  bool
		want     bool
	}{
		{"41 clusters", 41, false, false, true},
		{"42 clusters", 42, false, false, false},
		{"turned off", 10, true, false, false},
		{"no cluster column", 10, false, true, false},
	} {
		d := clusterData(600, c.clusters, 4)
		s := clusterSpec()
		s.Bootstrap = Bootstrap{Off: c.off, Draws: 199}
		if c.noClust {
			s.Cluster = ""
		}
		res, err := Fit(d, s)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		got := res.Bootstrap != nil
		if got != c.want || (res.Effects[0].Boot != nil) != c.want || (res.Heterogeneity.PBoot != nil) != c.want {
			t.Errorf("%s: bootstrap ran %v, want %v", c.name, got, c.want)
		}
		if _, err := json.Marshal(res); err != nil {
			t.Errorf("%s: the result does not encode: %v", c.name, err)
		}
	}
}

// TestBootstrapSpecErrors checks that bad bootstrap settings are refused
// with a plain message.
func TestBootstrapSpecErrors(t *testing.T) {
	d := clusterData(200, 10, 1)
	for _, b := range []Bootstrap{{Draws: -1}, {Draws: MaxDraws + 1}, {Weights: "normal"}} {
		s := clusterSpec()
		s.Bootstrap = b
		_, err := Fit(d, s)
		var e *Error
		if !errors.As(err, &e) || !errors.Is(err, ErrSpec) {
			t.Errorf("%+v: %v, want a spec error", b, err)
		}
	}
}

// TestBootstrapCancel checks that a cancelled context stops the bootstrap
// with the context's error, and that progress is reported.
func TestBootstrapCancel(t *testing.T) {
	d := clusterData(300, 20, 2)
	ctx, cancel := context.WithCancel(context.Background())
	calls := 0
	_, err := FitContext(ctx, d, clusterSpec(), func(done, total int) {
		calls++
		if done == 2 {
			cancel()
		}
	})
	if !errors.Is(err, context.Canceled) || calls != 2 {
		t.Errorf("error %v after %d progress calls; want context.Canceled after 2", err, calls)
	}
	calls = 0
	last := [2]int{}
	if _, err := FitContext(context.Background(), d, clusterSpec(), func(done, total int) { calls++; last = [2]int{done, total} }); err != nil {
		t.Fatal(err)
	}
	// Two effects, one difference and the test that they are equal.
	if calls != 4 || last != [2]int{4, 4} {
		t.Errorf("%d progress calls, last %v; want 4 ending at 4 of 4", calls, last)
	}
}

// TestBootstrapFewDraws checks that too few distinct draws leave the
// interval open rather than inventing an end: with 4 clusters and the
// two-point weights there are 16 draws, two of which (all 1, all −1)
// reproduce the data, so p never falls below 2/16 > 0.05.
func TestBootstrapFewDraws(t *testing.T) {
	d := clusterData(200, 4, 6)
	s := clusterSpec()
	s.Bootstrap.Weights = Rademacher
	res, err := Fit(d, s)
	if err != nil {
		t.Fatal(err)
	}
	if res.Bootstrap.Draws != 16 || res.Effects[0].Boot.Bounded || res.Effects[0].Boot.P < 2.0/16 {
		t.Errorf("bootstrap %+v, effect %+v", res.Bootstrap, res.Effects[0].Boot)
	}
	if _, err := json.Marshal(res); err != nil {
		t.Error(err)
	}
}

// TestBootstrapFewClustersInAGroup checks the weights when the moderator
// is a property of the cluster: with 24 clusters, 6 in each of 4 groups,
// each group's effect turns on 6 clusters' weights, and two-point weights
// could not give it a p-value below 2/2^6 (MacKinnon & Webb 2017, J.
// Applied Econometrics 32(2), on few treated clusters; the bound is
// arithmetic). Webb's weights are used instead, and the p-value of a
// clear effect falls below that floor.
func TestBootstrapFewClustersInAGroup(t *testing.T) {
	rng := rand.New(rand.NewPCG(24, 6))
	var y, tr, site []float64
	var m []string
	for c := range 24 {
		u := rng.NormFloat64()
		for range 40 {
			ti := float64(rng.IntN(2))
			y = append(y, u+3*ti+rng.NormFloat64())
			tr = append(tr, ti)
			site = append(site, float64(c))
			m = append(m, string(rune('a'+c/6)))
		}
	}
	d := &Data{Columns: []Column{{Name: "y", Num: y}, {Name: "t", Num: tr}, {Name: "m", Text: m}, {Name: "site", Num: site}}}
	res, err := Fit(d, Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Moderator: Moderator{Column: "m", Kind: ModeratorCategorical}, Cluster: "site"})
	if err != nil {
		t.Fatal(err)
	}
	if res.Bootstrap.Weights != Webb {
		t.Errorf("weights %s, want webb", res.Bootstrap.Weights)
	}
	for _, e := range res.Effects {
		if e.Boot.P >= 2.0/64 {
			t.Errorf("group %s: bootstrap p %g, not below the two-point floor 2/64 (t = %.1f)", e.Group, e.Boot.P, e.T)
		}
	}
}
