package estimate

// Result is a fitted model read as a person asks about it: the effect of
// the treatment in each group, the differences between groups, and the
// tests, with everything needed to say how they were obtained.
type Result struct {
	// Spec is the spec that was fitted, defaults filled in.
	Spec Spec `json:"spec"`

	Rows  RowSummary `json:"rows"`
	Model ModelInfo  `json:"model"`
	// Design describes a design other than a single comparison of two
	// arms (METHODS §10); nil for that one, so that its JSON is as before.
	Design *DesignInfo `json:"design,omitempty"`

	Coefficients []Coefficient `json:"coefficients"`
	// Covariance is the estimated covariance of the coefficients, in the
	// order of Coefficients.
	Covariance [][]float64 `json:"covariance"`

	Moderator     ModeratorInfo `json:"moderator"`
	Effects       []GroupEffect `json:"effects"`
	Differences   []Difference  `json:"differences"`
	Heterogeneity *WaldTest     `json:"heterogeneity,omitempty"`
	// HeterogeneityNotJudged is set instead of Heterogeneity when its
	// interaction terms outnumber what the clusters can judge (joint.go).
	HeterogeneityNotJudged *NotJudged `json:"heterogeneity_not_judged,omitempty"`
	// Arms, with a treatment of several arms (arms.go), says for each
	// arm whether its effect is the same in every group; Heterogeneity is
	// then the joint test over every arm.
	Arms []ArmResult `json:"arms,omitempty"`
	// Leads, in a before-and-after design with more than one period
	// before the start, checks common trends (leads.go).
	Leads         *LeadsCheck    `json:"leads,omitempty"`
	JohnsonNeyman *JohnsonNeyman `json:"johnson_neyman,omitempty"`
	// Linearity checks a continuous moderator's straight line against the
	// effect within each third of it; nil for groups, or when the check
	// could not be made (Notes says why).
	Linearity *Linearity `json:"linearity,omitempty"`
	// Bootstrap says how the wild cluster bootstrap ran; nil when it did
	// not, and then no Boot field below is set.
	Bootstrap *BootstrapInfo `json:"bootstrap,omitempty"`

	// Notes are facts about this fit a reader should know (a fallback
	// variance type, probes outside the data).
	Notes []string `json:"notes,omitempty"`
}

// RowSummary says which rows were used.
type RowSummary struct {
	Read    int          `json:"read"`
	Used    int          `json:"used"`
	Dropped int          `json:"dropped"`
	Reasons []DropCount  `json:"reasons,omitempty"`
	List    []DroppedRow `json:"list,omitempty"`
}

// ModelInfo describes the fit as a whole.
type ModelInfo struct {
	Terms    int          `json:"terms"`
	Variance VarianceType `json:"variance"`
	// DF are the degrees of freedom of t and F tests: N − K, or G − 1
	// with clusters (METHODS §3).
	DF       int     `json:"df"`
	Clusters int     `json:"clusters,omitempty"`
	Sigma    float64 `json:"sigma"`
	R2       float64 `json:"r2"`
	AdjR2    float64 `json:"adj_r2"`
	// Condition is a lower estimate of the condition number of the
	// column-scaled model matrix.
	Condition float64 `json:"condition"`
	Alpha     float64 `json:"alpha"`
	Power     float64 `json:"power"`
	// OutcomeBinary is true when the outcome is 0/1, so effects are
	// differences in proportions.
	OutcomeBinary bool `json:"outcome_binary,omitempty"`
	// DataSHA256 is a hash of exactly the values the fit used (model
	// matrix, outcome, weights, clusters), so a reader can tell whether the
	// data changed between two runs.
	DataSHA256 string `json:"data_sha256"`
}

// Coefficient is one term of the model.
type Coefficient struct {
	Term string `json:"term"`
	// Role is intercept, treatment, moderator, interaction or control.
	Role string `json:"role"`
	Inference
}

// Inference is an estimate with its standard error, t statistic, two-sided
// p-value and confidence interval at level 1 − α.
type Inference struct {
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
	T        float64 `json:"t"`
	P        float64 `json:"p"`
	CILow    float64 `json:"ci_low"`
	CIHigh   float64 `json:"ci_high"`
}

