package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"slopewise/internal/estimate"
)

// Note writes the plain-language note an evaluator can hand on: what was
// used, the effect in each group, whether the groups differ and how
// precisely that could be told, with the wording rules of METHODS §9:
// "effect" only for a randomised treatment; never "no difference" from an
// unclear test; never a finding without its interval; never causal words
// for the moderator; always rows used and dropped, the standard-error type
// and the minimum detectable difference.
func Note(run Run, res *estimate.Result) string {
	return strings.Join(writeNote(run, res).texts(-1), " ")
}

// The parts of the note, each under a plain heading in the sheet.
const (
	partFound = iota // what we found
	partSure         // how sure we are
	partKeep         // what to keep in mind
	numParts
)

// partHeadings are the headings of the note's parts, in reading order.
var partHeadings = [numParts]string{"What we found", "How sure we are", "What to keep in mind"}

// NotePart is one part of the note under its heading.
type NotePart struct {
	Heading string
	Text    string
}

// NoteParts is the note split into short paragraphs under plain headings
// (what we found · how sure we are · what to keep in mind): the same
// sentences as Note, each in the part it belongs to, in Note's order
// within a part. A part with nothing to say is left out.
func NoteParts(run Run, res *estimate.Result) []NotePart {
	w := writeNote(run, res)
	var out []NotePart
	for p := range numParts {
		if t := w.texts(p); len(t) > 0 {
			out = append(out, NotePart{Heading: partHeadings[p], Text: strings.Join(t, " ")})
		}
	}
	return out
}

// writeNote writes every sentence of the note, each marked with its part.
func writeNote(run Run, res *estimate.Result) *noteWriter {
	w := &noteWriter{run: run, res: res, u: unitsFor(res.Model.OutcomeBinary)}
	w.part = partSure
	w.rows()
	w.part = partFound
	w.designSentences()
	switch {
	case res.Arms != nil:
		w.armSentences()
	case res.Moderator.Kind == estimate.ModeratorContinuous:
		w.continuous()
	default:
		w.groups()
	}
	w.equivalence()
	w.part = partSure
	if res.Arms == nil {
		w.precision()
	}
	w.clusterBasis()
	w.bootstrapSentences()
	w.part = partKeep
	w.moderatorWords()
	return w
}

type noteWriter struct {
	run       Run
	res       *estimate.Result
	u         units
	sentences []noteSentence
	// part is the part of the note the next sentence belongs to.
	part int
	// open is set when the note shows a cluster-robust interval because
	// the bootstrap could not bound its own.
	open bool
}

// noteSentence is one sentence of the note and the part it belongs to.
type noteSentence struct {
	part int
	text string
}

// texts returns the sentences of one part, or of all with part < 0.
func (w *noteWriter) texts(part int) []string {
	var out []string
	for _, s := range w.sentences {
		if part < 0 || s.part == part {
			out = append(out, s.text)
		}
	}
	return out
}

// evidence is what the note reports of an estimate: its p-value and
// interval, taken from the wild cluster bootstrap when it ran, since with
// few clusters that is the one that keeps its stated error rate (METHODS
// §3, §8).
type evidence struct {
	p, lo, hi float64
	boot      bool
}

func (w *noteWriter) evidence(inf estimate.Inference, b *estimate.BootInference) evidence {
	ev := evidence{p: inf.P, lo: inf.CILow, hi: inf.CIHigh}
	if b != nil {
		ev.p, ev.boot = b.P, true
		if b.Bounded {
			ev.lo, ev.hi = b.CILow, b.CIHigh
		} else {
			w.open = true
		}
	}
	return ev
}

func (w *noteWriter) say(format string, args ...any) {
	w.sentences = append(w.sentences, noteSentence{part: w.part, text: fmt.Sprintf(format, args...)})
}

// rows says how many rows were used and why others were left out.
func (w *noteWriter) rows() {
	r := w.res.Rows
	if r.Dropped == 0 {
		w.say("The analysis used all %s rows.", count(r.Used))
		return
	}
	var why []string
	for _, c := range r.Reasons {
		why = append(why, fmt.Sprintf("%s with %s", count(c.Rows), c.Reason))
	}
	w.say("The analysis used %s of %s rows; %s were left out (%s).", count(r.Used), count(r.Read), count(r.Dropped), strings.Join(why, "; "))
}

