package report

import (
	"encoding/json"
	"fmt"
	"math"
	"strings"

	"slopewise/internal/estimate"
)

// ScreenRun is a screen of several candidate moderators, each fitted in
// its own model, with the test that the effect is the same everywhere
// adjusted over all of them (METHODS §6). It is stored in the sheet as
// JSON and can be read back to repeat the screen exactly.
type ScreenRun struct {
	// Base holds the file, the model and the facts of the study; its
	// moderator, Planned, ModeratorsTried and AdjustedP are not used.
	Base Run `json:"run"`
	// Candidates are the moderators tried, in the order asked.
	Candidates []Candidate `json:"candidates"`
	// Groupings are, for each candidate in order, what the data show
	// about the columns that group the rows (Run.Groupings); not stored.
	Groupings [][]Grouping `json:"-"`
}

// Candidate is one moderator of a screen.
type Candidate struct {
	Moderator estimate.Moderator `json:"moderator"`
	// Planned says the moderator was named before looking at the data;
	// otherwise it is exploratory.
	Planned bool `json:"planned"`
}

// Moderators returns the candidates' moderators, in order.
func (sr ScreenRun) Moderators() []estimate.Moderator {
	out := make([]estimate.Moderator, len(sr.Candidates))
	for i, c := range sr.Candidates {
		out[i] = c.Moderator
	}
	return out
}

// SpecFor is the model of the i-th moderator: the base spec with it as
// the moderator.
func (sr ScreenRun) SpecFor(i int) estimate.Spec {
	s := sr.Base.Spec
	s.Moderator = sr.Candidates[i].Moderator
	return s
}

// RunFor is the run of the i-th moderator read as an analysis of its own:
// planned or not, one of how many tried, with its Holm-adjusted p-value,
// so that its note reports an exploratory moderator only with the
// adjusted p (METHODS §6, §9).
func (sr ScreenRun) RunFor(sc *estimate.Screen, i int) Run {
	r := sr.Base
	r.Spec = sr.SpecFor(i)
	r.Planned = sr.Candidates[i].Planned
	r.ModeratorsTried = len(sr.Candidates)
	r.AdjustedP = sc.Rows[i].PHolm
	if i < len(sr.Groupings) {
		r.Groupings = sr.Groupings[i]
	}
	return r
}

// screenWriter writes the note of a screen.
type screenWriter struct {
	sr        ScreenRun
	sc        *estimate.Screen
	sentences []string
}

func (w *screenWriter) say(format string, args ...any) {
	w.sentences = append(w.sentences, fmt.Sprintf(format, args...))
}

