package report

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"strings"

	"slopewise/internal/estimate"
)

// tableWidth is the number of columns the wide tables use; paragraphs are
// merged across it.
const tableWidth = 9

// Build lays out the results sheet of one run, the answer first: the
// headline, the chart, the effect in each group and the note under plain
// headings; then the technical blocks: the differences and their tests,
// what was asked, the data, every term of the model with the covariance
// of the estimates the effects are built from, and the rows left out,
// with the settings and the machine-readable run. The GUI shows the same
// sheet.
func Build(run Run, res *estimate.Result) (*Sheet, error) {
	spec, err := json.Marshal(run)
	if err != nil {
		return nil, fmt.Errorf("storing the run's settings: %w", err)
	}
	s := &Sheet{Name: ResultsSheet, Spec: spec, Footer: runDate(run),
		Title: fmt.Sprintf("%s, by %s", capitalise(subjectWords(run, res)), res.Moderator.Column)}
	b := sheetBuilder{run: run, res: res, sheet: s}
	b.add("headline", "In short", paragraphs(Headline(run, res)))
	if err := b.answer(); err != nil {
		return nil, err
	}
	b.details()
	b.asked()
	b.data()
	b.terms()
	b.dropped()
	s.Settings = settings(run, res)
	return s, nil
}

// runDate is the date of the run as the printed pages show it.
func runDate(run Run) string { return "run " + run.Time.UTC().Format("2006-01-02 15:04 UTC") }

type sheetBuilder struct {
	run   Run
	res   *estimate.Result
	sheet *Sheet
	// keySuffix is added to every block's key, so that the blocks of
	// several moderators in one sheet keep apart (":region").
	keySuffix string
	// termsUsed caches usedTerms(res), which every formula cell needs: once
	// a sheet, not once a cell (200 groups have 19,900 differences).
	termsUsed []int
	termsDone bool
}

// usedTerms is usedTerms(b.res), worked out once.
func (b *sheetBuilder) usedTerms() []int {
	if !b.termsDone {
		b.termsUsed, b.termsDone = usedTerms(b.res), true
	}
	return b.termsUsed
}

func (b *sheetBuilder) add(key, title string, rows [][]Cell) {
	b.sheet.Blocks = append(b.sheet.Blocks, Block{Key: key + b.keySuffix, Title: title, Rows: rows})
}

// answer adds what a reader wants first from one fit: the chart, the
// effect in each group and the note.
func (b *sheetBuilder) answer() error {
	run, res := b.run, b.res
	h := sheetChartHeight(res)
	png, err := Chart(res, ChartOptions{Randomized: run.Randomized, Width: chartWidth, Height: h})
	if err != nil {
		return fmt.Errorf("drawing the chart: %w", err)
	}
	b.sheet.Blocks = append(b.sheet.Blocks, Block{Key: "chart" + b.keySuffix, Image: &Image{
		Title: fmt.Sprintf("%s by %s, with %s confidence intervals", capitalise(subjectWords(run, res)), res.Moderator.Column, level(res.Model.Alpha)),
		PNG:   png, Width: chartWidth, Height: h,
	}})
	b.effects()
	var rows [][]Cell
	parts := NoteParts(run, res)
	for _, p := range parts {
		rows = append(rows, []Cell{HeadingCell(p.Heading)}, []Cell{ParagraphCell(p.Text, tableWidth)})
	}
	if len(parts) == 0 || parts[len(parts)-1].Heading != partHeadings[partKeep] {
		rows = append(rows, []Cell{HeadingCell(partHeadings[partKeep])})
	}
	rows = append(rows, paragraphs(Cautions(run, res))...)
	b.add("note", "In plain words", rows)
	return nil
}

// sheetChartHeight is the height of the sheet's chart: for groups, room
// for each group's row (a printed page holds more of the sheet), at most
// the chart's usual height; for a number moderator, the usual height.
func sheetChartHeight(res *estimate.Result) int {
	if res.Moderator.Kind == estimate.ModeratorContinuous {
		return chartHeight
	}
	return min(chartHeight, max(chartMinSide+100, 180+55*len(res.Effects)))
}

