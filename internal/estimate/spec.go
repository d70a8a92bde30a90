package estimate

import (
	"fmt"
	"math"
)

// TreatmentKind says how the treatment column is read.
type TreatmentKind string

const (
	// TreatmentBinary is a numeric column of 0 (untreated) and 1 (treated).
	TreatmentBinary TreatmentKind = "binary"
	// TreatmentLabels is a column of two labels, one of them named as treated.
	TreatmentLabels TreatmentKind = "labels"
	// TreatmentContinuous is a dose or amount; its coefficient is the
	// change in the outcome per unit.
	TreatmentContinuous TreatmentKind = "continuous"
	// TreatmentArms is a column of two or more arms, one of them (Control)
	// the comparison; each other arm gets its own effect (METHODS §11).
	TreatmentArms TreatmentKind = "arms"
)

// ModeratorKind says how the moderator column enters the model.
type ModeratorKind string

const (
	// ModeratorBinary is a column with exactly two values (0/1 or two labels).
	ModeratorBinary ModeratorKind = "binary"
	// ModeratorCategorical is a column of groups, compared with a reference.
	ModeratorCategorical ModeratorKind = "categorical"
	// ModeratorContinuous is a number that enters the model as it is
	// (optionally centred); effects are reported at probe values.
	ModeratorContinuous ModeratorKind = "continuous"
)

// VarianceType names a variance estimator (METHODS §3).
type VarianceType string

const (
	Classical VarianceType = "classical"
	HC0       VarianceType = "HC0"
	HC1       VarianceType = "HC1"
	HC2       VarianceType = "HC2"
	HC3       VarianceType = "HC3"
	CR1       VarianceType = "CR1"
)

// VarianceTypes lists every estimator, in the order they are explained.
var VarianceTypes = []VarianceType{Classical, HC0, HC1, HC2, HC3, CR1}

// Treatment is the column whose effect is studied.
type Treatment struct {
	Column string        `json:"column"`
	Kind   TreatmentKind `json:"kind"`
	// Treated is the label that means "treated" when Kind is TreatmentLabels.
	Treated string `json:"treated,omitempty"`
	// Control is the comparison arm when Kind is TreatmentArms.
	Control string `json:"control,omitempty"`
}

// labelled reports whether the treatment column is read as labels.
func (t Treatment) labelled() bool { return t.Kind == TreatmentLabels || t.Kind == TreatmentArms }

// Moderator is the column across whose values the effect may differ.
type Moderator struct {
	Column string        `json:"column"`
	Kind   ModeratorKind `json:"kind"`
	// Reference is the comparison group of a binary or categorical moderator.
	// Empty means the group with the most rows (ties: first in sorted order);
	// for a 0/1 column, 0.
	Reference string `json:"reference,omitempty"`
	// Centre, for a continuous moderator, is subtracted before fitting, so
	// the treatment's coefficient is its effect at the centre. Nil means 0.
	Centre *float64 `json:"centre,omitempty"`
	// Probes are the moderator values at which effects are reported. Nil
	// means the 10th, 25th, 50th, 75th and 90th percentiles.
	Probes []float64 `json:"probes,omitempty"`
}

// Spec is everything a fit needs besides the data.
type Spec struct {
	Outcome   string    `json:"outcome"`
	Treatment Treatment `json:"treatment"`
	Moderator Moderator `json:"moderator"`
	// Controls are numeric columns entered as they are, or text columns
	// entered as a set of indicators (reference: the largest group).
	Controls []string `json:"controls,omitempty"`
	Cluster  string   `json:"cluster,omitempty"`
	Weights  string   `json:"weights,omitempty"`
	// Variance is the estimator; empty means HC3 without a cluster, CR1
	// with one.
	Variance VarianceType `json:"variance,omitempty"`
	// LeverageFallback, if set, is used instead of HC2 or HC3 when a row
	// has leverage 1 and those are undefined; empty means stop with an error
	// that names the rows, so the person decides.
	LeverageFallback VarianceType `json:"leverage_fallback,omitempty"`
	// Alpha is the significance level; 0 means 0.05.
	Alpha float64 `json:"alpha,omitempty"`
	// Power is the power of the minimum detectable difference; 0 means 0.8.
	Power float64 `json:"power,omitempty"`
	// Bootstrap steers the wild cluster bootstrap, which runs by default
	// when the cluster column has fewer than BootstrapClusters clusters.
	Bootstrap Bootstrap `json:"bootstrap"`
	// EquivalenceMargin is the smallest difference between groups that
	// matters, in the outcome's units (for a 0/1 outcome, a difference in
	// proportions); when set, every difference between groups is tested
	// for equivalence within it (Schuirmann 1987). 0 means none.
	EquivalenceMargin float64 `json:"equivalence_margin,omitempty"`

	// Period, when set, makes the fit a difference in differences by
	// group (METHODS §10): the column that says whether a row was measured
	// before (0) or after (1) the programme started; with After set, a
	// column of two labels (or two numbers) of which After is the one
	// after the start. The treatment then marks the units that get the
	// programme, and its effect in each group is the difference in
	// differences there.
	Period string `json:"period,omitempty"`
	After  string `json:"after,omitempty"`
	// Unit names the column that identifies the unit (person, site) whose
	// rows are repeated; when no cluster column is chosen and the variance
	// type is CR1 or left empty, the errors are clustered by it
	// (Bertrand, Duflo & Mullainathan 2004).
	Unit string `json:"unit,omitempty"`
	// UnitEffects absorbs each unit's own level by demeaning every column
	// within unit (the within transformation, Frisch–Waugh–Lovell); terms
	// that do not change within any unit drop out and are named in
	// Result.Absorbed.
	UnitEffects bool `json:"unit_effects,omitempty"`
}

