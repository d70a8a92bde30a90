// Package pipeline runs the pipe of ARCHITECTURE.md for both the window and
// the headless command: read a sheet, adapt its columns to the engine, fit,
// build the results sheet, write it back. It holds no statistics and no
// file format of its own; it only connects the stages.
package pipeline

import (
	"context"
	"fmt"
	"math"
	"strconv"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// Analysis is one finished run: the table read, the fit and the sheet.
type Analysis struct {
	Run    report.Run
	Table  *workbook.Table
	Result *estimate.Result
	Sheet  *report.Sheet
}

// Read reads the run's sheet.
func Read(ctx context.Context, run report.Run, progress func(rows int)) (*workbook.Table, error) {
	return workbook.Read(ctx, run.File, workbook.Options{Sheet: run.Sheet, HeaderRow: run.HeaderRow, Table: run.Table, Progress: progress})
}

// Analyze reads the data, fits the model and builds the results sheet.
// The run's sheet and header row are filled in from what was read, so the
// stored run repeats exactly.
func Analyze(ctx context.Context, run report.Run, progress func(rows int)) (*Analysis, error) {
	t, err := Read(ctx, run, progress)
	if err != nil {
		return nil, err
	}
	return AnalyzeTable(ctx, run, t)
}

// AnalyzeTable fits and builds from a table already read. The run's
// Groupings are found from the table unless the caller has them.
func AnalyzeTable(ctx context.Context, run report.Run, t *workbook.Table) (*Analysis, error) {
	run.Sheet, run.HeaderRow, run.Table = t.Sheet, t.HeaderRow, t.Region
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if err := formulaError(t, run.Spec); err != nil {
		return nil, err
	}
	res, err := estimate.FitContext(ctx, EngineData(t), run.Spec, nil)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", where(t), err)
	}
	if run.Groupings == nil {
		run.Groupings = Groupings(t, run.Spec)
	}
	sheet, err := report.Build(run, res)
	if err != nil {
		return nil, err
	}
	return &Analysis{Run: run, Table: t, Result: res, Sheet: sheet}, nil
}

// Save writes the results sheet into the workbook (or beside a text file).
func (a *Analysis) Save(opts workbook.WriteOptions) (*workbook.Written, error) {
	if opts.KeepColumns == nil {
		opts.KeepColumns = specColumns(a.Run.Spec)
	}
	if opts.Expect == nil && a.Table != nil && a.Table.Path == a.Run.File {
		opts.Expect = a.Table.Source
	}
	return workbook.WriteResults(a.Run.File, a.Sheet, opts)
}

// ScreenAnalysis is one finished screen of several moderators: the table
// read, one fit a moderator with the adjusted tests, and the sheet.
type ScreenAnalysis struct {
	Run    report.ScreenRun
	Table  *workbook.Table
	Screen *estimate.Screen
	Sheet  *report.Sheet
}

// Screen reads the data, fits one model a candidate moderator, adjusts
// their tests for the number tried and builds the results sheet.
// readProgress is called as rows are read; fitProgress after each
// moderator, with how many are done of how many in all. Either may be nil.
func Screen(ctx context.Context, sr report.ScreenRun, readProgress func(rows int), fitProgress func(done, total int)) (*ScreenAnalysis, error) {
	t, err := Read(ctx, sr.Base, readProgress)
	if err != nil {
		return nil, err
	}
	return ScreenTable(ctx, sr, t, fitProgress)
}

// ScreenTable is Screen on a table already read.
func ScreenTable(ctx context.Context, sr report.ScreenRun, t *workbook.Table, progress func(done, total int)) (*ScreenAnalysis, error) {
	sr.Base.Sheet, sr.Base.HeaderRow, sr.Base.Table = t.Sheet, t.HeaderRow, t.Region
	if err := formulaError(t, screenSpec(sr)); err != nil {
		return nil, err
	}
	sc, err := estimate.FitScreen(ctx, EngineData(t), sr.Base.Spec, sr.Moderators(), progress)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", where(t), err)
	}
	if sr.Groupings == nil {
		sr.Groupings = ScreenGroupings(t, sr)
	}
	sheet, err := report.BuildScreen(sr, sc)
	if err != nil {
		return nil, err
	}
	return &ScreenAnalysis{Run: sr, Table: t, Screen: sc, Sheet: sheet}, nil
}

// ScreenGroupings are the Groupings of each moderator of a screen, in
// order.
func ScreenGroupings(t *workbook.Table, sr report.ScreenRun) [][]report.Grouping {
	out := make([][]report.Grouping, len(sr.Candidates))
	for i := range sr.Candidates {
		out[i] = Groupings(t, sr.SpecFor(i))
	}
	return out
}

// Save writes the screen's results sheet into the workbook (or beside a
// text file).
func (a *ScreenAnalysis) Save(opts workbook.WriteOptions) (*workbook.Written, error) {
	if opts.KeepColumns == nil {
		opts.KeepColumns = specColumns(screenSpec(a.Run))
	}
	if opts.Expect == nil && a.Table != nil && a.Table.Path == a.Run.Base.File {
		opts.Expect = a.Table.Source
	}
	return workbook.WriteResults(a.Run.Base.File, a.Sheet, opts)
}

// formulaError refuses a run that uses a column with formula cells whose
// values are unknown (no usable saved result, and Slopewise could not
// calculate them): leaving those rows out would change the sample
// without the evaluator knowing why. Columns the run does not use never
// stop it.
func formulaError(t *workbook.Table, s estimate.Spec) error {
	for _, name := range usedColumns(t, s) {
		if err := t.FormulaError(t.Column(name)); err != nil {
			return err
		}
	}
	return nil
}