// ModeratorInfo describes the moderator as fitted.
type ModeratorInfo struct {
	Column string        `json:"column"`
	Kind   ModeratorKind `json:"kind"`
	// Levels and Reference, for a binary or categorical moderator.
	Levels    []string `json:"levels,omitempty"`
	Reference string   `json:"reference,omitempty"`
	// Min, Max and Centre, for a continuous moderator.
	Min    float64 `json:"min,omitempty"`
	Max    float64 `json:"max,omitempty"`
	Centre float64 `json:"centre,omitempty"`
	// Histogram counts the rows used in equal-width bins over [Min, Max],
	// for a continuous moderator, so a reader can see where the data are.
	Histogram []Bin `json:"histogram,omitempty"`
}

// Bin is one bar of a histogram: rows with From ≤ value < To (the last bin
// includes To).
type Bin struct {
	From float64 `json:"from"`
	To   float64 `json:"to"`
	Rows int     `json:"rows"`
}

// GroupEffect is the treatment's effect in one moderator group, or at one
// probe value of a continuous moderator.
type GroupEffect struct {
	// Group is the level, or for a continuous moderator a probe label
	// ("p10" for the 10th percentile, or the value typed).
	Group string  `json:"group"`
	Value float64 `json:"value,omitempty"`
	// Arm names the arm, with a treatment of several arms; Treated and
	// Untreated then count the group's rows of the arm and of the
	// comparison arm.
	Arm       string `json:"arm,omitempty"`
	Reference bool   `json:"reference,omitempty"`
	// Rows used in the group; for a probe, rows whose moderator lies within
	// 10% of the observed range of the probe value.
	Rows int `json:"rows"`
	// Treated and Untreated count the group's rows by arm (binary or
	// labelled treatment only).
	Treated   int `json:"treated,omitempty"`
	Untreated int `json:"untreated,omitempty"`
	// Extrapolated marks a probe outside the observed range.
	Extrapolated bool `json:"extrapolated,omitempty"`
	Inference
	// Contrast is the weight of each coefficient, in the order of
	// Coefficients, in this effect: Estimate = Σ Contrast[i]·b[i] and
	// SE² = Σ Contrast[i]·Covariance[i][j]·Contrast[j], so that a reader
	// (or a spreadsheet formula) can rebuild it from the coefficients.
	Contrast []float64 `json:"contrast,omitempty"`
	// Boot is the wild cluster bootstrap's p-value and interval.
	Boot *BootInference `json:"boot,omitempty"`
}

// Difference is the difference of the effects in two groups, To − From,
// or for a continuous moderator (PerUnit) the change in the effect per unit
// of the moderator.
type Difference struct {
	From string `json:"from,omitempty"`
	To   string `json:"to,omitempty"`
	// Arm names the arm whose effects differ, with several arms.
	Arm     string `json:"arm,omitempty"`
	PerUnit bool   `json:"per_unit,omitempty"`
	// VsReference marks a comparison with the reference group.
	VsReference bool `json:"vs_reference,omitempty"`
	Inference
	// Contrast is the weight of each coefficient in this difference, as
	// in GroupEffect.
	Contrast []float64 `json:"contrast,omitempty"`
	// MDD is the minimum detectable difference at the spec's α and power
	// (Bloom 1995).
	MDD float64 `json:"mdd"`
	// Boot is the wild cluster bootstrap's p-value and interval.
	Boot *BootInference `json:"boot,omitempty"`
	// Equivalence tests whether the difference lies within the spec's
	// smallest difference that matters; nil without a margin, and for the
	// per-unit change of a continuous moderator (in other units).
	Equivalence *Equivalence `json:"equivalence,omitempty"`
}