// subject names what is estimated: an effect, or a difference associated
// with the treatment when it was not randomly assigned.
func (w *noteWriter) subject() string { return subjectWords(w.run, w.res) }

func subjectWords(run Run, res *estimate.Result) string {
	t := res.Spec.Treatment
	outcome := res.Spec.Outcome
	name := treatmentName(t)
	if t.Kind == estimate.TreatmentContinuous {
		name = "each unit of " + name
	}
	if run.Randomized {
		return fmt.Sprintf("the estimated effect of %s on %s", name, outcome)
	}
	return fmt.Sprintf("the difference in %s associated with %s", outcome, name)
}

func treatmentName(t estimate.Treatment) string {
	if t.Kind == estimate.TreatmentLabels {
		return fmt.Sprintf("%s = %s", t.Column, t.Treated)
	}
	return t.Column
}

func (w *noteWriter) effectText(e estimate.GroupEffect) string {
	ev := w.evidence(e.Inference, e.Boot)
	return fmt.Sprintf("%s (%s)", w.u.amount(e.Estimate), w.u.interval(w.res.Model.Alpha, ev.lo, ev.hi))
}

// groups covers a binary or categorical moderator.
func (w *noteWriter) groups() {
	res := w.res
	m := res.Moderator.Column
	const listed = 6
	var parts []string
	for i, e := range res.Effects {
		if i == listed {
			parts = append(parts, fmt.Sprintf("and %d more groups in the table", len(res.Effects)-listed))
			break
		}
		parts = append(parts, fmt.Sprintf("%s in %s %q", w.effectText(e), m, e.Group))
	}
	w.say("%s was %s.", capitalise(w.subject()), JoinAnd(parts))

	if len(res.Differences) == 1 {
		w.difference(res.Differences[0])
		return
	}
	if h := res.Heterogeneity; h != nil {
		p, boot := heterogeneityP(h)
		verdict := "the data cannot tell whether it differs between them"
		if p < res.Model.Alpha && !(w.exploratory() && w.run.AdjustedP >= res.Model.Alpha) {
			verdict = "the data show that it differs between at least some of them"
		}
		w.say("Testing whether the %s is the same in all %d groups gives F = %s (%s): %s.", w.what(), len(res.Effects), readable(h.F), w.pWords(p, boot), verdict)
	} else if nj := res.HeterogeneityNotJudged; nj != nil {
		w.say("Whether the %s is the same in all %d groups %s.", w.what(), len(res.Effects), notJudgedWords(nj, res.Spec.Cluster))
	}
	d := res.LargestDifference()
	ev := w.evidence(d.Inference, d.Boot)
	more := d.To
	lo, hi := ev.lo, ev.hi
	if d.Estimate < 0 {
		more, lo, hi = d.From, -ev.hi, -ev.lo
	}
	w.say("The largest gap is between %q and %q: the %s in %q is larger by %s (%s, %s).", d.From, d.To, w.what(), more, w.u.amount(math.Abs(d.Estimate)),
		w.u.interval(res.Model.Alpha, lo, hi), w.pWords(ev.p, ev.boot))
	w.say("With %d groups there are %d pairwise comparisons, so one of them can look clear by chance; the table lists them all.", len(res.Effects), len(res.Differences))
}

// what is the short name of the quantity, for later sentences.
func (w *noteWriter) what() string {
	if w.run.Randomized {
		return "effect"
	}
	return "association"
}