// DiD reports whether the spec is a before-and-after design.
func (s Spec) DiD() bool { return s.Period != "" }

// withDefaults returns the spec with every default filled in, or an error
// if a setting is invalid.
func (s Spec) withDefaults() (Spec, error) {
	if s.Alpha == 0 {
		s.Alpha = 0.05
	}
	if s.Power == 0 {
		s.Power = 0.8
	}
	if s.Unit != "" && s.Cluster == "" && (s.Variance == "" || s.Variance == CR1) {
		s.Cluster = s.Unit
	}
	if s.Variance == "" {
		s.Variance = HC3
		if s.Cluster != "" {
			s.Variance = CR1
		}
	}
	if s.Bootstrap.Draws == 0 {
		s.Bootstrap.Draws = DefaultDraws
	}
	if s.Treatment.Kind == "" {
		s.Treatment.Kind = TreatmentBinary
		if s.Treatment.Treated != "" {
			s.Treatment.Kind = TreatmentLabels
		}
		if s.Treatment.Control != "" {
			s.Treatment.Kind = TreatmentArms
		}
	}
	switch {
	case s.Outcome == "":
		return s, fail(ErrSpec, "", "No outcome column is chosen. Pick the column that measures the result.")
	case s.Treatment.Column == "":
		return s, fail(ErrSpec, "", "No treatment column is chosen. Pick the column that says who received the programme.")
	case s.Moderator.Column == "":
		return s, fail(ErrSpec, "", "No moderator column is chosen. Pick the column whose groups or values you want to compare.")
	case !(s.Alpha > 0 && s.Alpha < 0.5):
		return s, fail(ErrSpec, "", fmt.Sprintf("The significance level %g is outside (0, 0.5). The usual choice is 0.05.", s.Alpha))
	case !(s.Power > 0 && s.Power < 1):
		return s, fail(ErrSpec, "", fmt.Sprintf("The power %g is outside (0, 1). The usual choice is 0.8.", s.Power))
	case s.Variance == CR1 && s.Cluster == "":
		return s, fail(ErrSpec, "", "Cluster-robust errors (CR1) need a cluster column. Pick the column that names each site or group, or choose HC3.")
	case s.Cluster != "" && s.Variance != CR1:
		return s, fail(ErrSpec, s.Cluster, fmt.Sprintf("A cluster column (%q) is chosen but the variance type is %s, which ignores it. Choose CR1, or remove the cluster column.", s.Cluster, s.Variance))
	case !(s.EquivalenceMargin >= 0) || math.IsInf(s.EquivalenceMargin, 0):
		return s, fail(ErrSpec, "", fmt.Sprintf("The smallest difference that matters, %g, must be a positive number in the outcome's units (or 0 for none).", s.EquivalenceMargin))
	case s.Bootstrap.Draws < 1 || s.Bootstrap.Draws > MaxDraws:
		return s, fail(ErrSpec, "", fmt.Sprintf("The number of bootstrap draws %d is outside 1 to %d. The usual choice is %d.", s.Bootstrap.Draws, MaxDraws, DefaultDraws))
	case s.Bootstrap.Weights != "" && s.Bootstrap.Weights != Rademacher && s.Bootstrap.Weights != Webb:
		return s, fail(ErrSpec, "", fmt.Sprintf("Unknown bootstrap weights %q; choose rademacher or webb, or leave it empty.", s.Bootstrap.Weights))
	case s.UnitEffects && s.Unit == "":
		return s, fail(ErrSpec, "", "Unit effects need a unit column. Pick the column that names each person or site whose rows are repeated.")
	case s.After != "" && s.Period == "":
		return s, fail(ErrSpec, "", fmt.Sprintf("The value %q is named as \"after\" but no period column is chosen. Pick the column that says before or after.", s.After))
	case s.DiD() && s.Treatment.Kind == TreatmentContinuous:
		return s, fail(ErrSpec, s.Treatment.Column, "A before-and-after design needs a treatment that marks the units that get the programme (0/1 or two labels), not an amount.")
	case s.Treatment.Kind == TreatmentArms && s.Treatment.Control == "":
		return s, fail(ErrSpec, s.Treatment.Column, fmt.Sprintf("Say which arm of %q is the comparison (the control group).", s.Treatment.Column))
	case s.Treatment.Kind == TreatmentArms && s.Moderator.Kind == ModeratorContinuous:
		return s, fail(ErrSpec, s.Moderator.Column, "A treatment with several arms is compared across the groups of a moderator; a number moderator is not supported with several arms yet. Choose a moderator of groups, or cut the number into groups.")
	case s.Treatment.Kind == TreatmentLabels && s.Treatment.Treated == "":
		return s, fail(ErrSpec, s.Treatment.Column, fmt.Sprintf("Say which label in %q means treated.", s.Treatment.Column))
	}
	if !knownVariance(s.Variance) {
		return s, fail(ErrSpec, "", fmt.Sprintf("Unknown variance type %q; choose one of classical, HC0, HC1, HC2, HC3, CR1.", s.Variance))
	}
	if s.LeverageFallback != "" && (!knownVariance(s.LeverageFallback) || s.LeverageFallback == HC2 || s.LeverageFallback == HC3 || s.LeverageFallback == CR1) {
		return s, fail(ErrSpec, "", fmt.Sprintf("The fallback variance type %q must be classical, HC0 or HC1.", s.LeverageFallback))
	}
	switch s.Treatment.Kind {
	case TreatmentBinary, TreatmentLabels, TreatmentContinuous, TreatmentArms:
	default:
		return s, fail(ErrSpec, s.Treatment.Column, fmt.Sprintf("Unknown treatment kind %q; choose binary, labels, continuous or arms.", s.Treatment.Kind))
	}
	switch s.Moderator.Kind {
	case ModeratorBinary, ModeratorCategorical, ModeratorContinuous:
	default:
		return s, fail(ErrSpec, s.Moderator.Column, fmt.Sprintf("Unknown moderator kind %q; choose binary, categorical or continuous.", s.Moderator.Kind))
	}
	roles := map[string]string{s.Outcome: "outcome"}
	for _, r := range []struct{ col, role string }{
		{s.Treatment.Column, "treatment"}, {s.Moderator.Column, "moderator"},
		{s.Period, "period"}, {s.Cluster, "cluster"}, {s.Weights, "weights"}, {s.Unit, "unit"},
	} {
		if r.col == "" || (r.role == "unit" && r.col == s.Cluster) {
			continue
		}
		if prev, ok := roles[r.col]; ok {
			return s, fail(ErrSpec, r.col, fmt.Sprintf("Column %q is chosen as both %s and %s. Each role needs its own column.", r.col, prev, r.role))
		}
		roles[r.col] = r.role
	}
	for _, c := range s.Controls {
		prev, ok := roles[c]
		switch {
		case ok && prev == "control":
			return s, fail(ErrSpec, c, fmt.Sprintf("Column %q is listed twice as a control.", c))
		case ok && prev != "cluster":
			return s, fail(ErrSpec, c, fmt.Sprintf("Column %q is chosen as both %s and a control. Remove it from the controls.", c, prev))
		}
		roles[c] = "control"
	}
	return s, nil
}

// Check reports the first setting of s that a fit would refuse, before
// any data are read: a role without a column, one column in two roles,
// an unknown kind or type, a value out of range.
func (s Spec) Check() error {
	_, err := s.withDefaults()
	return err
}

func knownVariance(v VarianceType) bool {
	for _, k := range VarianceTypes {
		if v == k {
			return true
		}
	}
	return false
}