// ScreenNote is the plain-language note of a screen: how many moderators
// were tried and which were named beforehand, each one's test with its
// adjusted p-value, and what the data can and cannot say once the number
// tried is allowed for (METHODS §6, §9).
func ScreenNote(sr ScreenRun, sc *estimate.Screen) string {
	w := &screenWriter{sr: sr, sc: sc}
	res := sc.Results[0]
	run := sr.RunFor(sc, 0)
	n := len(sc.Rows)
	what := "association"
	if sr.Base.Randomized {
		what = "effect"
	}
	w.say("%s moderators were tried, each in a model of its own, for %s.", capitalise(countWord(n)), subjectWords(run, res))
	var planned, exploratory []string
	for i, c := range sr.Candidates {
		if c.Planned {
			planned = append(planned, sc.Rows[i].Moderator)
		} else {
			exploratory = append(exploratory, sc.Rows[i].Moderator)
		}
	}
	switch {
	case exploratory == nil:
		w.say("All of them were named before the data were examined.")
	case planned == nil:
		w.say("None was named before the data were examined, so each is exploratory.")
	default:
		w.say("Of these, %s %s named before the data were examined and %s %s exploratory.", JoinAnd(planned), wasWere(len(planned)), JoinAnd(exploratory), isAre(len(exploratory)))
	}
	alpha := res.Model.Alpha
	pName := "p"
	if res.Bootstrap != nil {
		pName = "bootstrap p"
	}
	var parts, clear, untested []string
	exploratoryClear := false
	for i, row := range sc.Rows {
		if !row.Tested {
			untested = append(untested, row.Moderator)
			continue
		}
		p := pName + strings.TrimPrefix(pText(row.P), "p")
		switch {
		case sr.Candidates[i].Planned && exploratory != nil:
			parts = append(parts, fmt.Sprintf("for %s (named beforehand), %s and adjusted %s", row.Moderator, p, pText(row.PHolm)))
		case sr.Candidates[i].Planned:
			parts = append(parts, fmt.Sprintf("for %s, %s and adjusted %s", row.Moderator, p, pText(row.PHolm)))
		default:
			parts = append(parts, fmt.Sprintf("for %s, adjusted %s (%s before adjusting)", row.Moderator, pText(row.PHolm), p))
		}
		if row.PHolm < alpha {
			clear = append(clear, row.Moderator)
			exploratoryClear = exploratoryClear || !sr.Candidates[i].Planned
		}
	}
	if parts != nil {
		w.say("The test that the %s is the same in all groups of a moderator, adjusted for the %d tried by Holm's method, gives %s.", what, n, strings.Join(parts, "; "))
	}
	if untested != nil {
		w.say("The test could not be computed for %s; %s counted among the moderators tried as if it had found nothing.", JoinAnd(untested), itThey(len(untested)))
	}
	if clear == nil {
		w.say("Allowing for the moderators tried, the data cannot tell for any of them whether the %s differs between its groups; that is not evidence that it is the same for everyone, as the smallest detectable differences in the table show.", what)
	} else {
		w.say("Allowing for the moderators tried, the data show that the %s differs across %s.", what, JoinAnd(clear))
		if exploratoryClear {
			w.say("A clear difference across an exploratory moderator is a lead to check in new data, not a finding.")
		}
	}
	var bhOnly []string
	for _, row := range sc.Rows {
		if row.Tested && row.QBH < alpha && row.PHolm >= alpha {
			bhOnly = append(bhOnly, row.Moderator)
		}
	}
	if bhOnly != nil {
		w.say("Controlling instead the expected share of false leads among those flagged (Benjamini–Hochberg), %s would be flagged too (q below %s).", JoinAnd(bhOnly), readable(alpha))
	}
	w.say("No moderator was randomly assigned: a difference across one shows for whom the %s was larger, not why. Each moderator's own results follow below.", what)
	return strings.Join(w.sentences, " ")
}

func countWord(n int) string {
	words := []string{"no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten"}
	if n < len(words) {
		return words[n]
	}
	return count(n)
}

func wasWere(n int) string {
	if n == 1 {
		return "was"
	}
	return "were"
}

func isAre(n int) string {
	if n == 1 {
		return "is"
	}
	return "are"
}

func itThey(n int) string {
	if n == 1 {
		return "it is"
	}
	return "they are"
}

// ScreenCautions are what a reader of the whole screen should keep in
// mind; each moderator's own cautions stand with its results.
func ScreenCautions(sr ScreenRun, sc *estimate.Screen) []string {
	res := sc.Results[0]
	var out []string
	if !sr.Base.Randomized {
		out = append(out, "The treatment was not marked as randomly assigned, so these are associations, not effects: treated and untreated rows may differ in ways the controls do not capture.")
	}
	out = append(out,
		fmt.Sprintf("%d moderators were examined; the more are tried, the likelier one looks real by chance. Rely on the adjusted p-values and confirm in new data.", len(sc.Rows)),
		"Each moderator has a model of its own, so a difference across one may reflect another moderator that goes with it.")
	if res.Model.Variance == estimate.CR1 && res.Model.Clusters < fewClusters {
		for _, c := range Cautions(sr.RunFor(sc, 0), res) {
			if strings.HasPrefix(c, "There are only") {
				out = append(out, c)
			}
		}
	}
	return out
}

// BuildScreen lays out the results sheet of a screen: what was asked, the
// data, the summary of every moderator with its adjusted p-values, the
// note and cautions of the whole, then each moderator's own results below,
// with the settings and the machine-readable screen.
func BuildScreen(sr ScreenRun, sc *estimate.Screen) (*Sheet, error) {
	spec, err := json.Marshal(sr)
	if err != nil {
		return nil, fmt.Errorf("storing the screen's settings: %w", err)
	}
	s := &Sheet{Name: ModeratorsSheet, Spec: spec, Footer: runDate(sr.Base),
		Title: fmt.Sprintf("%s, by each of %d moderators", capitalise(subjectWords(sr.RunFor(sc, 0), sc.Results[0])), len(sc.Results))}
	first := sheetBuilder{run: sr.RunFor(sc, 0), res: sc.Results[0], sheet: s}
	first.add("headline", "In short", paragraphs(ScreenHeadline(sr, sc)))
	if err := first.screenChart(sr, sc); err != nil {
		return nil, err
	}
	first.screenSummary(sr, sc)
	note := [][]Cell{{ParagraphCell(ScreenNote(sr, sc), tableWidth)}, {HeadingCell(partHeadings[partKeep])}}
	first.add("note", "In plain words", append(note, paragraphs(ScreenCautions(sr, sc))...))
	first.screenAsked(sr)
	first.screenData()
	for i, res := range sc.Results {
		run := sr.RunFor(sc, i)
		b := sheetBuilder{run: run, res: res, sheet: s, keySuffix: ":" + res.Moderator.Column}
		r := res.Rows
		b.add("moderator", fmt.Sprintf("Moderator %d of %d: %s", i+1, len(sc.Results), res.Moderator.Column), [][]Cell{
			pair("Moderator", moderatorWords(res)),
			pair("Named before seeing the data", yesNo(run.Planned)),
			{HeadingCell("Rows used"), NumberCell(float64(r.Used), "#,##0")},
			{HeadingCell("Rows left out"), NumberCell(float64(r.Dropped), "#,##0")},
		})
		if err := b.answer(); err != nil {
			return nil, err
		}
		b.details()
		b.terms()
	}
	s.Settings = screenSettings(sr, sc)
	return s, nil
}