// difference reports one comparison as clear, or unclear with what the
// data could have detected.
func (w *noteWriter) difference(d estimate.Difference) {
	alpha := w.res.Model.Alpha
	m := w.res.Moderator.Column
	ev := w.evidence(d.Inference, d.Boot)
	ci := w.u.interval(alpha, ev.lo, ev.hi)
	bigger, smaller := d.To, d.From
	if d.Estimate < 0 {
		bigger, smaller = d.From, d.To
		ci = w.u.interval(alpha, -ev.hi, -ev.lo)
	}
	switch {
	case ev.p < alpha && w.exploratory() && w.run.AdjustedP >= alpha:
		w.say("The %s is larger in %s %q than in %q by %s (%s, %s), but once the moderators tried are allowed for the data cannot confirm that it differs between these groups.",
			w.what(), m, bigger, smaller, w.u.amount(math.Abs(d.Estimate)), ci, w.pWords(ev.p, ev.boot))
	case ev.p < alpha:
		w.say("The %s is larger in %s %q than in %q by %s (%s, %s): the data show that it differs between these groups.",
			w.what(), m, bigger, smaller, w.u.amount(math.Abs(d.Estimate)), ci, w.pWords(ev.p, ev.boot))
	default:
		w.say("The data cannot tell whether the %s differs between %s %q and %q: the estimated gap is %s, but anything from %s to %s is consistent with the data (%s).",
			w.what(), m, d.To, d.From, w.u.amount(d.Estimate), readable(w.u.scale*ev.lo), readable(w.u.scale*ev.hi), w.pWords(ev.p, ev.boot))
	}
}

// heterogeneityP is the p-value of the test that the effect is the same
// everywhere: the bootstrap's when it ran.
func heterogeneityP(h *estimate.WaldTest) (p float64, boot bool) {
	if h.PBoot != nil {
		return *h.PBoot, true
	}
	return h.P, false
}

// exploratory is true for a moderator chosen after looking at the data
// among several tried: its p-values are reported with the adjusted one.
func (w *noteWriter) exploratory() bool { return !w.run.Planned && w.run.tried() > 1 }

// pWords writes a p-value, the bootstrap's when boot is set, with the
// adjusted one beside it for an exploratory moderator (METHODS §6).
func (w *noteWriter) pWords(p float64, boot bool) string {
	text := pText(p)
	if boot {
		text = "bootstrap " + text
	}
	if !w.exploratory() {
		return text
	}
	return fmt.Sprintf("%s before and %s after allowing for the %d moderators tried", text, pText(w.run.AdjustedP), w.run.tried())
}

// continuous covers a continuous moderator: effects at the outer probes,
// the change per unit and the Johnson–Neyman region.
func (w *noteWriter) continuous() {
	res := w.res
	m := res.Moderator.Column
	first, last := res.Effects[0], res.Effects[len(res.Effects)-1]
	w.say("%s was %s where %s is %s and %s where it is %s.", capitalise(w.subject()),
		w.effectText(first), m, probeName(first), w.effectText(last), probeName(last))
	var unit estimate.Difference
	for _, d := range res.Differences {
		if d.PerUnit {
			unit = d
		}
	}
	w.say("%s", w.perUnitSentence(unit))
	if jn := res.JohnsonNeyman; jn != nil {
		w.say("%s", capitalise(significantWhere(jn, m))+".")
	}
	w.linearity()
}

// perUnitSentence says how the effect changes per unit of a continuous
// moderator: clearly, or unclear with what the data allow.
func (w *noteWriter) perUnitSentence(unit estimate.Difference) string {
	m, alpha := w.res.Moderator.Column, w.res.Model.Alpha
	change := "rises"
	if unit.Estimate < 0 {
		change = "falls"
	}
	ev := w.evidence(unit.Inference, unit.Boot)
	if ev.p < alpha {
		return fmt.Sprintf("The %s %s by %s for each unit of %s (%s, %s): the data show that it changes with %s.",
			w.what(), change, w.u.amount(math.Abs(unit.Estimate)), m, w.u.interval(alpha, ev.lo, ev.hi), w.pWords(ev.p, ev.boot), m)
	}
	return fmt.Sprintf("The data cannot tell whether the %s changes with %s: the estimated change per unit is %s, but anything from %s to %s is consistent with the data (%s).",
		w.what(), m, w.u.amount(unit.Estimate), readable(w.u.scale*ev.lo), readable(w.u.scale*ev.hi), w.pWords(ev.p, ev.boot))
}

