package estimate

import (
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"sync"
	"testing"
)

var sizeStudy = flag.Bool("size-study", false, "run the size studies of the wild cluster bootstrap and print their tables (several minutes; make size-study)")

// sizeStudyClusters are the rows of each of the 8 clusters: unequal, one
// large, as in a pilot run at a few sites of different size.
var sizeStudyClusters = []int{12, 16, 20, 28, 36, 48, 90, 150}

// sizeStudyData draws one data set: treatment assigned at random within
// each cluster, a moderator that is a trait of the person (each row is in
// group "a" or "b" with probability ½), and a treatment effect that varies
// from cluster to cluster, separately in each group, around the same mean
// — so the true difference between the groups is zero, while the effects
// of a cluster's rows are alike.
func sizeStudyData(rng *rand.Rand) *Data {
	return groupNullData(rng, sizeStudyClusters, 2)
}

// groupNullData is sizeStudyData with the given cluster sizes and number
// of groups ("a", "b", …).
func groupNullData(rng *rand.Rand, sizes []int, groups int) *Data {
	var y, t, site []float64
	var m []string
	for c, rows := range sizes {
		u := rng.NormFloat64()
		effect := make([]float64, groups)
		for j := range effect {
			effect[j] = 1 + rng.NormFloat64()
		}
		for range rows {
			g := rng.IntN(groups)
			ti := float64(rng.IntN(2))
			y = append(y, u+effect[g]*ti+rng.NormFloat64())
			t = append(t, ti)
			site = append(site, float64(c))
			m = append(m, string(rune('a'+g)))
		}
	}
	return &Data{Columns: []Column{{Name: "y", Num: y}, {Name: "t", Num: t}, {Name: "m", Text: m}, {Name: "site", Num: site}}}
}

// lineNullData draws one data set in g clusters whose effect follows a
// straight line in a number moderator m, so the linearity check's null is
// true: m = μ_c + z (schools differ in their pupils' m), treatment at
// random within each cluster, and a cluster's own intercept, effect and
// slope of the effect in m,
//
//	y = u_c + 0.5·m + (1 + a_c)·t + (0.5 + b_c)·t·m + e,
//
// u_c, a_c, e standard normal, μ_c ~ N(0, 0.5²), b_c ~ N(0, 0.3²).
// Cluster sizes cycle through 16 … 60 rows.
func lineNullData(rng *rand.Rand, g int) *Data {
	sizes := []int{16, 20, 24, 30, 36, 44, 52, 60, 24, 30}
	var y, t, m, site []float64
	for c := range g {
		u, a, b, mu := rng.NormFloat64(), rng.NormFloat64(), 0.3*rng.NormFloat64(), 0.5*rng.NormFloat64()
		for range sizes[c%len(sizes)] {
			mi := mu + rng.NormFloat64()
			ti := float64(rng.IntN(2))
			y = append(y, u+0.5*mi+(1+a)*ti+(0.5+b)*ti*mi+rng.NormFloat64())
			t = append(t, ti)
			m = append(m, mi)
			site = append(site, float64(c))
		}
	}
	return &Data{Columns: []Column{{Name: "y", Num: y}, {Name: "t", Num: t}, {Name: "m", Num: m}, {Name: "site", Num: site}}}
}

// sizeCell is one row of a size study: how often each way of judging a
// test rejects a true null at 5%.
type sizeCell struct {
	label                  string
	reps                   int
	cr1, boot, unjud, runs int // rejections by CR1's F or t, by the bootstrap; tests not judged; bootstraps run
}

func (c sizeCell) rate(k int) float64 { return float64(k) / float64(c.reps) }

// mcse is the Monte Carlo standard error of a rate from reps replications.
func (c sizeCell) mcse(p float64) float64 { return math.Sqrt(p * (1 - p) / float64(c.reps)) }

func (c sizeCell) row() string {
	pct := func(k int) string {
		return fmt.Sprintf("%.1f%% (%.1f)", 100*c.rate(k), 100*c.mcse(c.rate(k)))
	}
	cr1, boot := pct(c.cr1), pct(c.boot)
	switch {
	case c.unjud == c.reps:
		cr1, boot = "—", "—"
	case c.runs == 0:
		boot = "not run"
	}
	return fmt.Sprintf("| %s | %d | %s | %s | %d |\n", c.label, c.reps, cr1, boot, c.unjud)
}