// screenAsked is the question of a screen, in the words of the columns.
func (b *sheetBuilder) screenAsked(sr ScreenRun) {
	s := b.res.Spec
	var mods []string
	for _, c := range sr.Candidates {
		mark := "exploratory"
		if c.Planned {
			mark = "named before seeing the data"
		}
		mods = append(mods, fmt.Sprintf("%s (%s)", c.Moderator.Column, mark))
	}
	controls := "none"
	if len(s.Controls) > 0 {
		controls = strings.Join(s.Controls, ", ")
	}
	t := treatmentName(s.Treatment)
	terms := append([]string{"a baseline level", t, "M", t + " × M"}, s.Controls...)
	rows := [][]Cell{
		pair("Outcome", s.Outcome),
		pair("Treatment", treatmentWords(s.Treatment)),
		pair("Moderators tried", strings.Join(mods, "; ")),
		pair("Controls", controls),
		pair("Cluster", orNone(s.Cluster)),
		pair("Weights", orNone(s.Weights)),
		pair("Treatment randomly assigned", yesNo(b.run.Randomized)),
		pair("Model", fmt.Sprintf("%s = %s + error, once for each moderator M", s.Outcome, strings.Join(terms, " + "))),
	}
	if s.EquivalenceMargin > 0 {
		rows = append(rows, pair("Smallest difference that matters", marginWords(b.res)))
	}
	b.add("asked", "What was asked", rows)
}

// screenData says where the rows came from; how many each moderator's
// model used is in the summary.
func (b *sheetBuilder) screenData() {
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
	rows = append(rows, []Cell{HeadingCell("Rows read"), NumberCell(float64(b.res.Rows.Read), "#,##0")},
		[]Cell{TextCell("A row missing a moderator is left out of that moderator's model only.")})
	b.add("data", "The data", rows)
}

// screenSummary is the table of every moderator tried.
func (b *sheetBuilder) screenSummary(sr ScreenRun, sc *estimate.Screen) {
	res := b.res
	boot := res.Bootstrap != nil
	head := []Cell{HeadingCell("Moderator"), HeadingCell("Named before seeing the data"), HeadingCell("Rows used"),
		HeadingCell("F"), HeadingCell("df (tested)"), HeadingCell("p-value")}
	if boot {
		head = append(head, HeadingCell("Bootstrap p-value"))
	}
	head = append(head, HeadingCell("Holm-adjusted p"), HeadingCell("Benjamini–Hochberg q"),
		HeadingCell("Smallest difference detectable ("+strconv100(res.Model.Power)+"% power)"),
		HeadingCell("Largest difference between groups"), HeadingCell("between"))
	var vals []float64
	for _, row := range sc.Rows {
		vals = append(vals, row.MDD, math.Abs(row.Largest.Estimate))
	}
	f := numberFormat(vals)
	rows := [][]Cell{head}
	for i, row := range sc.Rows {
		r := sc.Results[i]
		cells := []Cell{TextCell(row.Moderator), TextCell(yesNo(sr.Candidates[i].Planned)), NumberCell(float64(r.Rows.Used), "#,##0")}
		if h := r.Heterogeneity; h != nil {
			cells = append(cells, NumberCell(h.F, "0.000"), NumberCell(float64(h.DF1), "0"), PValueCell(h.P))
			if boot {
				cells = append(cells, optionalP(h.PBoot))
			}
		} else {
			why := "not computable"
			if r.HeterogeneityNotJudged != nil {
				why = "too few clusters to judge"
			}
			cells = append(cells, TextCell(why), Cell{}, Cell{})
			if boot {
				cells = append(cells, Cell{})
			}
		}
		cells = append(cells, PValueCell(row.PHolm), PValueCell(row.QBH), NumberCell(row.MDD, f),
			NumberCell(math.Abs(row.Largest.Estimate), f), TextCell(largestBetween(r, row.Largest)))
		rows = append(rows, cells)
	}
	which := "the p-values"
	if boot {
		which = "the bootstrap p-values"
	}
	rows = append(rows, []Cell{ParagraphCell(fmt.Sprintf("Each moderator is fitted in a model of its own. The adjusted columns adjust %s of the test that the effect is the same in all of a moderator's groups over all %d moderators tried: Holm's method keeps the chance of any false finding below the significance level; Benjamini–Hochberg keeps the expected share of false findings among those flagged below it. A moderator whose test cannot be computed counts with p = 1.", which, len(sc.Rows)), tableWidth)})
	b.add("screen", "Moderators compared", rows)
}

