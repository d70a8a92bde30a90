package report

import (
	"time"

	"slopewise/internal/estimate"
)

// Run is everything one analysis needs and everything needed to repeat it:
// where the data came from, the model, and the facts about the study that
// change how results may be worded. It is stored in the results sheet as
// JSON and can be read back to repeat the run exactly (ARCHITECTURE: "one
// spec, whole").
type Run struct {
	File      string `json:"file"`
	Sheet     string `json:"sheet,omitempty"`
	HeaderRow int    `json:"header_row,omitempty"`
	// Table is the workbook table read as the data region, if one was.
	Table string `json:"table,omitempty"`

	Spec estimate.Spec `json:"spec"`

	// Randomized says the treatment was randomly assigned; only then do
	// the words speak of an "effect" (METHODS §9).
	Randomized bool `json:"randomized"`
	// Planned says the moderator was named before looking at the data.
	Planned bool `json:"planned"`
	// ModeratorsTried is how many moderators were examined in all, this one
	// included (0 means 1).
	ModeratorsTried int `json:"moderators_tried,omitempty"`
	// AdjustedP is this moderator's heterogeneity p-value adjusted for the
	// moderators tried (Holm), when more than one was tried.
	AdjustedP float64 `json:"adjusted_p,omitempty"`

	// Groupings are what the data show about the columns that group the
	// rows (pipeline.Groupings), for the cautions and the note. They are
	// found again from the data on every run, so they are not stored.
	Groupings []Grouping `json:"-"`

	// Version of the program and the time of the run, for the settings block.
	Version string    `json:"version"`
	Time    time.Time `json:"time"`
}

func (r Run) tried() int { return max(r.ModeratorsTried, 1) }
