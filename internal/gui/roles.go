package gui

import (
	"errors"
	"fmt"
	"slices"
	"sort"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
	"slopewise/internal/report"
)

const none = "(none)"

// Words for the moderator's kinds in the window.
const (
	kindGroups = "Groups"
	kindTwo    = "Two groups"
	kindNumber = "A number"
)

// rolesScreen is step 3: which column is what.
type rolesScreen struct {
	u         *UI
	outcome   *widget.Select
	treatment *widget.Select
	treated   *widget.Select
	moderator *widget.Select
	modKind   *widget.RadioGroup
	reference *widget.Select
	probes    *widget.Entry
	centre    *widget.Entry
	controls  *widget.CheckGroup
	extra     *widget.CheckGroup // more moderators to try, each in a model of its own
	cluster   *widget.Select
	weights   *widget.Select
	// A treatment of several arms: the comparison arm.
	control *widget.Select
	// Before and after: the period column, its value after the start,
	// the unit column and whether each unit is compared with itself.
	beforeAfter *widget.Check
	period      *widget.Select
	after       *widget.Select
	unit        *widget.Select
	unitEffects *widget.Check
	// extraBox holds the other moderators to try; hidden for a design
	// other than a single two-arm trial, which is one moderator's.
	extraBox *fyne.Container
	// formBox holds the form and what follows it on the left.
	formBox *fyne.Container
	checks  *fyne.Container
	form    *fyne.Container // holds the current form; rebuilt as choices change
	// useCluster chooses the column a check suggests as the cluster; nil
	// when no check suggests one. It acts only when tapped.
	useCluster *button

	filling    bool
	lastChecks []pipeline.Check
	// The defaults chosen for the open table, and why (defaults.go).
	defTreatment, whyTreatment string
	defOutcome, whyOutcome     string
	// rolesBack: the roles of the last run on this sheet were put back.
	rolesBack bool
}

func newRolesScreen(u *UI) *rolesScreen {
	s := &rolesScreen{u: u}
	changed := func(string) { s.changed() }
	s.outcome = widget.NewSelect(nil, changed)
	s.treatment = widget.NewSelect(nil, func(string) { s.treatmentChanged(); s.changed() })
	s.treated = widget.NewSelect(nil, changed)
	s.moderator = widget.NewSelect(nil, func(string) { s.moderatorChanged(); s.changed() })
	s.modKind = widget.NewRadioGroup([]string{kindGroups, kindTwo, kindNumber}, func(string) { s.kindChanged(); s.changed() })
	// One under the other: side by side, the three made the Roles step
	// wider than a 1024-pixel screen.
	s.modKind.Horizontal = false
	s.reference = widget.NewSelect(nil, changed)
	s.probes = widget.NewEntry()
	s.probes.SetPlaceHolder("e.g. 20, 50, 80 — empty: the 10th to 90th percentiles")
	s.probes.OnChanged = changed
	s.centre = widget.NewEntry()
	s.centre.SetPlaceHolder("empty: no centring")
	s.centre.OnChanged = changed
	s.controls = widget.NewCheckGroup(nil, func([]string) { s.changed() })
	s.extra = widget.NewCheckGroup(nil, func([]string) { s.changed() })
	s.cluster = widget.NewSelect(nil, changed)
	s.weights = widget.NewSelect(nil, changed)
	s.control = widget.NewSelect(nil, changed)
	s.beforeAfter = widget.NewCheck("Yes", func(bool) { s.layoutForm(); s.changed() })
	s.period = widget.NewSelect(nil, func(string) { s.periodChanged(); s.changed() })
	s.after = widget.NewSelect(nil, changed)
	s.after.PlaceHolder = "with several after, the first of them"
	s.unit = widget.NewSelect(nil, changed)
	s.unitEffects = widget.NewCheck("Yes (unit effects)", func(bool) { s.changed() })
	s.checks = container.NewVBox()
	s.form = container.NewStack()
	s.layoutForm()
	return s
}

