package gui

import (
	"fmt"
	"regexp"
	"strings"

	"slopewise/internal/io/workbook"
)

// Default roles, chosen by a column's name and content and always said
// in "Before running" (chosenFor), never silently.

// Words that name who received a programme, and words of a measured
// result, in column names (common practice in evaluation data sets; the
// list is ours).
var (
	treatmentWords = regexp.MustCompile(`(?i)(treat|coach|program|intervention|assign|receiv|offer|enrol|particip|tutor|mentor|arm|exposed|got_|took_|attended)`)
	outcomeWords   = regexp.MustCompile(`(?i)(outcome|result|score|earn|income|wage|salary|post|after|follow|endline|final|_\d+m$|attend|complet|pass|weight_kg|test)`)
	beforeWords    = regexp.MustCompile(`(?i)(baseline|^pre|_pre|before|prior|initial|intake|^age$|_age$|year|^id$|_id$|id_|number|code|zip|phone)`)
)

// twoValued reports whether c can be a treatment of two arms: 0/1, or a
// column of two labels.
func twoValued(c *workbook.Column) bool {
	switch c.Kind {
	case workbook.YesNo:
		return len(c.Levels) == 2
	case workbook.Category:
		return len(c.Levels) == 2
	case workbook.Number:
		return len(c.Distinct) == 2 && (c.Distinct[0] == 0 || c.Distinct[0] == 1) && c.Distinct[0]+c.Distinct[1] == 1
	}
	return false
}

// idLike reports whether a number column looks like an identifier: a
// name saying so, or whole numbers all different.
func idLike(c *workbook.Column) bool {
	name := strings.ToLower(c.Name)
	if name == "id" || strings.HasSuffix(name, "_id") || strings.HasPrefix(name, "id_") || strings.HasSuffix(name, " id") {
		return true
	}
	seen := make(map[float64]bool, len(c.Numbers))
	for i, v := range c.Numbers {
		if c.Missing[i] != workbook.Present {
			continue
		}
		if v != float64(int64(v)) || seen[v] {
			return false
		}
		seen[v] = true
	}
	return len(seen) > 20
}

// defaultTreatment is the two-valued column whose name says who received
// the programme, else the first 0/1 column; with the reason in words.
func defaultTreatment(t *workbook.Table) (string, string) {
	var first *workbook.Column
	for _, c := range t.Columns {
		if !twoValued(c) {
			continue
		}
		if treatmentWords.MatchString(c.Name) {
			return c.Name, "two values; its name says who received the programme"
		}
		if first == nil && (c.Kind == workbook.YesNo || c.Kind == workbook.Number) {
			first = c
		}
	}
	if first != nil {
		return first.Name, "the first column of 0 and 1; no name says who received the programme, so check it"
	}
	return "", ""
}

// defaultOutcome is a measured number: not an identifier, not the
// treatment, not two-valued; one whose name says result first, else the
// first that does not look measured before the programme.
func defaultOutcome(t *workbook.Table, treatment string) (string, string) {
	var plain *workbook.Column
	for _, c := range t.Columns {
		if c.Kind != workbook.Number || c.Name == treatment || twoValued(c) || idLike(c) {
			continue
		}
		if outcomeWords.MatchString(c.Name) && !beforeWords.MatchString(c.Name) {
			return c.Name, "a number named as a result"
		}
		if plain == nil && !beforeWords.MatchString(c.Name) {
			plain = c
		}
	}
	if plain != nil {
		return plain.Name, "the first number that is not an identifier or a measure from before; check it"
	}
	return "", ""
}

// leadingNumber is a value that starts with a number, perhaps after a
// sign or a currency symbol: "12 kg", "$1,200", "3.5 hours" (not an
// identifier such as "S01").
var leadingNumber = regexp.MustCompile(`^\s*[-+]?[$€£]?\s*[0-9]`)

// numbersAsText lists the text columns whose values mostly start with a
// number: numbers written with units or words, which cannot be the
// outcome as they stand.
func numbersAsText(t *workbook.Table) []string {
	var out []string
	for _, c := range t.Columns {
		if c.Kind != workbook.Text && c.Kind != workbook.Category {
			continue
		}
		with, seen := 0, 0
		for i, v := range c.Texts {
			if c.Missing[i] != workbook.Present || v == "" {
				continue
			}
			seen++
			if leadingNumber.MatchString(v) {
				with++
			}
			if seen == 200 {
				break
			}
		}
		if seen >= 5 && with*2 > seen {
			out = append(out, c.Name)
		}
	}
	return out
}

// chosenFor says which roles were chosen for the person and why, while
// they still hold the defaults.
func (s *rolesScreen) chosenFor() string {
	var parts []string
	if s.defTreatment != "" && s.treatment.Selected == s.defTreatment {
		parts = append(parts, fmt.Sprintf("treatment %q (%s)", s.defTreatment, s.whyTreatment))
	}
	if s.defOutcome != "" && s.outcome.Selected == s.defOutcome {
		parts = append(parts, fmt.Sprintf("outcome %q (%s)", s.defOutcome, s.whyOutcome))
	}
	if len(parts) == 0 {
		return ""
	}
	return "Chosen for you: " + strings.Join(parts, "; ") + ". Change them above if they are wrong."
}
