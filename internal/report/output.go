package report

import (
	"strings"

	"slopewise/internal/estimate"
)

// Output is the results of one run as the headless command prints them
// with --json. Its shape is a documented contract (README, "JSON output"):
// fields are added, never renamed or removed.
type Output struct {
	NUsed         int        `json:"n_used"`
	NDropped      int        `json:"n_dropped"`
	SEType        string     `json:"se_type"`
	DF            float64    `json:"df"`
	Groups        []OutGroup `json:"groups"`
	Differences   []OutDiff  `json:"differences"`
	Heterogeneity *OutWald   `json:"heterogeneity"`
	// HeterogeneityNotJudged is set, and Heterogeneity null, when there
	// are too few clusters to judge the test.
	HeterogeneityNotJudged *OutNotJudged  `json:"heterogeneity_not_judged,omitempty"`
	JN                     *OutJN         `json:"jn,omitempty"`
	Linearity              *OutLinearity  `json:"linearity,omitempty"`
	Coefficients           []OutCoef      `json:"coefficients"`
	Note                   string         `json:"note"`
	Cautions               []string       `json:"cautions"`
	Dropped                []OutDropCount `json:"dropped_reasons,omitempty"`
	// Bootstrap says how the wild cluster bootstrap ran; null when it did
	// not (no cluster column, 42 clusters or more, or turned off).
	Bootstrap *OutBootstrap `json:"bootstrap"`
	// EquivalenceMargin is the smallest difference that matters, when
	// given; each difference between groups then carries its test.
	EquivalenceMargin float64 `json:"equivalence_margin,omitempty"`
	// Design describes a design other than a single trial (a
	// before-and-after comparison, units with several rows); left out for
	// a single trial.
	Design *OutDesign `json:"design,omitempty"`
	// Arms, with a treatment of several arms: each arm's test that its
	// effect is the same in every group, with Holm's adjustment over the
	// arms; heterogeneity is then the joint test of every arm.
	Arms []OutArm `json:"arms,omitempty"`
}

// OutBootstrap describes the wild cluster bootstrap of a run.
type OutBootstrap struct {
	Draws      int    `json:"draws"`
	Weights    string `json:"weights"`
	Enumerated bool   `json:"enumerated"`
	Seed       uint64 `json:"seed"`
}

// OutBoot is the bootstrap's p-value and interval of an effect or a
// difference; the interval is left out when the bootstrap cannot bound it.
type OutBoot struct {
	PBoot      *float64 `json:"p_boot,omitempty"`
	CIBootLow  *float64 `json:"ci_boot_low,omitempty"`
	CIBootHigh *float64 `json:"ci_boot_high,omitempty"`
}

func outBoot(b *estimate.BootInference) OutBoot {
	if b == nil {
		return OutBoot{}
	}
	o := OutBoot{PBoot: &b.P}
	if b.Bounded {
		o.CIBootLow, o.CIBootHigh = &b.CILow, &b.CIHigh
	}
	return o
}

// OutGroup is the effect in one group, or at one value of a continuous
// moderator (then N counts the rows nearby and may be omitted).
type OutGroup struct {
	Label string `json:"label"`
	// Arm names the arm, with a treatment of several arms.
	Arm      string  `json:"arm,omitempty"`
	N        *int    `json:"n,omitempty"`
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
	CILow    float64 `json:"ci_low"`
	CIHigh   float64 `json:"ci_high"`
	P        float64 `json:"p"`
	OutBoot
}

// OutDiff is one difference between groups.
type OutDiff struct {
	Label string `json:"label"`
	// Arm names the arm whose effects differ, with several arms.
	Arm      string  `json:"arm,omitempty"`
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
	CILow    float64 `json:"ci_low"`
	CIHigh   float64 `json:"ci_high"`
	P        float64 `json:"p"`
	MDD      float64 `json:"mdd"`
	OutBoot
	Equivalence *OutEquivalence `json:"equivalence,omitempty"`
}