// Equivalence is the two one-sided tests (Schuirmann 1987, J.
// Pharmacokinetics and Biopharmaceutics 15(6); METHODS §7) that a
// difference d lies within (−Δ, Δ): H0 d ≤ −Δ against d > −Δ, and H0 d ≥ Δ
// against d < Δ, each at level α. Both reject exactly when the (1 − 2α)
// interval of d lies inside (−Δ, Δ); then the groups are called equivalent.
type Equivalence struct {
	Margin float64 `json:"margin"`
	// CILow and CIHigh are the (1 − 2α) interval of the difference.
	CILow  float64 `json:"ci_low"`
	CIHigh float64 `json:"ci_high"`
	// P is the larger of the two one-sided p-values.
	P          float64 `json:"p"`
	Equivalent bool    `json:"equivalent"`
	// Bootstrap says the interval and p come from the wild cluster
	// bootstrap: the interval by inverting its test at level 2α, each
	// one-sided p half the two-sided p at ±Δ (on the side of the estimate).
	Bootstrap bool `json:"bootstrap,omitempty"`
	// Bounded is false when the bootstrap cannot bound the interval; the
	// interval is then left at zero and the groups are not called
	// equivalent.
	Bounded bool `json:"bounded"`
}

// WaldTest is an F test of several linear restrictions.
type WaldTest struct {
	F   float64 `json:"F"`
	DF1 int     `json:"df1"`
	DF2 int     `json:"df2"`
	P   float64 `json:"p"`
	// PBoot is the wild cluster bootstrap's p-value of the same test.
	PBoot *float64 `json:"p_boot,omitempty"`
}

// EffectAt returns the treatment's effect at moderator value m of a
// continuous moderator, θ(m) = b1 + b3·(m − c), with its standard error,
// test and interval from the full covariance (METHODS §4–5). It is what a
// chart draws across the observed range. ok is false for a binary or
// categorical moderator.
func (r *Result) EffectAt(m float64) (inf Inference, ok bool) {
	if r.Moderator.Kind != ModeratorContinuous {
		return Inference{}, false
	}
	t, b3 := -1, -1
	for i, c := range r.Coefficients {
		switch c.Role {
		case roleTreatment:
			t = i
		case roleInteraction:
			b3 = i
		}
	}
	if t < 0 || b3 < 0 {
		return Inference{}, false
	}
	k := len(r.Coefficients)
	coef := make([]float64, k)
	v := make([]float64, k*k)
	for i := range r.Coefficients {
		coef[i] = r.Coefficients[i].Estimate
		copy(v[i*k:(i+1)*k], r.Covariance[i])
	}
	in := newInferencer(coef, v, r.Model.DF, r.Model.Alpha, r.Model.Power)
	a := make([]float64, k)
	a[t] = 1
	a[b3] = m - r.Moderator.Centre
	return in.combo(a), true
}

// DesignKind names a study design.
type DesignKind string

const (
	// BeforeAfter is a difference in differences by group (METHODS §10).
	BeforeAfter DesignKind = "before_after"
	// RepeatedUnits is a trial whose units have several rows each (a
	// unit column without a period column).
	RepeatedUnits DesignKind = "repeated_units"
)

// DesignInfo says how a design other than a single trial was fitted.
type DesignInfo struct {
	Kind DesignKind `json:"kind"`
	// Period and After name the period column and the value after the
	// start ("1" for a 0/1 column).
	Period string `json:"period,omitempty"`
	After  string `json:"after,omitempty"`
	// Unit is the unit column and Units the number of units among the
	// rows used.
	Unit  string `json:"unit,omitempty"`
	Units int    `json:"units,omitempty"`
	// UnitEffects says each unit's own level was absorbed (within.go);
	// Absorbed names the terms that do not change within any unit and so
	// dropped out with it.
	UnitEffects bool     `json:"unit_effects,omitempty"`
	Absorbed    []string `json:"absorbed,omitempty"`
	// UnitsNested says every unit lies in one cluster, so CR1's
	// small-sample factor does not count the unit effects.
	UnitsNested bool `json:"units_nested,omitempty"`
	// Cells counts the rows used by group of units and period: the
	// comparison units before and after, the programme's units before
	// and after.
	Cells [4]int `json:"cells"`
}