// layoutForm shows the rows that apply to the current choices: which value
// means treated for a treatment of labels, the comparison group for
// groups, the values and centre for a number.
func (s *rolesScreen) layoutForm() {
	items := []*widget.FormItem{
		widget.NewFormItem("Outcome — the result measured", s.outcome),
		widget.NewFormItem("Treatment — who received the programme", s.treatment),
	}
	if tc := s.column(s.treatment.Selected); tc != nil && pipeline.TreatmentKind(tc, "") == estimate.TreatmentLabels {
		if severalArms(tc) {
			items = append(items, widget.NewFormItem("Which value is the comparison group?", s.control))
		} else {
			items = append(items, widget.NewFormItem("Which value means treated?", s.treated))
		}
	}
	items = append(items,
		widget.NewFormItem("Moderator — compare the effect across", s.moderator),
		widget.NewFormItem("The moderator is", s.modKind),
	)
	if s.column(s.moderator.Selected) != nil {
		if s.modKind.Selected == kindNumber {
			items = append(items,
				widget.NewFormItem("Report the effect at", s.probes),
				widget.NewFormItem("Centre at", s.centre))
		} else {
			items = append(items, widget.NewFormItem("Compare each group with", s.reference))
		}
	}
	items = append(items, widget.NewFormItem("Measured before and after the start?", s.beforeAfter))
	if s.beforeAfter.Checked {
		items = append(items, widget.NewFormItem("Period — before or after the start", s.period))
		if pc := s.column(s.period.Selected); pc != nil && !pipeline.ZeroOne(pc) {
			items = append(items, widget.NewFormItem("Which value is after the start?", s.after))
		}
		items = append(items,
			widget.NewFormItem("Unit — the person or site measured each time", s.unit),
			widget.NewFormItem("Compare each unit with itself?", s.unitEffects))
	}
	items = append(items,
		widget.NewFormItem("Sites or groups whose rows are alike", s.cluster),
		widget.NewFormItem("Weight of each row", s.weights),
	)
	if s.extraBox != nil {
		if s.singleTrial() {
			s.extraBox.Show()
		} else {
			s.extraBox.Hide()
		}
	}
	// A new form each time: a form reuses its rows by position, so
	// changing its items in place would show widgets under wrong labels.
	s.form.Objects = []fyne.CanvasObject{widget.NewForm(items...)}
	s.form.Refresh()
	if s.formBox != nil {
		// The form's height changes with its rows: lay out what holds it
		// again, or the rows below would be drawn over it.
		s.formBox.Refresh()
	}
}

// reset offers the new table's columns and picks sensible defaults.
func (s *rolesScreen) reset() {
	t := s.u.table
	s.filling = true
	defer func() { s.filling = false; s.changed() }()
	s.u.optionsScreen.bootstrapShown = false
	s.rolesBack = false
	var all, numeric []string
	for _, c := range t.Columns {
		all = append(all, c.Name)
		if isNumeric(c) {
			numeric = append(numeric, c.Name)
		}
	}
	s.outcome.Options = numeric
	s.treatment.Options = all
	s.moderator.Options = all
	s.cluster.Options = append([]string{none}, all...)
	s.weights.Options = append([]string{none}, numeric...)
	s.outcome.ClearSelected()
	s.treatment.ClearSelected()
	s.moderator.ClearSelected()
	s.cluster.SetSelected(none)
	s.weights.SetSelected(none)
	s.controls.Options = nil
	s.controls.Selected = nil
	s.extra.Options = nil
	s.extra.Selected = nil
	s.probes.SetText("")
	s.centre.SetText("")
	s.beforeAfter.SetChecked(false)
	s.period.Options = all
	s.period.ClearSelected()
	s.after.ClearSelected()
	s.unit.Options = append([]string{none}, all...)
	s.unit.SetSelected(none)
	s.unitEffects.SetChecked(false)
	// Defaults by name and content (defaults.go), said in "Before
	// running"; a column of groups as the moderator.
	s.defTreatment, s.whyTreatment = defaultTreatment(t)
	s.defOutcome, s.whyOutcome = defaultOutcome(t, s.defTreatment)
	if s.defTreatment != "" {
		s.treatment.SetSelected(s.defTreatment)
	}
	if s.defOutcome != "" {
		s.outcome.SetSelected(s.defOutcome)
	}
	for _, c := range t.Columns {
		if (c.Kind == workbook.Category || c.Kind == workbook.YesNo) && c.Name != s.treatment.Selected && len(c.Levels) <= 12 {
			s.moderator.SetSelected(c.Name)
			break
		}
	}
	s.treatmentChanged()
	s.moderatorChanged()
	if s.restoreRoles() {
		// The person's own choices of the last run: nothing was chosen
		// for them.
		s.defTreatment, s.defOutcome = "", ""
		s.rolesBack = true
	}
}