// details adds the differences between groups and the checks of the
// model's form.
func (b *sheetBuilder) details() {
	b.differences()
	b.equivalence()
	b.linearity()
	b.leads()
}

// terms adds every term of the model and the covariance of the terms the
// effects are built from.
func (b *sheetBuilder) terms() {
	b.coefficients()
	b.covariance()
}

// paragraphs lays out texts one paragraph a row.
func paragraphs(texts []string) [][]Cell {
	var rows [][]Cell
	for _, t := range texts {
		rows = append(rows, []Cell{ParagraphCell(t, tableWidth)})
	}
	return rows
}

func pair(label, value string) []Cell { return []Cell{HeadingCell(label), TextCell(value)} }

// asked is block 1: the question, in the words of the columns.
func (b *sheetBuilder) asked() {
	s := b.res.Spec
	controls := "none"
	if len(s.Controls) > 0 {
		controls = strings.Join(s.Controls, ", ")
	}
	rows := [][]Cell{
		pair("Outcome", s.Outcome),
		pair("Treatment", treatmentWords(s.Treatment)),
		pair("Moderator", moderatorWords(b.res)),
		pair("Controls", controls),
		pair("Cluster", orNone(s.Cluster)),
		pair("Weights", orNone(s.Weights)),
		pair("Treatment randomly assigned", yesNo(b.run.Randomized)),
		pair("Moderator named before seeing the data", yesNo(b.run.Planned)),
		pair("Model", modelWords(b.res)),
	}
	if s.EquivalenceMargin > 0 {
		rows = append(rows, pair("Smallest difference that matters", marginWords(b.res)))
	}
	rows = append(rows, designPairs(b.res)...)
	b.add("asked", "What was asked", rows)
}

func treatmentWords(t estimate.Treatment) string {
	switch t.Kind {
	case estimate.TreatmentLabels:
		return fmt.Sprintf("%s (treated: %q)", t.Column, t.Treated)
	case estimate.TreatmentContinuous:
		return fmt.Sprintf("%s (an amount; effects are per unit)", t.Column)
	case estimate.TreatmentArms:
		return fmt.Sprintf("%s (several arms; compared with %q)", t.Column, t.Control)
	}
	return fmt.Sprintf("%s (1 = treated, 0 = not)", t.Column)
}

func moderatorWords(res *estimate.Result) string {
	m := res.Moderator
	if m.Kind == estimate.ModeratorContinuous {
		w := fmt.Sprintf("%s (a number, observed from %s to %s", m.Column, readable(m.Min), readable(m.Max))
		if m.Centre != 0 {
			w += fmt.Sprintf("; centred at %s", readable(m.Centre))
		}
		return w + ")"
	}
	return fmt.Sprintf("%s (%d groups; compared with %q)", m.Column, len(m.Levels), m.Reference)
}

// modelWords writes the model as an equation in words (METHODS §1).
func modelWords(res *estimate.Result) string {
	if w := designModelWords(res); w != "" {
		return w
	}
	s := res.Spec
	t := treatmentName(s.Treatment)
	terms := []string{"a baseline level", t, s.Moderator.Column, t + " × " + s.Moderator.Column}
	terms = append(terms, s.Controls...)
	return fmt.Sprintf("%s = %s + error", s.Outcome, strings.Join(terms, " + "))
}