func optionalP(p *float64) Cell {
	if p == nil {
		return Cell{}
	}
	return PValueCell(*p)
}

// largestBetween names the groups of the largest difference, the one with
// the larger effect first.
func largestBetween(res *estimate.Result, d estimate.Difference) string {
	if d.From == "" && d.To == "" {
		return ""
	}
	if d.Estimate < 0 {
		d.From, d.To = d.To, d.From
	}
	return comparisonLabel(res, d, shortValue)
}

// screenSettings is the readable settings block of a screen.
func screenSettings(sr ScreenRun, sc *estimate.Screen) []Setting {
	res := sc.Results[0]
	return []Setting{
		{"Standard errors", seWords(res)},
		{"Significance level", fmt.Sprint(res.Model.Alpha)},
		{"Power for detectable differences", fmt.Sprint(res.Model.Power)},
		{"Wild cluster bootstrap", bootstrapSetting(res)},
		{"Moderators tried", fmt.Sprint(len(sc.Rows))},
		{"Adjustment for the moderators tried", "Holm (1979) and Benjamini–Hochberg (1995), over every moderator tried"},
		{"Program", "Slopewise " + sr.Base.Version},
		{"Run at", sr.Base.Time.UTC().Format("2006-01-02 15:04 UTC")},
	}
}

// ScreenOutput is a screen as the headless command prints it with --json.
// Its shape is a documented contract (README, "JSON output of screen"):
// fields are added, never renamed or removed.
type ScreenOutput struct {
	Tried      int            `json:"tried"`
	Moderators []OutModerator `json:"moderators"`
	Note       string         `json:"note"`
	Cautions   []string       `json:"cautions"`
	Bootstrap  *OutBootstrap  `json:"bootstrap"`
}

// OutModerator is one moderator of a screen.
type OutModerator struct {
	Moderator     string   `json:"moderator"`
	Planned       bool     `json:"planned"`
	Heterogeneity *OutWald `json:"heterogeneity"`
	PHolm         float64  `json:"p_holm"`
	QBH           float64  `json:"q_bh"`
	MDD           float64  `json:"mdd"`
	// LargestDifference is the size of the largest difference between two
	// groups, LargestBetween names them, the larger effect first.
	LargestDifference float64 `json:"largest_difference"`
	LargestBetween    string  `json:"largest_between"`
	// Detail is the moderator's own results, as analyze --json prints them.
	Detail Output `json:"detail"`
}

// SummarizeScreen fills the JSON contract of a screen.
func SummarizeScreen(sr ScreenRun, sc *estimate.Screen) ScreenOutput {
	o := ScreenOutput{Tried: len(sc.Rows), Moderators: []OutModerator{}, Note: ScreenNote(sr, sc), Cautions: ScreenCautions(sr, sc)}
	for i, row := range sc.Rows {
		res := sc.Results[i]
		detail := Summarize(sr.RunFor(sc, i), res)
		o.Moderators = append(o.Moderators, OutModerator{Moderator: row.Moderator, Planned: sr.Candidates[i].Planned,
			Heterogeneity: detail.Heterogeneity, PHolm: row.PHolm, QBH: row.QBH, MDD: row.MDD,
			LargestDifference: math.Abs(row.Largest.Estimate), LargestBetween: largestBetween(res, row.Largest), Detail: detail})
		if o.Bootstrap == nil {
			o.Bootstrap = detail.Bootstrap
		}
	}
	return o
}