func isNumeric(c *workbook.Column) bool {
	return c.Kind == workbook.Number || c.Kind == workbook.YesNo && c.Levels[0] == "0" && c.Levels[1] == "1"
}

func (s *rolesScreen) column(name string) *workbook.Column {
	if s.u.table == nil || name == "" {
		return nil
	}
	return s.u.table.Column(name)
}

// treatmentChanged offers the treated label when the treatment holds two
// labels, the comparison arm when it holds more.
func (s *rolesScreen) treatmentChanged() {
	c := s.column(s.treatment.Selected)
	s.control.ClearSelected()
	if c != nil && pipeline.TreatmentKind(c, "") == estimate.TreatmentLabels {
		s.treated.Options = c.Levels
		s.control.Options = c.Levels
		if len(c.Levels) == 2 {
			s.treated.SetSelected(c.Levels[1])
		}
	} else {
		s.treated.ClearSelected()
	}
	s.layoutForm()
	s.refreshControls()
}

// severalArms is true for a treatment column of more than two labels.
func severalArms(c *workbook.Column) bool {
	return c != nil && c.Levels != nil && len(c.Levels) > 2 && pipeline.TreatmentKind(c, "") == estimate.TreatmentLabels
}

// singleTrial is true when the choices are a single two-arm comparison,
// the only design several moderators are tried on.
func (s *rolesScreen) singleTrial() bool {
	return !s.beforeAfter.Checked && !severalArms(s.column(s.treatment.Selected))
}

// periodChanged offers the period's values for the one after the start.
func (s *rolesScreen) periodChanged() {
	s.after.ClearSelected()
	if c := s.column(s.period.Selected); c != nil {
		s.after.Options = groupsOf(c)
	}
	s.layoutForm()
}

// moderatorChanged guesses the moderator's kind and offers its groups.
func (s *rolesScreen) moderatorChanged() {
	c := s.column(s.moderator.Selected)
	if c == nil {
		return
	}
	switch pipeline.ModeratorKind(c) {
	case estimate.ModeratorContinuous:
		s.modKind.SetSelected(kindNumber)
	case estimate.ModeratorBinary:
		s.modKind.SetSelected(kindTwo)
	default:
		s.modKind.SetSelected(kindGroups)
	}
	s.kindChanged()
	s.refreshControls()
}

// kindChanged shows the reference group or the number settings.
func (s *rolesScreen) kindChanged() {
	c := s.column(s.moderator.Selected)
	if c != nil && s.modKind.Selected != kindNumber {
		s.reference.Options = append([]string{"(the largest group)"}, groupsOf(c)...)
		s.reference.SetSelectedIndex(0)
	}
	s.layoutForm()
}

// groupsOf lists a column's groups as the engine will name them.
func groupsOf(c *workbook.Column) []string {
	if c.Levels != nil {
		return c.Levels
	}
	seen := map[string]bool{}
	var out []string
	for i := range c.Missing {
		v := cellText(c, i)
		if v != "" && !strings.HasPrefix(v, "(") && !seen[v] {
			seen[v] = true
			out = append(out, v)
		}
		if len(out) > 50 {
			break
		}
	}
	return out
}

// refreshControls offers every column not already given a role.
func (s *rolesScreen) refreshControls() {
	t := s.u.table
	if t == nil {
		return
	}
	taken := map[string]bool{s.outcome.Selected: true, s.treatment.Selected: true, s.moderator.Selected: true, s.weights.Selected: true}
	if s.beforeAfter.Checked {
		taken[s.period.Selected], taken[s.unit.Selected] = true, true
	}
	keep := offer(s.controls, columnsWhere(t, func(c *workbook.Column) bool {
		return !taken[c.Name] && c.Kind != workbook.Text && c.Kind != workbook.Empty
	}), taken)

	// More moderators: any column of groups, two values or numbers that
	// has no other role.
	taken[s.cluster.Selected] = true
	for _, c := range keep {
		taken[c] = true
	}
	offer(s.extra, columnsWhere(t, func(c *workbook.Column) bool {
		return !taken[c.Name] && (c.Kind == workbook.Category || c.Kind == workbook.YesNo || c.Kind == workbook.Number)
	}), taken)
}

// columnsWhere names the table's columns that satisfy ok, in order.
func columnsWhere(t *workbook.Table, ok func(*workbook.Column) bool) []string {
	var out []string
	for _, c := range t.Columns {
		if ok(c) {
			out = append(out, c.Name)
		}
	}
	return out
}

