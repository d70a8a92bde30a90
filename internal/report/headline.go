package report

import (
	"fmt"
	"math"

	"slopewise/internal/estimate"
)

// Headline answers the question of a run in two or three short sentences
// a manager reads first: the effect in each group in one sentence, whether
// the groups differ and how sure that is, and the one caution that matters
// most. It keeps the wording rules of METHODS §9 as the note does (and
// uses the note's own sentences where they fit): "effect" only for a
// randomised treatment, every estimate with its interval, never "no
// difference" from an unclear test, the adjusted p for an exploratory
// moderator among several.
func Headline(run Run, res *estimate.Result) []string {
	w := &noteWriter{run: run, res: res, u: unitsFor(res.Model.OutcomeBinary)}
	out := []string{w.effectsLine()}
	out = append(out, w.differLine())
	return append(out, w.mainCaution())
}

// effectsLine is the effect in each group in one sentence, the first
// interval named in full and the others in brackets after it.
func (w *noteWriter) effectsLine() string {
	res := w.res
	if res.Moderator.Kind == estimate.ModeratorContinuous {
		first, last := res.Effects[0], res.Effects[len(res.Effects)-1]
		return fmt.Sprintf("%s was %s where %s is %s and %s where it is %s.", capitalise(w.subject()),
			w.effectText(first), res.Moderator.Column, probeName(first), w.effectText(last), probeName(last))
	}
	const listed = 6
	var parts []string
	for i, e := range res.Effects {
		if i == listed {
			parts = append(parts, fmt.Sprintf("%d more groups in the table below", len(res.Effects)-listed))
			break
		}
		ev := w.evidence(e.Inference, e.Boot)
		in := fmt.Sprintf("%s to %s", readable(w.u.scale*ev.lo), readable(w.u.scale*ev.hi))
		if i == 0 {
			in = w.u.interval(res.Model.Alpha, ev.lo, ev.hi)
		}
		parts = append(parts, fmt.Sprintf("%s in %q (%s)", w.u.amount(e.Estimate), e.Group, in))
	}
	return fmt.Sprintf("%s was %s.", capitalise(w.subject()), JoinAnd(parts))
}

// differLine says whether the groups differ and how sure that is.
func (w *noteWriter) differLine() string {
	res := w.res
	alpha := res.Model.Alpha
	if allEquivalent(res.Differences) {
		// The groups were shown to be the same to within the smallest
		// difference that matters: that is the answer (METHODS §7).
		w.equivalence()
		return w.sentences[len(w.sentences)-1].text
	}
	switch {
	case res.Moderator.Kind == estimate.ModeratorContinuous:
		for _, d := range res.Differences {
			if d.PerUnit {
				return w.perUnitSentence(d)
			}
		}
	case len(res.Differences) == 1:
		w.difference(res.Differences[0])
		return w.sentences[len(w.sentences)-1].text
	}
	d := res.LargestDifference()
	ev := w.evidence(d.Inference, d.Boot)
	more, less, lo, hi := d.To, d.From, ev.lo, ev.hi
	if d.Estimate < 0 {
		more, less, lo, hi = d.From, d.To, -ev.hi, -ev.lo
	}
	gap := fmt.Sprintf("the largest gap, %q above %q, is %s (%s)", more, less, w.u.amount(math.Abs(d.Estimate)), w.u.interval(alpha, lo, hi))
	h := res.Heterogeneity
	if h == nil {
		return fmt.Sprintf("Whether the %s is the same in all %d groups cannot be tested with these data; %s.", w.what(), len(res.Effects), gap)
	}
	p, boot := heterogeneityP(h)
	switch {
	case p < alpha && w.exploratory() && w.run.AdjustedP >= alpha:
		return fmt.Sprintf("The %s looks different between the groups (%s), but once the moderators tried are allowed for the data cannot confirm it; %s.", w.what(), w.pWords(p, boot), gap)
	case p < alpha:
		return fmt.Sprintf("The %s is not the same in every group (test of equal %ss, %s): %s.", w.what(), w.what(), w.pWords(p, boot), gap)
	}
	return fmt.Sprintf("The data cannot tell whether the %s differs between the groups (test of equal %ss, %s); %s.", w.what(), w.what(), w.pWords(p, boot), gap)
}

// allEquivalent reports differences that were all tested against the
// smallest difference that matters and all found within it.
func allEquivalent(ds []estimate.Difference) bool {
	n := 0
	for _, d := range ds {
		if e := d.Equivalence; e != nil {
			if !e.Equivalent {
				return false
			}
			n++
		}
	}
	return n > 0
}