// OutEquivalence is the two one-sided tests of a difference against the
// smallest difference that matters (Schuirmann 1987).
type OutEquivalence struct {
	Margin     float64  `json:"margin"`
	CILow      *float64 `json:"ci_low,omitempty"`
	CIHigh     *float64 `json:"ci_high,omitempty"`
	P          float64  `json:"p"`
	Equivalent bool     `json:"equivalent"`
	Bootstrap  bool     `json:"bootstrap"`
}

func outEquivalence(e *estimate.Equivalence) *OutEquivalence {
	if e == nil {
		return nil
	}
	o := &OutEquivalence{Margin: e.Margin, P: e.P, Equivalent: e.Equivalent, Bootstrap: e.Bootstrap}
	if e.Bounded {
		o.CILow, o.CIHigh = &e.CILow, &e.CIHigh
	}
	return o
}

// OutWald is the test that the effect is the same in every group.
type OutWald struct {
	F     float64  `json:"F"`
	DF1   int      `json:"df1"`
	DF2   float64  `json:"df2"`
	P     float64  `json:"p"`
	PBoot *float64 `json:"p_boot,omitempty"`
}

// OutJN is the Johnson–Neyman result of a continuous moderator: the
// boundaries inside the observed range, and where the effect is
// distinguishable from zero in words.
type OutJN struct {
	Bounds           []float64 `json:"bounds"`
	SignificantWhere string    `json:"significant_where"`
}

// OutLinearity is the check of a continuous moderator's straight line:
// the effect within each third beside the line's, and the Wald test of the
// line against the thirds (Hainmueller, Mummolo & Xu 2019).
type OutLinearity struct {
	Thirds []OutThird `json:"thirds"`
	Wald   *OutWald   `json:"wald"`
	// NotJudged is set, and Wald null, when there are too few clusters
	// to judge the test.
	NotJudged   *OutNotJudged `json:"not_judged,omitempty"`
	Contradicts bool          `json:"contradicts"`
}

// OutNotJudged is a joint test that is not made because there are too few
// clusters for the terms it weighs: no F, no p, the reason in words.
type OutNotJudged struct {
	Terms    int    `json:"terms"`
	Clusters int    `json:"clusters"`
	MaxTerms int    `json:"max_terms"`
	Reason   string `json:"reason"`
}

func outNotJudged(nj *estimate.NotJudged, cluster string) *OutNotJudged {
	if nj == nil {
		return nil
	}
	return &OutNotJudged{Terms: nj.Terms, Clusters: nj.Clusters, MaxTerms: nj.MaxTerms,
		Reason: capitalise("the test " + notJudgedWords(nj, cluster) + ".")}
}

// OutThird is one third of the moderator's rows.
type OutThird struct {
	From         float64 `json:"from"`
	To           float64 `json:"to"`
	Median       float64 `json:"median"`
	N            int     `json:"n"`
	Estimate     float64 `json:"estimate"`
	SE           float64 `json:"se"`
	CILow        float64 `json:"ci_low"`
	CIHigh       float64 `json:"ci_high"`
	P            float64 `json:"p"`
	LineEstimate float64 `json:"line_estimate"`
	LineCILow    float64 `json:"line_ci_low"`
	LineCIHigh   float64 `json:"line_ci_high"`
}

func outLinearity(l *estimate.Linearity, cluster string) *OutLinearity {
	if l == nil {
		return nil
	}
	o := &OutLinearity{Thirds: []OutThird{}, Contradicts: l.Contradicts, NotJudged: outNotJudged(l.NotJudged, cluster)}
	for _, th := range l.Thirds {
		e, ln := th.Effect, th.Line
		o.Thirds = append(o.Thirds, OutThird{From: th.From, To: th.To, Median: th.Median, N: th.Rows,
			Estimate: e.Estimate, SE: e.SE, CILow: e.CILow, CIHigh: e.CIHigh, P: e.P,
			LineEstimate: ln.Estimate, LineCILow: ln.CILow, LineCIHigh: ln.CIHigh})
	}
	if w := l.Wald; w != nil {
		o.Wald = &OutWald{F: w.F, DF1: w.DF1, DF2: float64(w.DF2), P: w.P, PBoot: w.PBoot}
	}
	return o
}