// offer sets a check group's options and keeps the selections that are
// not taken by another role; it returns what stays selected.
func offer(g *widget.CheckGroup, options []string, taken map[string]bool) []string {
	var keep []string
	for _, sel := range g.Selected {
		if !taken[sel] {
			keep = append(keep, sel)
		}
	}
	g.Options, g.Selected = options, keep
	g.Refresh()
	return keep
}

// moderators are the moderator and any more to try, in that order.
func (s *rolesScreen) moderators() []string {
	if s.moderator.Selected == "" {
		return nil
	}
	if !s.singleTrial() {
		return []string{s.moderator.Selected}
	}
	return append([]string{s.moderator.Selected}, s.extra.Selected...)
}

// candidateSpec is the moderator spec of another moderator to try, its
// kind read from the column as the headless command does.
func (s *rolesScreen) candidateSpec(name string) estimate.Moderator {
	return estimate.Moderator{Column: name, Kind: pipeline.ModeratorKind(s.column(name))}
}

// changed re-runs the checks after any choice.
func (s *rolesScreen) changed() {
	if s.filling || s.u.table == nil {
		return
	}
	s.refreshControls()
	s.u.forget(stepRoles)
	spec, err := s.spec()
	s.checks.Objects = nil
	if err != nil {
		s.lastChecks = []pipeline.Check{{Severity: pipeline.Blocking, Message: err.Error()}}
	} else {
		s.lastChecks = pipeline.Precheck(s.u.table, spec)
	}
	for i, c := range s.lastChecks {
		// Merging groups is done in the workbook: say what the window
		// offers instead.
		if c.NoContrast {
			s.lastChecks[i].Message += " Here: choose another moderator, or treat this one as a number; or merge the groups in the workbook (or clear the group's cells) and open it again."
		}
	}
	s.lastChecks = append(s.roleNotes(), s.lastChecks...)
	// What stops the run first, then what to weigh, then notes.
	sort.SliceStable(s.lastChecks, func(i, j int) bool { return s.lastChecks[i].Severity > s.lastChecks[j].Severity })
	s.useCluster = nil
	for _, c := range s.lastChecks {
		s.checks.Add(checkRow(c))
		if c.Cluster != "" && s.useCluster == nil {
			column := c.Cluster
			s.useCluster = newButton(fmt.Sprintf("Use %q as the cluster", column), theme.ConfirmIcon(), func() { s.cluster.SetSelected(column) })
			s.checks.Add(container.NewHBox(s.useCluster))
		}
	}
	if len(s.lastChecks) == 0 {
		s.checks.Add(checkRow(pipeline.Check{Severity: pipeline.Note, Message: "Nothing to warn about: every group has treated and untreated rows."}))
	}
	s.checks.Refresh()
	s.u.updateBar()
}

// roleNotes are the window's own words on the roles chosen: what was
// chosen for the person, how a treatment of amounts or of several values
// will be read, and why a column of text is not offered as the outcome.
func (s *rolesScreen) roleNotes() []pipeline.Check {
	var out []pipeline.Check
	if s.rolesBack {
		out = append(out, pipeline.Check{Severity: pipeline.Note, Message: "The roles of the last run on this sheet are back; change any of them above."})
	}
	if words := s.chosenFor(); words != "" {
		out = append(out, pipeline.Check{Severity: pipeline.Note, Message: words})
	}
	if tc := s.column(s.treatment.Selected); tc != nil {
		switch kind := pipeline.TreatmentKind(tc, s.treated.Selected); {
		case kind == estimate.TreatmentContinuous:
			out = append(out, pipeline.Check{Severity: pipeline.Warning, Message: fmt.Sprintf(
				"%q holds amounts, not two groups, so the effect will be read per unit of %q (a dose). If %q is a score or a measure rather than how much of the programme each row received, choose the column that says who received it.",
				tc.Name, tc.Name, tc.Name)})
		case severalArms(tc) && s.control.Selected != "":
			var rest []string
			for _, l := range tc.Levels {
				if l != s.control.Selected {
					rest = append(rest, fmt.Sprintf("%q", l))
				}
			}
			out = append(out, pipeline.Check{Severity: pipeline.Note, Message: fmt.Sprintf(
				"%q has %d values: %s are each compared with %q as arms of their own, in every group, and the tests are adjusted for the number of arms.",
				tc.Name, len(tc.Levels), report.JoinAnd(rest), s.control.Selected)})
		}
	}
	if mc := s.column(s.moderator.Selected); mc != nil && s.modKind.Selected == kindGroups {
		if g := groupCount(mc); g > manyGroups {
			out = append(out, pipeline.Check{Severity: pipeline.Note, Message: fmt.Sprintf(
				"%q has %s groups, so the findings will list %s differences between pairs of groups. Past %d groups the window shows each long table in a region that scrolls on its own; the workbook's sheet holds every pair. Read the test of the same effect in every group first.",
				mc.Name, thousands(g), thousands(g*(g-1)/2), manyGroups)})
		}
	}
	if text := numbersAsText(s.u.table); len(text) > 0 {
		out = append(out, pipeline.Check{Severity: pipeline.Note, Message: fmt.Sprintf(
			"Not offered as the outcome: %s, which hold text with numbers in it (such as units or words). An outcome must hold numbers alone: write them in a column of their own in the workbook, then open it again.",
			strings.Join(report.QuotedAll(text), ", "))})
	}
	return out
}

