package table

import "fmt"

// FormulaProblem says, in a sentence, what is wrong with a column's
// formula cells that have no usable value and what to do.
func (col *Column) FormulaProblem(t *Table, advice bool) string {
	f := col.Formulas
	first := firstMissing(col, NoCachedValue)
	what := "have no saved result"
	if f.Stale == f.Missing {
		what = "hold results the workbook marks as out of date"
	} else if f.Stale > 0 {
		what = "have no saved result, or one the workbook marks as out of date"
	}
	why := ""
	if f.Why != "" {
		why = " (" + f.Why + ")"
	}
	msg := fmt.Sprintf("%d formula cell(s), the first at %s, %s, and Slopewise cannot calculate them%s", f.Missing, t.CellRef(col, first), what, why)
	if advice {
		msg += "; open the workbook in a spreadsheet program and save it, which calculates and saves every formula, then open it again here"
	}
	return msg
}

// FormulaError is the error for a column the model uses whose formula
// cells have no usable value; nil when it has none.
func (t *Table) FormulaError(col *Column) error {
	if col == nil || col.Formulas.Missing == 0 {
		return nil
	}
	return &Error{Path: t.Path, Sheet: t.Sheet, Column: col.Name, Cause: ErrFormulaNoResult, Detail: col.FormulaProblem(t, false)}
}