// OutCoef is one term of the model.
type OutCoef struct {
	Term     string  `json:"term"`
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
	CILow    float64 `json:"ci_low"`
	CIHigh   float64 `json:"ci_high"`
	P        float64 `json:"p"`
}

// OutDropCount counts the rows left out for one reason.
type OutDropCount struct {
	Reason string `json:"reason"`
	Rows   int    `json:"rows"`
}

// SEName is the standard-error type in the words of the command line
// (--se): classical, hc0…hc3, cluster.
func SEName(v estimate.VarianceType) string {
	if v == estimate.CR1 {
		return "cluster"
	}
	return strings.ToLower(string(v))
}

// Summarize fills the JSON contract from a run and its result.
func Summarize(run Run, res *estimate.Result) Output {
	o := Output{
		NUsed: res.Rows.Used, NDropped: res.Rows.Dropped,
		SEType: SEName(res.Model.Variance), DF: float64(res.Model.DF),
		Note: Note(run, res), Cautions: Cautions(run, res),
		Groups: []OutGroup{}, Differences: []OutDiff{}, Coefficients: []OutCoef{},
		EquivalenceMargin: res.Spec.EquivalenceMargin,
	}
	continuous := res.Moderator.Kind == estimate.ModeratorContinuous
	for _, e := range res.Effects {
		g := OutGroup{Label: e.Group, Arm: e.Arm, Estimate: e.Estimate, SE: e.SE, CILow: e.CILow, CIHigh: e.CIHigh, P: e.P, OutBoot: outBoot(e.Boot)}
		if continuous {
			g.Label = formatValue(e.Value)
		}
		n := e.Rows
		g.N = &n
		o.Groups = append(o.Groups, g)
	}
	for _, d := range res.Differences {
		o.Differences = append(o.Differences, OutDiff{Label: comparisonLabel(res, d, formatValue), Arm: d.Arm, Estimate: d.Estimate, SE: d.SE,
			CILow: d.CILow, CIHigh: d.CIHigh, P: d.P, MDD: d.MDD, OutBoot: outBoot(d.Boot), Equivalence: outEquivalence(d.Equivalence)})
	}
	if h := res.Heterogeneity; h != nil {
		o.Heterogeneity = &OutWald{F: h.F, DF1: h.DF1, DF2: float64(h.DF2), P: h.P, PBoot: h.PBoot}
	}
	if b := res.Bootstrap; b != nil {
		o.Bootstrap = &OutBootstrap{Draws: b.Draws, Weights: string(b.Weights), Enumerated: b.Enumerated, Seed: b.Seed}
	}
	if jn := res.JohnsonNeyman; jn != nil {
		bounds := []float64{}
		for _, r := range jn.Regions[1:] {
			bounds = append(bounds, r.From)
		}
		o.JN = &OutJN{Bounds: bounds, SignificantWhere: significantWhere(jn, res.Moderator.Column)}
	}
	o.Design = outDesign(res)
	o.Arms = outArms(res)
	o.HeterogeneityNotJudged = outNotJudged(res.HeterogeneityNotJudged, res.Spec.Cluster)
	o.Linearity = outLinearity(res.Linearity, res.Spec.Cluster)
	for _, c := range res.Coefficients {
		o.Coefficients = append(o.Coefficients, OutCoef{Term: c.Term, Estimate: c.Estimate, SE: c.SE, CILow: c.CILow, CIHigh: c.CIHigh, P: c.P})
	}
	for _, c := range res.Rows.Reasons {
		o.Dropped = append(o.Dropped, OutDropCount{Reason: c.Reason, Rows: c.Rows})
	}
	return o
}