// manyGroups is the number of groups past which the Roles step says what
// the findings will show (20 groups: 190 pairs).
const manyGroups = 20

// groupCount is the number of distinct present values of c.
func groupCount(c *workbook.Column) int {
	if c.Kind == workbook.Category || c.Kind == workbook.YesNo {
		return len(c.Levels)
	}
	seen := map[float64]bool{}
	for i, v := range c.Numbers {
		if c.Missing[i] == workbook.Present {
			seen[v] = true
		}
	}
	if c.Numbers == nil {
		seenText := map[string]bool{}
		for i, v := range c.Texts {
			if c.Missing[i] == workbook.Present {
				seenText[v] = true
			}
		}
		return len(seenText)
	}
	return len(seen)
}

// undoAdvice says, for a fit that stopped on terms that cannot be told
// apart or on a row fitted perfectly, which choice on the Roles step to
// undo: the controls the terms come from (a control's own term, or one of
// its categories, "col = level"). Empty when none is a control.
func (s *rolesScreen) undoAdvice(err error) string {
	var ee *estimate.Error
	if !errors.As(err, &ee) {
		return ""
	}
	var terms []string
	for _, a := range ee.Aliased {
		terms = append(terms, a.Term)
		terms = append(terms, a.With...)
	}
	var controls []string
	for _, c := range s.controls.Selected {
		for _, t := range terms {
			if (t == c || strings.HasPrefix(t, c+" = ")) && !slices.Contains(controls, c) {
				controls = append(controls, c)
			}
		}
	}
	switch {
	case len(controls) > 0:
		return fmt.Sprintf(" On the Roles step, untick %s under \"Adjust for\".", joinOr(report.QuotedAll(controls)))
	case errors.Is(err, estimate.ErrLeverage) && len(s.controls.Selected) > 0:
		return " The category is often one of a control's: on the Roles step, untick that control under \"Adjust for\"."
	}
	return ""
}

// joinOr joins "a", "b" and "c" as a choice in words.
func joinOr(xs []string) string {
	if len(xs) <= 1 {
		return strings.Join(xs, "")
	}
	return strings.Join(xs[:len(xs)-1], ", ") + " or " + xs[len(xs)-1]
}

// checkRow shows one check with an icon for its severity.
func checkRow(c pipeline.Check) fyne.CanvasObject {
	icon := theme.InfoIcon()
	switch c.Severity {
	case pipeline.Warning:
		icon = theme.WarningIcon()
	case pipeline.Blocking:
		icon = theme.ErrorIcon()
	}
	l := widget.NewLabel(c.Message)
	l.Wrapping = fyne.TextWrapWord
	if c.Severity == pipeline.Blocking {
		l.Importance = widget.DangerImportance
	}
	return container.NewBorder(nil, nil, widget.NewIcon(icon), nil, l)
}

// ready is true when the roles are complete and no check blocks the run.
func (s *rolesScreen) ready() bool {
	if s.u.table == nil {
		return false
	}
	if _, err := s.spec(); err != nil {
		return false
	}
	for _, c := range s.lastChecks {
		if c.Severity == pipeline.Blocking {
			return false
		}
	}
	return true
}