// linearity flags a straight line that the effects within the thirds of
// the moderator contradict (METHODS §5), by the bootstrap's p-value when it
// ran, and says when there are too few clusters to judge it.
func (w *noteWriter) linearity() {
	l := w.res.Linearity
	m, alpha := w.res.Moderator.Column, w.res.Model.Alpha
	defer func(p int) { w.part = p }(w.part)
	w.part = partKeep
	if l != nil && l.NotJudged != nil {
		w.say("Whether the %s follows the straight line the model assumes %s; the effects within each third of %s are shown beside the line, untested.",
			w.what(), notJudgedWords(l.NotJudged, w.res.Spec.Cluster), m)
		return
	}
	if l == nil || !l.Contradicts {
		return
	}
	var parts []string
	for _, th := range l.Thirds {
		parts = append(parts, fmt.Sprintf("around %s it is %s (%s) where the line gives %s", readable(th.Median),
			w.u.amount(th.Effect.Estimate), w.u.interval(alpha, th.Effect.CILow, th.Effect.CIHigh), w.u.amount(th.Line.Estimate)))
	}
	w.say("Estimated within each third of %s, the %s does not follow the straight line the model assumes (test of the line against the thirds, %s): %s. The values above rest on that line, so read them with care and look at the thirds in the chart.",
		m, w.what(), waldPWords(l.Wald), strings.Join(parts, "; "))
}

// waldPWords is a joint test's p-value in words: the bootstrap's when it
// ran (METHODS §8), else the one from F.
func waldPWords(t *estimate.WaldTest) string {
	if p, boot := heterogeneityP(t); boot {
		return "bootstrap " + pText(p)
	}
	return pText(t.P)
}

// notJudgedWords says why a joint test is not made, completing a sentence
// whose subject is the question it would answer: "… cannot be judged with
// only 6 clusters of "school": …".
func notJudgedWords(nj *estimate.NotJudged, cluster string) string {
	return fmt.Sprintf("cannot be judged with only %d clusters of %s: the test weighs %d terms at once, and standard errors that allow for clusters can weigh at most %d (one fewer than the clusters), so a p-value would mean nothing (Cameron & Miller 2015)",
		nj.Clusters, quoted(cluster), nj.Terms, nj.MaxTerms)
}

// equivalence says whether the two one-sided tests conclude that the
// effect is the same to within the smallest difference that matters, and
// shows the (1 − 2α) interval they rest on (Schuirmann 1987; METHODS §7).
func (w *noteWriter) equivalence() {
	var ds []estimate.Difference
	for _, d := range w.res.Differences {
		if d.Equivalence != nil {
			ds = append(ds, d)
		}
	}
	if len(ds) == 0 {
		return
	}
	res := w.res
	margin := ds[0].Equivalence.Margin
	lvl := level(2 * res.Model.Alpha)
	within := fmt.Sprintf("%s to %s", readable(-w.u.scale*margin), readable(w.u.scale*margin))
	pair := func(d estimate.Difference) string {
		if res.Moderator.Kind == estimate.ModeratorContinuous {
			return fmt.Sprintf("where %s is %s and where it is %s", res.Moderator.Column, readable(valueOf(res.Effects, d.To)), readable(valueOf(res.Effects, d.From)))
		}
		return fmt.Sprintf("in %q and in %q", d.To, d.From)
	}
	interval := func(e *estimate.Equivalence) string {
		if !e.Bounded {
			return "which the bootstrap cannot bound with so few clusters"
		}
		return fmt.Sprintf("%s to %s", readable(w.u.scale*e.CILow), readable(w.u.scale*e.CIHigh))
	}
	how := "the two one-sided tests (Schuirmann 1987"
	if ds[0].Equivalence.Bootstrap {
		how += ", by the wild cluster bootstrap"
	}
	how += ")"
	lead := fmt.Sprintf("Taking %s as the smallest difference that matters, %s", w.u.amount(margin), how)
	if len(ds) == 1 {
		d := ds[0]
		e := d.Equivalence
		if e.Equivalent {
			w.say("%s conclude that the %s is the same %s to within that margin: the %s interval of the difference, %s, lies inside %s (the less clear of the two tests gives %s).", lead, w.what(), pair(d), lvl, interval(e), within, pText(e.P))
		} else {
			w.say("%s cannot conclude that the %s is the same %s to within that margin: the %s interval of the difference, %s, reaches beyond %s (the less clear of the two tests gives %s).", lead, w.what(), pair(d), lvl, interval(e), within, pText(e.P))
		}
		return
	}
	var same []string
	worst := ds[0]
	for _, d := range ds {
		if d.Equivalence.Equivalent {
			same = append(same, fmt.Sprintf("%q and %q", d.To, d.From))
		}
		if d.Equivalence.P > worst.Equivalence.P {
			worst = d
		}
	}
	if len(same) == len(ds) {
		w.say("%s conclude that the %s is the same to within that margin in every pair of the %d groups: every %s interval of a difference lies inside %s (the least clear pair, %q and %q, gives %s).",
			lead, w.what(), len(res.Effects), lvl, within, worst.To, worst.From, pText(worst.Equivalence.P))
		return
	}
	which := fmt.Sprintf("for none of the %d pairs of groups", len(ds))
	if same != nil {
		which = "only for " + JoinAnd(same)
	}
	w.say("%s conclude that the %s is the same to within that margin %s; for %q and %q, for example, the %s interval of the difference, %s, reaches beyond %s (the less clear of the two tests gives %s).",
		lead, w.what(), which, worst.To, worst.From, lvl, interval(worst.Equivalence), within, pText(worst.Equivalence.P))
}