// sizeOutcome is what one replication says: the p-values of CR1 and of the
// bootstrap (booted false when it did not run), or that the test was not
// judged.
type sizeOutcome struct {
	p, pBoot       float64
	judged, booted bool
}

// runSize fits reps data sets on every core and counts rejections at 5%.
// Replication r draws its data from seed r and its bootstrap from seed r.
func runSize(t *testing.T, label string, reps int, spec Spec, data func(*rand.Rand) *Data, read func(*Result) (sizeOutcome, bool)) sizeCell {
	t.Helper()
	cell := sizeCell{label: label, reps: reps}
	var failed int
	var mu sync.Mutex
	jobs := make(chan int)
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for r := range jobs {
				rng := rand.New(rand.NewPCG(uint64(r), 2008))
				s := spec
				s.Bootstrap.Seed = uint64(r)
				res, err := Fit(data(rng), s)
				var o sizeOutcome
				ok := err == nil
				if ok {
					o, ok = read(res)
				}
				mu.Lock()
				switch {
				case !ok:
					failed++
				case !o.judged:
					cell.unjud++
				default:
					if o.p < 0.05 {
						cell.cr1++
					}
					if o.booted {
						cell.runs++
						if o.pBoot < 0.05 {
							cell.boot++
						}
					}
				}
				mu.Unlock()
			}
		}()
	}
	for r := range reps {
		jobs <- r
	}
	close(jobs)
	wg.Wait()
	if failed > 0 {
		t.Fatalf("%s: %d of %d replications failed", label, failed, reps)
	}
	return cell
}

const sizeTableHead = "| test | replications | CR1 rejects (MC s.e.) | bootstrap rejects (MC s.e.) | not judged |\n|---|---|---|---|---|\n"

// TestSizeStudy estimates how often each test rejects a true null at 5%:
// the test that the effect is the same in both groups, with 8 clusters,
// by CR1 with t(G − 1) and by the restricted wild cluster bootstrap-t
// (Webb weights, 9,999 draws). Cameron, Gelbach & Miller (2008) find CR1
// over-rejecting with few clusters and the restricted wild bootstrap close
// to the nominal level; the acceptance band 3%–7% is issue 6's. It runs only
// with -size-study, so that CI stays fast.
func TestSizeStudy(t *testing.T) {
	if !*sizeStudy {
		t.Skip("run with -size-study (make size-study)")
	}
	spec := Spec{Outcome: "y", Treatment: Treatment{Column: "t"},
		Moderator: Moderator{Column: "m", Kind: ModeratorBinary}, Cluster: "site"}
	c := runSize(t, fmt.Sprintf("difference of 2 groups, %d clusters %v, Webb, 9,999 draws", len(sizeStudyClusters), sizeStudyClusters), 2000, spec, sizeStudyData,
		func(res *Result) (sizeOutcome, bool) {
			d := res.Differences[0]
			if d.Boot == nil {
				return sizeOutcome{}, false
			}
			return sizeOutcome{p: d.P, pBoot: d.Boot.P, judged: true, booted: true}, true
		})
	t.Log("\nRejections at 5% of a true zero difference\n" + sizeTableHead + c.row())
	if r := c.rate(c.boot); r < 0.03 || r > 0.07 {
		t.Errorf("bootstrap rejects %.1f%%, outside 3%%–7%%", 100*r)
	}
	if c.rate(c.cr1) < c.rate(c.boot)+3*c.mcse(c.rate(c.boot)) {
		t.Errorf("CR1 rejects %.1f%%, not clearly above the bootstrap's %.1f%%", 100*c.rate(c.cr1), 100*c.rate(c.boot))
	}
}

// sizeJointDraws is B in the size study of the joint tests. With
// α·(B + 1) a whole number a bootstrap test has the same level for any B,
// and B only costs power (Davidson & MacKinnon 2000, Econometric Reviews
// 19(1)), so 999 draws measure the level of the 9,999 a user gets.
const sizeJointDraws = 999

// sizeJointReps is the number of data sets per row: Monte Carlo standard
// error √(0.05·0.95/2000) ≈ 0.5 points at a true 5%.
const sizeJointReps = 2000