func orNone(s string) string {
	if s == "" {
		return "none"
	}
	return s
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

// data is block 2: where the rows came from and which were used.
func (b *sheetBuilder) data() {
	r := b.res.Rows
	rows := [][]Cell{pair("File", b.run.File)}
	if b.run.Sheet != "" {
		rows = append(rows, pair("Sheet", b.run.Sheet))
	}
	if b.run.Table != "" {
		rows = append(rows, pair("Table", b.run.Table))
	}
	if b.run.HeaderRow > 0 {
		rows = append(rows, []Cell{HeadingCell("Header row"), NumberCell(float64(b.run.HeaderRow), "0")})
	}
	rows = append(rows,
		[]Cell{HeadingCell("Rows read"), NumberCell(float64(r.Read), "#,##0")},
		[]Cell{HeadingCell("Rows used"), NumberCell(float64(r.Used), "#,##0")},
		[]Cell{HeadingCell("Rows left out"), NumberCell(float64(r.Dropped), "#,##0")},
	)
	if r.Dropped > 0 {
		rows = append(rows, []Cell{HeadingCell("Rows"), HeadingCell("left out because of")})
		for _, c := range r.Reasons {
			rows = append(rows, []Cell{NumberCell(float64(c.Rows), "#,##0"), TextCell(c.Reason)})
		}
		rows = append(rows, []Cell{TextCell("Each row left out is listed at the end of this sheet.")})
	}
	b.add("data", "The data", rows)
}

// effects is block 3: the effect of the treatment in each group.
func (b *sheetBuilder) effects() {
	res := b.res
	ci := level(res.Model.Alpha) + " CI"
	continuous := res.Moderator.Kind == estimate.ModeratorContinuous
	binaryT := res.Spec.Treatment.Kind != estimate.TreatmentContinuous
	head := []Cell{HeadingCell("Group"), HeadingCell("Rows")}
	if continuous {
		head = []Cell{HeadingCell(res.Moderator.Column), HeadingCell("Rows nearby")}
	}
	if binaryT {
		head = append(head, HeadingCell("Treated"), HeadingCell("Untreated"))
	}
	effect := "Effect"
	if !b.run.Randomized {
		effect = "Difference associated"
	}
	head = append(head, HeadingCell(effect), HeadingCell("Std. error"), HeadingCell(ci+" low"), HeadingCell(ci+" high"), HeadingCell("p-value"))
	boot := res.Bootstrap != nil
	var vals []float64
	for _, e := range res.Effects {
		vals = append(vals, e.Estimate, e.SE, e.CILow, e.CIHigh)
	}
	f := numberFormat(vals)
	rows := [][]Cell{head}
	var bootRows [][]Cell
	for _, e := range res.Effects {
		label := armPrefix(e.Arm) + e.Group
		if continuous {
			label = probeLabel(e)
		} else if e.Reference {
			label += " (reference)"
		}
		row := []Cell{TextCell(label), NumberCell(float64(e.Rows), "#,##0")}
		if binaryT {
			row = append(row, NumberCell(float64(e.Treated), "#,##0"), NumberCell(float64(e.Untreated), "#,##0"))
		}
		est, se := b.contrastCells(e.Contrast, e.Estimate, e.SE, f)
		row = append(row, est, se, NumberCell(e.CILow, f), NumberCell(e.CIHigh, f), PValueCell(e.P))
		rows = append(rows, row)
		bootRows = append(bootRows, append([]Cell{TextCell(label)}, bootCells(e.Boot, f)...))
	}
	if b.usedTerms() != nil {
		rows = append(rows, []Cell{ParagraphCell(formulaCaption, tableWidth)})
	}
	if boot {
		rows = append(rows, bootTable(res, head[0], bootRows)...)
	}
	if continuous {
		rows = append(rows, []Cell{TextCell(fmt.Sprintf("Rows nearby: rows whose %s lies within 10%% of the observed range of the value.", res.Moderator.Column))})
	}
	title := fmt.Sprintf("%s in each group of %s", capitalise(subjectWords(b.run, res)), res.Moderator.Column)
	if continuous {
		title = fmt.Sprintf("%s at chosen values of %s", capitalise(subjectWords(b.run, res)), res.Moderator.Column)
	}
	b.add("effects", title, rows)
}

// probeLabel names a probe value for the table: "8.78 (90th percentile)".
func probeLabel(e estimate.GroupEffect) string {
	label := shortValue(e.Value)
	if len(e.Group) > 1 && e.Group[0] == 'p' {
		label += fmt.Sprintf(" (%s percentile)", ordinal(e.Group[1:]))
	}
	if e.Extrapolated {
		label += " — outside the data"
	}
	return label
}

// differences is block 4: the differences between groups and the tests.
func (b *sheetBuilder) differences() {
	res := b.res
	ci := level(res.Model.Alpha) + " CI"
	power := strconv100(res.Model.Power)
	head := []Cell{HeadingCell("Comparison"), HeadingCell("Difference"), HeadingCell("Std. error"),
		HeadingCell(ci + " low"), HeadingCell(ci + " high"), HeadingCell("p-value"),
		HeadingCell("Smallest difference detectable (" + power + "% power)")}
	boot := res.Bootstrap != nil
	var vals []float64
	for _, d := range res.Differences {
		vals = append(vals, d.Estimate, d.SE, d.CILow, d.CIHigh, d.MDD)
	}
	f := numberFormat(vals)
	rows := [][]Cell{head}
	var bootRows [][]Cell
	for _, d := range res.Differences {
		est, se := b.contrastCells(d.Contrast, d.Estimate, d.SE, f)
		row := []Cell{TextCell(armPrefix(d.Arm) + comparisonLabel(res, d, shortValue)), est, se,
			NumberCell(d.CILow, f), NumberCell(d.CIHigh, f), PValueCell(d.P), NumberCell(d.MDD, f)}
		rows = append(rows, row)
		bootRows = append(bootRows, append([]Cell{TextCell(armPrefix(d.Arm) + comparisonLabel(res, d, shortValue))}, bootCells(d.Boot, f)...))
	}
	if boot {
		rows = append(rows, bootTable(res, head[0], bootRows)...)
	}
	if h := res.Heterogeneity; h != nil {
		head := []Cell{HeadingCell("Same effect in every group?"), HeadingCell("F"), HeadingCell("df (tested)"), HeadingCell("df (error)"), HeadingCell("p-value")}
		row := []Cell{TextCell(fmt.Sprintf("test of all %d interaction terms", h.DF1)), NumberCell(h.F, "0.000"), NumberCell(float64(h.DF1), "0"), NumberCell(float64(h.DF2), "0"), PValueCell(h.P)}
		if h.PBoot != nil {
			head = append(head, HeadingCell("Bootstrap p-value"))
			row = append(row, PValueCell(*h.PBoot))
		}
		rows = append(rows, []Cell{}, head, row)
	} else if nj := res.HeterogeneityNotJudged; nj != nil {
		rows = append(rows, []Cell{}, []Cell{HeadingCell("Same effect in every group?")},
			[]Cell{ParagraphCell(capitalise("whether it is the same in all "+count(len(res.Effects))+" groups "+notJudgedWords(nj, res.Spec.Cluster))+".", tableWidth)})
	}
	if jn := res.JohnsonNeyman; jn != nil {
		rows = append(rows, []Cell{}, []Cell{HeadingCell("Where the effect is distinguishable from zero")},
			[]Cell{ParagraphCell(capitalise(significantWhere(jn, res.Moderator.Column))+" (Johnson–Neyman interval, "+level(res.Model.Alpha)+" confidence).", tableWidth)})
	}
	b.add("differences", "Differences between groups", rows)
}

// marginWords is the smallest difference that matters, in words.
func marginWords(res *estimate.Result) string {
	return unitsFor(res.Model.OutcomeBinary).amount(res.Spec.EquivalenceMargin) + " (" + formatValue(res.Spec.EquivalenceMargin) + " in the outcome's units)"
}

// equivalence is the block of the two one-sided tests, when a smallest
// difference that matters is given.
func (b *sheetBuilder) equivalence() {
	res := b.res
	margin := res.Spec.EquivalenceMargin
	if margin <= 0 {
		return
	}
	ci := level(2*res.Model.Alpha) + " CI"
	var vals []float64
	for _, d := range res.Differences {
		if e := d.Equivalence; e != nil {
			vals = append(vals, d.Estimate, e.CILow, e.CIHigh, margin)
		}
	}
	f := numberFormat(vals)
	rows := [][]Cell{{HeadingCell("Comparison"), HeadingCell("Difference"), HeadingCell(ci + " low"), HeadingCell(ci + " high"),
		HeadingCell("Smallest difference that matters"), HeadingCell("Two one-sided tests p"), HeadingCell("The same to within it?")}}
	boot := false
	for _, d := range res.Differences {
		e := d.Equivalence
		if e == nil {
			continue
		}
		boot = boot || e.Bootstrap
		lo, hi := NumberCell(e.CILow, f), NumberCell(e.CIHigh, f)
		if !e.Bounded {
			lo, hi = TextCell("unbounded"), TextCell("unbounded")
		}
		rows = append(rows, []Cell{TextCell(armPrefix(d.Arm) + comparisonLabel(res, d, shortValue)), NumberCell(d.Estimate, f), lo, hi,
			NumberCell(margin, f), PValueCell(e.P), TextCell(yesNo(e.Equivalent))})
	}
	how := ""
	if boot {
		how = " The intervals and p-values come from the wild cluster bootstrap."
	}
	rows = append(rows, []Cell{ParagraphCell(fmt.Sprintf("Two one-sided tests (Schuirmann 1987): two groups are called the same to within the smallest difference that matters when the %s interval of their difference lies inside %s to %s; otherwise the data cannot show it, which is not evidence that they differ by that much.%s",
		ci[:len(ci)-3], formatValue(-margin), formatValue(margin), how), tableWidth)})
	what := "association"
	if b.run.Randomized {
		what = "effect"
	}
	b.add("equivalence", fmt.Sprintf("Is the %s the same to within %s?", what, unitsFor(res.Model.OutcomeBinary).amount(margin)), rows)
}

// linearity is the check of a continuous moderator's straight line: the
// effect within each third beside the line's, and the test.
func (b *sheetBuilder) linearity() {
	l := b.res.Linearity
	if l == nil {
		return
	}
	res := b.res
	m := res.Moderator.Column
	ci := level(res.Model.Alpha) + " CI"
	effect := "Effect"
	if !b.run.Randomized {
		effect = "Difference associated"
	}
	var vals []float64
	for _, th := range l.Thirds {
		vals = append(vals, th.Effect.Estimate, th.Effect.SE, th.Effect.CILow, th.Effect.CIHigh, th.Line.Estimate)
	}
	f := numberFormat(vals)
	rows := [][]Cell{{HeadingCell("Third of " + m), HeadingCell("From"), HeadingCell("To"), HeadingCell("Median"), HeadingCell("Rows"),
		HeadingCell(effect + " within the third"), HeadingCell("Std. error"), HeadingCell(ci + " low"), HeadingCell(ci + " high"),
		HeadingCell("The line at the median")}}
	for i, th := range l.Thirds {
		rows = append(rows, []Cell{TextCell([]string{"lowest", "middle", "highest"}[i]), NumberCell(th.From, ""), NumberCell(th.To, ""),
			NumberCell(th.Median, ""), NumberCell(float64(th.Rows), "#,##0"), NumberCell(th.Effect.Estimate, f), NumberCell(th.Effect.SE, f),
			NumberCell(th.Effect.CILow, f), NumberCell(th.Effect.CIHigh, f), NumberCell(th.Line.Estimate, f)})
	}
	verdict := "The test of the line against the thirds cannot be computed."
	if nj := l.NotJudged; nj != nil {
		verdict = capitalise("whether the thirds depart from the line "+notJudgedWords(nj, res.Spec.Cluster)) + "."
	}
	if w := l.Wald; w != nil {
		head := []Cell{HeadingCell("Test of the line against the thirds"), HeadingCell("F"), HeadingCell("df (tested)"), HeadingCell("df (error)"), HeadingCell("p-value")}
		row := []Cell{TextCell("all 8 terms the thirds add"), NumberCell(w.F, "0.000"), NumberCell(float64(w.DF1), "0"), NumberCell(float64(w.DF2), "0"), PValueCell(w.P)}
		if w.PBoot != nil {
			head = append(head, HeadingCell("Bootstrap p-value"))
			row = append(row, PValueCell(*w.PBoot))
		}
		rows = append(rows, []Cell{}, head, row)
		verdict = "The thirds are consistent with the straight line."
		if l.Contradicts {
			verdict = "The thirds contradict the straight line: the effect does not change evenly with " + m + "."
		}
		if w.PBoot != nil {
			verdict += " With few clusters the verdict rests on the bootstrap p-value; the one from F rejects far too often when the test weighs many terms."
		}
	}
	rows = append(rows, []Cell{ParagraphCell("Each third's effect is estimated from its own rows, at the third's median (binned model of Hainmueller, Mummolo & Xu 2019); the test asks whether the thirds depart from the line by more than chance allows. "+verdict, tableWidth)})
	what := "association"
	if b.run.Randomized {
		what = "effect"
	}
	b.add("linearity", fmt.Sprintf("Does the %s follow a straight line in %s?", what, m), rows)
}

// bootHeadings are the column headings of the wild cluster bootstrap.
func bootHeadings(res *estimate.Result) []Cell {
	ci := "Bootstrap " + level(res.Model.Alpha) + " CI"
	return []Cell{HeadingCell("Bootstrap p-value"), HeadingCell(ci + " low"), HeadingCell(ci + " high")}
}

// bootCells are the bootstrap's p-value and interval, the interval blank
// when the bootstrap cannot bound it.
func bootCells(b *estimate.BootInference, format string) []Cell {
	switch {
	case b == nil:
		return []Cell{{}, {}, {}}
	case !b.Bounded:
		return []Cell{PValueCell(b.P), TextCell("unbounded"), TextCell("unbounded")}
	}
	return []Cell{PValueCell(b.P), NumberCell(b.CILow, format), NumberCell(b.CIHigh, format)}
}

// bootTable is the wild cluster bootstrap's p-values and intervals of a
// table's rows, as a small table of their own below it (so that the main
// table stays narrow enough to print legibly), with where they come from.
func bootTable(res *estimate.Result, first Cell, rows [][]Cell) [][]Cell {
	out := [][]Cell{{}, append([]Cell{first}, bootHeadings(res)...)}
	out = append(out, rows...)
	return append(out, []Cell{ParagraphCell("Bootstrap columns: "+bootstrapWords(res)+"; the interval holds the values its test does not reject.", tableWidth)})
}

// bootstrapWords describes how the wild cluster bootstrap was run.
func bootstrapWords(res *estimate.Result) string {
	b := res.Bootstrap
	weights := "Rademacher weights"
	if b.Weights == estimate.Webb {
		weights = "Webb's six-point weights"
	}
	w := fmt.Sprintf("restricted wild cluster bootstrap-t over %d clusters, %s, %s", res.Model.Clusters, bootDraws(b), weights)
	if !b.Enumerated {
		w += fmt.Sprintf(", seed %d", b.Seed)
	}
	return w
}

// comparisonLabel names a difference: "urban vs rural", or for a
// continuous moderator "per 1 unit of baseline" and "8.78 vs 1.34" with the
// values written by value.
func comparisonLabel(res *estimate.Result, d estimate.Difference, value func(float64) string) string {
	if d.PerUnit {
		return "per 1 unit of " + res.Moderator.Column
	}
	if res.Moderator.Kind == estimate.ModeratorContinuous {
		return value(valueOf(res.Effects, d.To)) + " vs " + value(valueOf(res.Effects, d.From))
	}
	return d.To + " vs " + d.From
}

// coefficients is block 7: every term of the model.
func (b *sheetBuilder) coefficients() {
	res := b.res
	ci := level(res.Model.Alpha) + " CI"
	rows := [][]Cell{{HeadingCell("Term"), HeadingCell("Role"), HeadingCell("Estimate"), HeadingCell("Std. error"),
		HeadingCell("t"), HeadingCell("p-value"), HeadingCell(ci + " low"), HeadingCell(ci + " high")}}
	for _, c := range res.Coefficients {
		// Each term shown with about four significant digits of its own
		// size; the cells keep every digit for the formulas above.
		f := numberFormat([]float64{c.Estimate, c.SE})
		rows = append(rows, []Cell{TextCell(c.Term), TextCell(c.Role), NumberCell(c.Estimate, f), NumberCell(c.SE, f),
			NumberCell(c.T, "0.000"), PValueCell(c.P), NumberCell(c.CILow, f), NumberCell(c.CIHigh, f)})
	}
	b.add("coefficients", "All terms of the model", rows)
}

// dropped lists each row left out and why, at the end of the sheet.
func (b *sheetBuilder) dropped() {
	list := b.res.Rows.List
	if len(list) == 0 {
		return
	}
	rows := [][]Cell{{HeadingCell("Row"), HeadingCell("Column"), HeadingCell("Why it was left out")}}
	for _, d := range list {
		rows = append(rows, []Cell{NumberCell(float64(d.Row), "0"), TextCell(d.Column), TextCell(d.Reason)})
	}
	b.add("dropped", "Rows left out", rows)
}

// settings is the readable settings block: how the numbers were made.
func settings(run Run, res *estimate.Result) []Setting {
	m := res.Model
	out := []Setting{
		{"Standard errors", seWords(res)},
		{"Degrees of freedom", fmt.Sprint(m.DF)},
		{"Significance level", fmt.Sprint(m.Alpha)},
		{"Power for detectable differences", fmt.Sprint(m.Power)},
		{"Residual standard deviation", fmt.Sprint(m.Sigma)},
		{"R²", fmt.Sprint(m.R2)},
		{"Condition number (scaled)", readable(m.Condition)},
		{"Wild cluster bootstrap", bootstrapSetting(res)},
		{"SHA-256 of the values used", m.DataSHA256},
		{"Program", "Slopewise " + run.Version},
		{"Run at", run.Time.UTC().Format("2006-01-02 15:04 UTC")},
	}
	return out
}

// bootstrapSetting says whether and how the bootstrap ran.
func bootstrapSetting(res *estimate.Result) string {
	switch {
	case res.Bootstrap != nil:
		return bootstrapWords(res)
	case res.Model.Variance != estimate.CR1:
		return "not used (it needs a cluster column)"
	case res.Spec.Bootstrap.Off:
		return "turned off"
	}
	return fmt.Sprintf("not used (%d clusters; it runs with fewer than %d)", res.Model.Clusters, estimate.BootstrapClusters)
}

// numberFormat picks a display format with about four significant digits
// for the largest magnitude among the values; the cells keep every digit.
func numberFormat(vals []float64) string {
	big := 0.0
	for _, v := range vals {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			big = math.Max(big, math.Abs(v))
		}
	}
	if big == 0 {
		return "0.000"
	}
	decimals := 3 - int(math.Floor(math.Log10(big)))
	switch {
	case decimals <= 0:
		return "#,##0"
	case decimals > 8:
		return "0.000E+00"
	}
	return "0." + strings.Repeat("0", decimals)
}

// shortValue writes a moderator value for a person: four significant
// digits (the cells and the JSON keep the exact value).
func shortValue(v float64) string { return sigDigits(v, 4) }

// formatValue writes a moderator value exactly as JSON labels do.
func formatValue(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
