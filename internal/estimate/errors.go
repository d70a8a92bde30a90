package estimate

import "errors"

// Causes of a failed fit, for errors.Is. Every *Error wraps one of them.
var (
	ErrSpec        = errors.New("the analysis settings are incomplete or do not match the data")
	ErrNoRows      = errors.New("no rows are left to fit")
	ErrConstant    = errors.New("a column that must vary is constant")
	ErrNoContrast  = errors.New("a group lacks treated or untreated rows")
	ErrTooFewRows  = errors.New("fewer rows than model terms")
	ErrAliased     = errors.New("model terms are linear combinations of each other")
	ErrExactFit    = errors.New("the model fits the outcome exactly")
	ErrLeverage    = errors.New("a row has leverage 1")
	ErrFewClusters = errors.New("too few clusters")
	ErrValues      = errors.New("a column holds values the chosen role does not allow")
)

// Error is a failed fit explained for the person who ran it: what went
// wrong, in which column and rows, and what to do about it.
type Error struct {
	// Message is the whole explanation in plain words.
	Message string
	// Column is the data column concerned, if one is.
	Column string
	// Rows lists the row labels concerned (Data.RowLabels), if any.
	Rows []int
	// Aliased lists model terms that could not be estimated, with reasons.
	Aliased []AliasedTerm
	// Err is the cause, one of the Err… values of this package.
	Err error
}

func (e *Error) Error() string { return e.Message }
func (e *Error) Unwrap() error { return e.Err }

// AliasedTerm is a model term that is a linear combination of others.
type AliasedTerm struct {
	Term   string   `json:"term"`
	With   []string `json:"with"`
	Reason string   `json:"reason"`
}

func fail(cause error, column, message string, rows ...int) *Error {
	return &Error{Message: message, Column: column, Rows: rows, Err: cause}
}