// TestSizeStudyJoint estimates how often the joint tests reject a true
// null at 5% (issue 19): the linearity check of a number moderator (8
// terms; the straight line holds) with 8, 9, 10, 20, 40 and 60 clusters,
// and the test that the effect is the same in 6 groups (5 terms; it is)
// with 6, 10, 20 and 40, judged by CR1's F(q, G − 1) — what the note used
// for the line before — and by the restricted wild cluster bootstrap of
// the same Wald statistic, which it uses now. The rows at q = G − 1 (the
// line with 9 clusters, 6 groups in 6) test the bound of maxJointTerms;
// with 8 clusters the line is not judged. Webb weights with 12 clusters or
// fewer, Rademacher above (METHODS §8); the bootstrap does not run with
// 42 clusters or more. Runs only with -size-study.
func TestSizeStudyJoint(t *testing.T) {
	if !*sizeStudy {
		t.Skip("run with -size-study (make size-study)")
	}
	base := Spec{Outcome: "y", Treatment: Treatment{Column: "t"}, Cluster: "site", Bootstrap: Bootstrap{Draws: sizeJointDraws}}
	line := base
	line.Moderator = Moderator{Column: "m", Kind: ModeratorContinuous}
	groups := base
	groups.Moderator = Moderator{Column: "m", Kind: ModeratorCategorical}
	outcome := func(w *WaldTest) sizeOutcome {
		o := sizeOutcome{p: w.P, judged: true, booted: w.PBoot != nil}
		if o.booted {
			o.pBoot = *w.PBoot
		}
		return o
	}
	readLine := func(res *Result) (sizeOutcome, bool) {
		l := res.Linearity
		switch {
		case l == nil:
			return sizeOutcome{}, false
		case l.NotJudged != nil:
			return sizeOutcome{}, true
		case l.Wald == nil || (l.Wald.PBoot == nil) != (res.Bootstrap == nil):
			return sizeOutcome{}, false
		}
		return outcome(l.Wald), true
	}
	readGroups := func(res *Result) (sizeOutcome, bool) {
		h := res.Heterogeneity
		switch {
		case res.HeterogeneityNotJudged != nil:
			return sizeOutcome{}, true
		case h == nil || (h.PBoot == nil) != (res.Bootstrap == nil):
			return sizeOutcome{}, false
		}
		return outcome(h), true
	}
	var cells []sizeCell
	for _, g := range []int{8, 9, 10, 20, 40, 60} {
		cells = append(cells, runSize(t, fmt.Sprintf("straight line (8 terms), %d clusters", g), sizeJointReps, line,
			func(rng *rand.Rand) *Data { return lineNullData(rng, g) }, readLine))
	}
	sizes := []int{16, 20, 24, 30, 36, 44, 52, 60, 24, 30}
	for _, g := range []int{6, 10, 20, 40} {
		cl := make([]int, g)
		for c := range cl {
			cl[c] = sizes[c%len(sizes)]
		}
		cells = append(cells, runSize(t, fmt.Sprintf("same effect in 6 groups (5 terms), %d clusters", g), sizeJointReps, groups,
			func(rng *rand.Rand) *Data { return groupNullData(rng, cl, 6) }, readGroups))
	}
	var b strings.Builder
	fmt.Fprintf(&b, "\nRejections at 5%% of a true null by the joint tests, %d bootstrap draws\n%s", sizeJointDraws, sizeTableHead)
	for _, c := range cells {
		b.WriteString(c.row())
	}
	t.Log(b.String())
	for _, c := range cells {
		if c.unjud > 0 && c.unjud < c.reps {
			t.Errorf("%s: %d of %d replications not judged; the rule depends on the counts alone", c.label, c.unjud, c.reps)
		}
		if c.runs == 0 {
			continue
		}
		// The band of TestSizeStudy (issue 6), for every row the bootstrap judges.
		if r := c.rate(c.boot); r < 0.03 || r > 0.07 {
			t.Errorf("%s: the bootstrap rejects %.1f%%, outside 3%%–7%%", c.label, 100*r)
		}
		if c.rate(c.cr1) < c.rate(c.boot)+3*c.mcse(c.rate(c.boot)) {
			t.Errorf("%s: CR1 rejects %.1f%%, not clearly above the bootstrap's %.1f%%", c.label, 100*c.rate(c.cr1), 100*c.rate(c.boot))
		}
	}
}