// probeName describes a probe: "2.5 (its 10th percentile)".
func probeName(e estimate.GroupEffect) string {
	name := readable(e.Value)
	if len(e.Group) > 1 && e.Group[0] == 'p' {
		name += fmt.Sprintf(" (its %s percentile)", ordinal(e.Group[1:]))
	}
	if e.Extrapolated {
		name += ", outside the observed range"
	}
	return name
}

func ordinal(n string) string {
	switch {
	case strings.HasSuffix(n, "1") && !strings.HasSuffix(n, "11"):
		return n + "st"
	case strings.HasSuffix(n, "2") && !strings.HasSuffix(n, "12"):
		return n + "nd"
	case strings.HasSuffix(n, "3") && !strings.HasSuffix(n, "13"):
		return n + "rd"
	}
	return n + "th"
}

// significantWhere says in words where the effect is distinguishable from
// zero within the observed range.
func significantWhere(jn *estimate.JohnsonNeyman, m string) string {
	rng := fmt.Sprintf("the observed range %s to %s", readable(jn.Min), readable(jn.Max))
	var sig []estimate.Region
	for _, r := range jn.Regions {
		if r.Significant {
			sig = append(sig, r)
		}
	}
	switch {
	case len(sig) == 0:
		return fmt.Sprintf("the effect is not distinguishable from zero anywhere in %s", rng)
	case len(sig) == len(jn.Regions):
		return fmt.Sprintf("the effect is distinguishable from zero across all of %s", rng)
	}
	var parts []string
	for _, r := range sig {
		dir := "above zero"
		if r.Sign < 0 {
			dir = "below zero"
		}
		switch {
		case r.From == jn.Min:
			parts = append(parts, fmt.Sprintf("%s is below %s (%s)", m, readable(r.To), dir))
		case r.To == jn.Max:
			parts = append(parts, fmt.Sprintf("%s is above %s (%s)", m, readable(r.From), dir))
		default:
			parts = append(parts, fmt.Sprintf("%s is between %s and %s (%s)", m, readable(r.From), readable(r.To), dir))
		}
	}
	return fmt.Sprintf("the effect is distinguishable from zero where %s, within %s", strings.Join(parts, " or where "), rng)
}

// precision says what size of difference the data could detect, and the
// standard errors used.
func (w *noteWriter) precision() {
	res := w.res
	d := res.KeyDifference()
	power := strconv100(res.Model.Power)
	typical := meanAbsEffect(res.Effects)
	what := "a difference between groups"
	if res.Moderator.Kind == estimate.ModeratorContinuous {
		what = fmt.Sprintf("a difference between %s %s and %s", res.Moderator.Column, readable(valueOf(res.Effects, d.From)), readable(valueOf(res.Effects, d.To)))
	}
	sentence := fmt.Sprintf("With these data, %s would be detected reliably (%s%% power) only if it were about %s or more",
		what, power, w.u.amount(d.MDD))
	shown := d.Equivalence != nil && d.Equivalence.Equivalent
	if w.evidence(d.Inference, d.Boot).p >= res.Model.Alpha && d.MDD > typical && !shown {
		sentence += fmt.Sprintf(", which is larger than the typical %s itself (%s); so the absence of a clear difference is not evidence that %s works equally well for everyone", w.what(), w.u.amount(typical), treatmentName(res.Spec.Treatment))
	}
	w.say("%s.", sentence)
	w.say("%s", seWords(res)+".")
}

