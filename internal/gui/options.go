package gui

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"slopewise/internal/estimate"
)

// seChoice is one standard-error type with its explanation.
type seChoice struct {
	label string
	vt    estimate.VarianceType
	why   string
}

var seChoices = []seChoice{
	{"Robust (HC3)", estimate.HC3, "Allows the outcome to vary more in some groups than others; the safest choice for most data, especially under a few hundred rows."},
	{"Robust (HC2)", estimate.HC2, "Like HC3 but a little less cautious."},
	{"Robust (HC1)", estimate.HC1, "The common robust choice in large samples; scaled for the number of terms."},
	{"Robust (HC0)", estimate.HC0, "The original robust formula; too optimistic in small samples."},
	{"Classical", estimate.Classical, "Assumes the outcome varies equally everywhere; only when you have reason to believe that."},
	{"Clustered (CR1)", estimate.CR1, "Rows of the same site or group are alike; needs a cluster column and, ideally, 40 or more clusters."},
}

// crChoice is the index of the clustered type in seChoices.
const crChoice = 5

// label is how choice i reads for the current roles: the clustered type
// names the cluster column chosen, or says that none is.
func (s *optionsScreen) label(i int) string {
	if i != crChoice {
		return seChoices[i].label
	}
	spec, _ := s.u.rolesScreen.spec()
	if spec.Cluster == "" {
		return "Clustered (CR1): needs a cluster column, chosen on the Roles step"
	}
	return fmt.Sprintf("Clustered by %s (CR1)", spec.Cluster)
}

// labels are the choices as they read now.
func (s *optionsScreen) labels() []string {
	out := make([]string, len(seChoices))
	for i := range seChoices {
		out[i] = s.label(i)
	}
	return out
}

// clusteredWithout reports the clustered type chosen with no cluster
// column: the run is held back until one is chosen.
func (s *optionsScreen) clusteredWithout() bool {
	spec, _ := s.u.rolesScreen.spec()
	return s.se.Selected == s.label(crChoice) && spec.Cluster == ""
}

// Confidence levels offered, as α.
var alphaChoices = []struct {
	label string
	alpha float64
}{
	{"95% (α = 0.05)", 0.05},
	{"90% (α = 0.10)", 0.10},
	{"99% (α = 0.01)", 0.01},
}

// optionsScreen is step 4: how to judge the results.
type optionsScreen struct {
	u          *UI
	se         *widget.RadioGroup
	seWhy      *widget.Label
	randomized *widget.Check
	planned    *widget.CheckGroup // the moderators named before looking
	bootstrap  *widget.Check
	// hc1Fallback lets HC2 and HC3 fall back to HC1 when a row is fitted
	// perfectly (leverage 1) instead of stopping.
	hc1Fallback *widget.Check
	level       *widget.Select
	margin      *widget.Entry // the smallest difference between groups that matters
	progress    *widget.ProgressBarInfinite

	bootstrapShown bool // the bootstrap's default has been set for the roles
	cancelBtn      *button
}

func newOptionsScreen(u *UI) *optionsScreen {
	s := &optionsScreen{u: u}
	var labels []string
	for _, c := range seChoices {
		labels = append(labels, c.label)
	}
	s.seWhy = widget.NewLabel("")
	s.seWhy.Wrapping = fyne.TextWrapWord
	s.se = widget.NewRadioGroup(labels, func(string) { s.explain() })
	s.randomized = widget.NewCheck("The treatment was randomly assigned (a lottery, not a choice)", func(bool) { u.forget(stepOptions) })
	s.planned = widget.NewCheckGroup(nil, func([]string) { u.forget(stepOptions) })
	s.hc1Fallback = widget.NewCheck("If a row is fitted perfectly (leverage 1), use HC1 for the errors instead of stopping", func(bool) { u.forget(stepOptions) })
	s.bootstrap = widget.NewCheck("Check the tests by re-drawing whole clusters (wild cluster bootstrap)", func(bool) { u.forget(stepOptions) })
	var levels []string
	for _, a := range alphaChoices {
		levels = append(levels, a.label)
	}
	s.level = widget.NewSelect(levels, func(string) { u.forget(stepOptions) })
	s.level.SetSelectedIndex(0)
	s.margin = widget.NewEntry()
	s.margin.SetPlaceHolder("optional, e.g. 50")
	s.margin.OnChanged = func(string) { u.forget(stepOptions); u.updateBar() }
	s.margin.Validator = func(t string) error {
		_, err := s.marginValue()
		return err
	}
	s.progress = widget.NewProgressBarInfinite()
	s.progress.Stop()
	s.cancelBtn = newButton("Cancel", nil, func() {
		if u.cancel != nil {
			u.cancel()
		}
	})
	return s
}

// defaultSE is the recommended type for the current roles.
func (s *optionsScreen) defaultSE() string {
	spec, _ := s.u.rolesScreen.spec()
	if spec.Cluster != "" {
		return s.label(crChoice)
	}
	return s.label(0)
}