// screenSpec is a screen's base spec with every candidate moderator among
// its columns (as controls), for what concerns the columns it uses.
func screenSpec(sr report.ScreenRun) estimate.Spec {
	spec := sr.Base.Spec
	spec.Controls = append([]string(nil), spec.Controls...)
	for _, m := range sr.Moderators() {
		spec.Controls = append(spec.Controls, m.Column)
	}
	return spec
}

// specColumns lists the columns a spec uses, each once, in the order of
// the model's roles.
func specColumns(s estimate.Spec) []string {
	var out []string
	seen := map[string]bool{}
	for _, name := range append([]string{s.Outcome, s.Treatment.Column, s.Period, s.Moderator.Column, s.Cluster, s.Unit, s.Weights}, s.Controls...) {
		if name != "" && !seen[name] {
			seen[name] = true
			out = append(out, name)
		}
	}
	return out
}

func where(t *workbook.Table) string {
	if t.Sheet != "" {
		return fmt.Sprintf("%s, sheet %q", t.Path, t.Sheet)
	}
	return t.Path
}

// EngineData adapts a table to the engine's columns: numbers (and dates,
// as serial numbers) stay numbers; yes/no columns whose two values are
// numbers become numbers; everything else is text. Row labels are the
// sheet's row numbers, so messages point at rows a person can find, and
// each missing cell carries the reader's reason.
func EngineData(t *workbook.Table) *estimate.Data {
	d := &estimate.Data{RowLabels: t.SourceRows}
	for _, c := range t.Columns {
		d.Columns = append(d.Columns, engineColumn(c, t.Len()))
	}
	return d
}

// engineColumn adapts one column of n rows (EngineData).
func engineColumn(c *workbook.Column, n int) estimate.Column {
	col := estimate.Column{Name: c.Name, Why: whys(c)}
	switch {
	case c.Kind == workbook.Number || c.Kind == workbook.Date:
		col.Num = c.Numbers
	case c.Kind == workbook.YesNo && numericLevels(c.Levels):
		col.Num = make([]float64, len(c.Texts))
		for i, s := range c.Texts {
			col.Num[i] = math.NaN()
			if s != "" {
				col.Num[i], _ = strconv.ParseFloat(s, 64)
			}
		}
	case c.Texts != nil:
		col.Text = c.Texts
	default:
		// An empty column: every cell missing.
		col.Num = make([]float64, n)
		for i := range col.Num {
			col.Num[i] = math.NaN()
		}
	}
	return col
}

func numericLevels(levels []string) bool {
	for _, l := range levels {
		if _, err := strconv.ParseFloat(l, 64); err != nil {
			return false
		}
	}
	return len(levels) > 0
}

// whys says, per row, why a missing cell is missing ("" when blank or
// present), as the noun phrase a dropped-row reason starts with.
func whys(c *workbook.Column) []string {
	var out []string
	for i, r := range c.Missing {
		var why string
		switch r {
		case workbook.ErrorValue:
			why = "a spreadsheet error value"
		case workbook.Marker:
			why = "a missing-value marker"
		case workbook.TextInNumbers:
			why = "text"
		case workbook.NoCachedValue:
			why = "a formula with no saved result (open and save the workbook in a spreadsheet program)"
		case workbook.BadDate:
			why = "a value that is not a date"
		default:
			continue
		}
		if out == nil {
			out = make([]string, len(c.Missing))
		}
		out[i] = why
	}
	return out
}

// ModeratorKind guesses how a moderator column enters the model: text →
// categorical, two values → binary, numbers → continuous.
func ModeratorKind(c *workbook.Column) estimate.ModeratorKind {
	switch c.Kind {
	case workbook.YesNo:
		return estimate.ModeratorBinary
	case workbook.Number, workbook.Date:
		if len(c.Distinct) == 2 {
			return estimate.ModeratorBinary
		}
		return estimate.ModeratorContinuous
	}
	return estimate.ModeratorCategorical
}

// TreatmentKind guesses how a treatment column is read: a named treated
// label → labels; 0/1 → binary; other numbers → continuous; text → labels.
func TreatmentKind(c *workbook.Column, treated string) estimate.TreatmentKind {
	if treated != "" {
		return estimate.TreatmentLabels
	}
	switch c.Kind {
	case workbook.Number:
		for _, v := range c.Distinct {
			if v != 0 && v != 1 {
				return estimate.TreatmentContinuous
			}
		}
		return estimate.TreatmentBinary
	case workbook.YesNo:
		if numericLevels(c.Levels) && c.Levels[0] == "0" && c.Levels[1] == "1" {
			return estimate.TreatmentBinary
		}
	}
	return estimate.TreatmentLabels
}

// ZeroOne reports whether a column holds only 0 and 1, as the engine
// reads it (a period or treatment column that needs no label named).
func ZeroOne(c *workbook.Column) bool {
	switch c.Kind {
	case workbook.Number:
		for _, v := range c.Distinct {
			if v != 0 && v != 1 {
				return false
			}
		}
		return len(c.Distinct) > 0
	case workbook.YesNo:
		return numericLevels(c.Levels) && c.Levels[0] == "0" && c.Levels[1] == "1"
	}
	return false
}

// ValuesOf lists, quoted, up to n of a column's values for a message: its
// levels, or a number column's first distinct values.
func ValuesOf(c *workbook.Column, n int) []string {
	var out []string
	for _, l := range c.Levels {
		out = append(out, strconv.Quote(estimate.ShortLabel(l)))
	}
	for _, v := range c.Distinct {
		out = append(out, strconv.Quote(strconv.FormatFloat(v, 'f', -1, 64)))
	}
	if len(out) > n {
		out = append(out[:n], "…")
	}
	return out
}