// mainCaution is the one caution that matters most for this run: that the
// treatment was not randomised; that the moderator was chosen among
// several or after looking; that an unclear difference is no evidence of
// sameness when the data could not have detected a typical one; that the
// straight line does not fit; that the cluster-robust tests with few
// clusters were not corrected; else that the moderator is not a cause.
func (w *noteWriter) mainCaution() string {
	run, res := w.run, w.res
	if !run.Randomized {
		return cautionNotRandomized
	}
	if c := cautionChosen(run); c != "" {
		return c
	}
	d := res.KeyDifference()
	typical := meanAbsEffect(res.Effects)
	shown := d.Equivalence != nil && d.Equivalence.Equivalent
	if w.evidence(d.Inference, d.Boot).p >= res.Model.Alpha && d.MDD > typical && !shown {
		return fmt.Sprintf("An unclear difference is not evidence that %s works equally well for everyone: these data would reliably detect only a difference of about %s or more, larger than the typical %s itself (%s).",
			treatmentName(res.Spec.Treatment), w.u.amount(d.MDD), w.what(), w.u.amount(typical))
	}
	if l := res.Linearity; l != nil && l.Contradicts {
		return fmt.Sprintf("The %s does not follow the straight line in %s that the model assumes; read the values above with care and look at the thirds below.", w.what(), res.Moderator.Column)
	}
	if res.Model.Variance == estimate.CR1 && res.Model.Clusters < fewClusters && res.Bootstrap == nil {
		return fmt.Sprintf("With only %d clusters and the wild cluster bootstrap turned off, the p-values may be too small and the intervals too narrow.", res.Model.Clusters)
	}
	return cautionModerator(res.Moderator.Column)
}

// ScreenHeadline answers the question of a screen of several moderators
// in two or three sentences: across which moderators the effect differs
// once the number tried is allowed for, which were named beforehand, and
// the caution that matters most (METHODS §6, §9).
func ScreenHeadline(sr ScreenRun, sc *estimate.Screen) []string {
	res := sc.Results[0]
	alpha := res.Model.Alpha
	what := "association"
	if sr.Base.Randomized {
		what = "effect"
	}
	var clear, unclear []string
	exploratoryClear := false
	for i, row := range sc.Rows {
		switch {
		case row.Tested && row.PHolm < alpha:
			clear = append(clear, fmt.Sprintf("%s (adjusted %s)", row.Moderator, pText(row.PHolm)))
			exploratoryClear = exploratoryClear || !sr.Candidates[i].Planned
		default:
			unclear = append(unclear, row.Moderator)
		}
	}
	n := len(sc.Rows)
	var first string
	switch {
	case clear == nil:
		first = fmt.Sprintf("Of the %s moderators tried, none shows that the %s differs between its groups once the number tried is allowed for (smallest adjusted %s); that is not evidence that it is the same for everyone.", countWord(n), what, pText(smallestHolm(sc)))
	case unclear == nil:
		first = fmt.Sprintf("Of the %s moderators tried, the %s differs between groups of each: %s.", countWord(n), what, JoinAnd(clear))
	default:
		first = fmt.Sprintf("Of the %s moderators tried, the %s differs between the groups of %s; for %s the data cannot tell.", countWord(n), what, JoinAnd(clear), JoinAnd(unclear))
	}
	var planned, exploratory []string
	for i, c := range sr.Candidates {
		if c.Planned {
			planned = append(planned, sc.Rows[i].Moderator)
		} else {
			exploratory = append(exploratory, sc.Rows[i].Moderator)
		}
	}
	var second string
	switch {
	case exploratory == nil:
		second = "All of them were named before the data were examined."
	case planned == nil:
		second = "None was named before the data were examined, so each is exploratory."
	default:
		second = fmt.Sprintf("Of these, %s %s named before the data were examined; %s %s exploratory.", JoinAnd(planned), wasWere(len(planned)), JoinAnd(exploratory), isAre(len(exploratory)))
	}
	third := fmt.Sprintf("No moderator was randomly assigned: a difference across one shows for whom the %s was larger, not why.", what)
	switch {
	case !sr.Base.Randomized:
		third = cautionNotRandomized
	case exploratoryClear:
		third = "A clear difference across an exploratory moderator is a lead to check in new data, not a finding."
	}
	return []string{first, second, third}
}

func smallestHolm(sc *estimate.Screen) float64 {
	p := 1.0
	for _, row := range sc.Rows {
		p = math.Min(p, row.PHolm)
	}
	return p
}