func valueOf(effects []estimate.GroupEffect, group string) float64 {
	for _, e := range effects {
		if e.Group == group {
			return e.Value
		}
	}
	return math.NaN()
}

func meanAbsEffect(effects []estimate.GroupEffect) float64 {
	var s float64
	for _, e := range effects {
		s += math.Abs(e.Estimate)
	}
	return s / float64(len(effects))
}

func strconv100(p float64) string { return strconv.FormatFloat(100*p, 'f', -1, 64) }

// seWords names the standard errors in plain words.
func seWords(res *estimate.Result) string {
	switch res.Model.Variance {
	case estimate.Classical:
		return "Standard errors are classical ones, which assume the outcome varies equally in every part of the data"
	case estimate.CR1:
		return fmt.Sprintf("Standard errors allow for rows of the same %s to be alike (cluster-robust, CR1, %d clusters)", res.Spec.Cluster, res.Model.Clusters)
	}
	return fmt.Sprintf("Standard errors are robust to unequal spread of the outcome (%s)", res.Model.Variance)
}

// bootstrapSentences say that the p-values and intervals come from the
// wild cluster bootstrap, how it was run, and why (METHODS §3, §8).
func (w *noteWriter) bootstrapSentences() {
	b := w.res.Bootstrap
	if b == nil {
		return
	}
	draws, weights := bootDraws(b), "Rademacher weights of −1 or 1 per cluster"
	if b.Weights == estimate.Webb {
		weights = "Webb's six-point weights"
	}
	if !b.Enumerated {
		weights += fmt.Sprintf(", seed %d", b.Seed)
	}
	w.say("With only %d clusters, cluster-robust tests on their own make results look clearer than they are, so the p-values and intervals in this note come from a wild cluster bootstrap that imposes each hypothesis in turn (%s with %s); the tables give both.",
		w.res.Model.Clusters, draws, weights)
	if w.open {
		w.say("Where the bootstrap cannot bound an interval, because so few clusters allow few distinct draws, the note shows the cluster-robust interval instead.")
	}
	if w.res.JohnsonNeyman != nil {
		w.say("Where along %s the effect is distinguishable from zero is judged by the cluster-robust test.", w.res.Moderator.Column)
	}
}

// bootDraws says how many draws the bootstrap used: "9999 draws", or "all
// 4,096 possible draws".
func bootDraws(b *estimate.BootstrapInfo) string {
	if b.Enumerated {
		return "all " + count(b.Draws) + " possible draws"
	}
	return count(b.Draws) + " draws"
}

// moderatorWords keeps the moderator from being read as a cause, and says
// how it was chosen.
func (w *noteWriter) moderatorWords() {
	m := w.res.Moderator.Column
	w.say("Differences across %s describe for whom the %s was larger; they do not show that %s itself is the reason, since rows that differ in %s may differ in other ways too.", m, w.what(), m, m)
	tried := w.run.tried()
	switch {
	case w.run.Planned && tried == 1:
		w.say("The moderator %s was named before the data were examined.", m)
	case w.run.Planned:
		w.say("The moderator %s was named before the data were examined; %d moderators were examined in all.", m, tried)
	case tried > 1:
		w.say("The moderator %s was not named before the data were examined and is one of %d moderators tried; allowing for that, the test that the %s is the same everywhere gives an adjusted %s, so treat any difference as a lead to check in new data.", m, tried, w.what(), pText(w.run.AdjustedP))
	default:
		w.say("The moderator %s was not named before the data were examined, so treat any difference as a lead to check in new data.", m)
	}
}

func count(n int) string { return groupThousands(fmt.Sprint(n)) }

// Count writes a count as the notes do: commas between groups of three
// digits from five digits on ("1200", "19,900").
func Count(n int) string { return count(n) }

func capitalise(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// JoinAnd joins texts as a list in words: "a, b and c".
func JoinAnd(parts []string) string {
	switch len(parts) {
	case 0:
		return ""
	case 1:
		return parts[0]
	}
	return strings.Join(parts[:len(parts)-1], ", ") + " and " + parts[len(parts)-1]
}