// spec builds the engine's spec from the choices.
func (s *rolesScreen) spec() (estimate.Spec, error) {
	var sp estimate.Spec
	sp.Outcome = s.outcome.Selected
	if sp.Outcome == "" || s.treatment.Selected == "" || s.moderator.Selected == "" {
		return sp, fmt.Errorf("Choose an outcome, a treatment and a moderator.")
	}
	tc := s.column(s.treatment.Selected)
	sp.Treatment = estimate.Treatment{Column: s.treatment.Selected, Treated: s.treated.Selected}
	sp.Treatment.Kind = pipeline.TreatmentKind(tc, s.treated.Selected)
	if severalArms(tc) {
		sp.Treatment = estimate.Treatment{Column: s.treatment.Selected, Kind: estimate.TreatmentArms, Control: s.control.Selected}
		if sp.Treatment.Control == "" {
			return sp, fmt.Errorf("Say which value of %q is the comparison group.", sp.Treatment.Column)
		}
	}
	if sp.Treatment.Kind == estimate.TreatmentLabels && sp.Treatment.Treated == "" {
		return sp, fmt.Errorf("Say which value of %q means treated.", sp.Treatment.Column)
	}
	if s.beforeAfter.Checked {
		sp.Period = s.period.Selected
		if sp.Period == "" {
			return sp, fmt.Errorf("Choose the column that says whether a row is from before or after the start.")
		}
		if pc := s.column(sp.Period); pc != nil && !pipeline.ZeroOne(pc) {
			if sp.After = s.after.Selected; sp.After == "" {
				return sp, fmt.Errorf("Say which value of %q is after the start.", sp.Period)
			}
		}
		if v := s.unit.Selected; v != none && v != "" {
			sp.Unit = v
			sp.UnitEffects = s.unitEffects.Checked
		} else if s.unitEffects.Checked {
			return sp, fmt.Errorf("Unit effects need a unit: choose the column that names each person or site.")
		}
	}
	m := estimate.Moderator{Column: s.moderator.Selected}
	switch s.modKind.Selected {
	case kindNumber:
		m.Kind = estimate.ModeratorContinuous
		if txt := strings.TrimSpace(s.probes.Text); txt != "" {
			for _, p := range strings.Split(txt, ",") {
				v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
				if err != nil {
					return sp, fmt.Errorf("The values to report at must be numbers separated by commas; %q is not a number.", strings.TrimSpace(p))
				}
				m.Probes = append(m.Probes, v)
			}
		}
		if txt := strings.TrimSpace(s.centre.Text); txt != "" {
			v, err := strconv.ParseFloat(txt, 64)
			if err != nil {
				return sp, fmt.Errorf("The centre must be a number; %q is not.", txt)
			}
			m.Centre = &v
		}
	case kindTwo:
		m.Kind = estimate.ModeratorBinary
	default:
		m.Kind = estimate.ModeratorCategorical
	}
	if m.Kind != estimate.ModeratorContinuous && s.reference.SelectedIndex() > 0 {
		m.Reference = s.reference.Selected
	}
	sp.Moderator = m
	sp.Controls = append([]string(nil), s.controls.Selected...)
	if v := s.cluster.Selected; v != none && v != "" {
		sp.Cluster = v
	}
	if v := s.weights.Selected; v != none && v != "" {
		sp.Weights = v
	}
	if sp.Unit != "" && sp.Cluster == "" {
		// Rows of one unit are alike: clustered by it unless another
		// cluster is chosen (Bertrand, Duflo & Mullainathan 2004).
		sp.Cluster = sp.Unit
	}
	return sp, nil
}

func (s *rolesScreen) content() fyne.CanvasObject {
	intro := widget.NewLabel("Say which column plays which part. The checks on the right update as you choose.")
	intro.Wrapping = fyne.TextWrapWord
	more := widget.NewLabel("Each is fitted in a model of its own, and the tests are adjusted for how many were tried.")
	more.Wrapping = fyne.TextWrapWord
	more.Importance = widget.LowImportance
	s.extraBox = container.NewVBox(subheading("Also try these moderators (optional)"), more, s.extra)
	if !s.singleTrial() {
		s.extraBox.Hide()
	}
	form := container.NewVBox(
		s.form,
		subheading("Adjust for (optional)"),
		s.controls,
		s.extraBox,
	)
	s.formBox = form
	checks := container.NewBorder(subheading("Before running"), nil, nil, nil, container.NewVScroll(s.checks))
	split := container.NewHSplit(container.NewVScroll(form), checks)
	split.Offset = 0.6
	return container.NewBorder(container.NewVBox(heading("Who is who"), intro), nil, nil, nil, split)
}