func (s *optionsScreen) explain() {
	for i, c := range seChoices {
		if s.label(i) == s.se.Selected {
			words := c.why
			if s.label(i) == s.defaultSE() {
				words += " (Chosen for you.)"
			}
			if s.clusteredWithout() {
				words = "No cluster column is chosen: go back to the Roles step and choose one under \"Sites or groups whose rows are alike\", or choose another type here."
			}
			s.seWhy.SetText(words)
		}
	}
	s.u.forget(stepOptions)
	s.u.updateBar()
}

// offersFallback: the chosen type (HC2, HC3) needs every row's leverage
// below 1, so the fallback to HC1 is offered.
func (s *optionsScreen) offersFallback() bool {
	v := s.variance()
	return v == estimate.HC2 || v == estimate.HC3
}

// leverageFallback is the type HC2 and HC3 fall back to, if allowed.
func (s *optionsScreen) leverageFallback() estimate.VarianceType {
	if s.hc1Fallback.Checked && s.offersFallback() {
		return estimate.HC1
	}
	return ""
}

// variance is the chosen type, or the default for the roles.
func (s *optionsScreen) variance() estimate.VarianceType {
	for i, c := range seChoices {
		if s.label(i) == s.se.Selected {
			return c.vt
		}
	}
	return ""
}

// marginValue is the smallest difference that matters, 0 when empty.
func (s *optionsScreen) marginValue() (float64, error) {
	t := strings.TrimSpace(s.margin.Text)
	if t == "" {
		return 0, nil
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || !(v > 0) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("a positive number in the outcome's units, or nothing")
	}
	return v, nil
}

func (s *optionsScreen) alpha() float64 {
	return alphaChoices[max(s.level.SelectedIndex(), 0)].alpha
}

func (s *optionsScreen) content() fyne.CanvasObject {
	spec, _ := s.u.rolesScreen.spec()
	// The choices name the cluster column chosen now; a choice made
	// before keeps its place.
	was := -1
	for i, l := range s.se.Options {
		if l == s.se.Selected {
			was = i
		}
	}
	s.se.Options = s.labels()
	if was >= 0 {
		s.se.Selected = s.se.Options[was]
	}
	s.se.Refresh()
	// The clustered type needs a cluster; the others ignore one.
	if spec.Cluster == "" && was == crChoice || spec.Cluster != "" && was != crChoice || s.se.Selected == "" {
		s.se.SetSelected(s.defaultSE())
	}
	// Offer each moderator for marking as named in advance, keeping marks
	// already made.
	mods := s.u.rolesScreen.moderators()
	keep := map[string]bool{}
	for _, m := range s.planned.Selected {
		keep[m] = true
	}
	s.planned.Options = mods
	s.planned.Selected = nil
	for _, m := range mods {
		if keep[m] {
			s.planned.Selected = append(s.planned.Selected, m)
		}
	}
	s.planned.Refresh()
	intro := widget.NewLabel("How should the results be judged? The defaults suit most evaluations.")
	intro.Wrapping = fyne.TextWrapWord
	box := container.NewVBox(
		heading("How to judge"),
		intro,
		subheading("Standard errors"),
		s.se,
		s.seWhy,
	)
	if s.offersFallback() {
		box.Add(s.hc1Fallback)
	}
	if g := s.u.clusterCount(spec.Cluster); g > 0 && g < estimate.BootstrapClusters {
		if !s.bootstrapShown {
			s.bootstrap.SetChecked(true)
			s.bootstrapShown = true
		}
		why := widget.NewLabel(fmt.Sprintf("Recommended: with %d clusters, cluster-robust p-values are too small; re-drawing clusters (%d times) gives honest ones.", g, estimate.DefaultDraws))
		why.Wrapping = fyne.TextWrapWord
		box.Add(s.bootstrap)
		box.Add(why)
	}
	plannedWhy := widget.NewLabel("Moderators named before looking at the results (the others are treated as exploratory):")
	plannedWhy.Wrapping = fyne.TextWrapWord
	box.Add(widget.NewSeparator())
	box.Add(subheading("About the study"))
	box.Add(s.randomized)
	box.Add(plannedWhy)
	box.Add(s.planned)
	outcome := spec.Outcome
	box.Add(widget.NewForm(
		widget.NewFormItem("Confidence intervals", s.level),
		widget.NewFormItem("Smallest difference that matters", s.margin),
	))
	marginWhy := widget.NewLabel(fmt.Sprintf("In units of %s. When given, the findings say whether the groups' effects can be called the same to within it — not seeing a difference is not the same as showing there is none.", outcome))
	marginWhy.Wrapping = fyne.TextWrapWord
	marginWhy.Importance = widget.LowImportance
	box.Add(marginWhy)
	return container.NewVScroll(box)
}
