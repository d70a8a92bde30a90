package gui

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
)

// previewRows is how many data rows the preview shows.
const previewRows = 12

// rowsScreen is step 2: which sheet, which header row, and a look at what
// was read.
type rowsScreen struct {
	u         *UI
	sheet     *widget.Select
	header    *widget.Entry
	apply     *button
	region    *widget.Select
	regions   map[string]string // option shown → table name ("" for the whole sheet)
	detected  *widget.Label
	formulas  *widget.Label
	preview   *widget.Table
	notes     *widget.Label
	summaries []string
}

func newRowsScreen(u *UI) *rowsScreen {
	s := &rowsScreen{u: u}
	s.sheet = widget.NewSelect(nil, func(name string) {
		if u.table != nil && name != u.table.Sheet {
			s.reread(name, 0, "")
		}
	})
	s.region = widget.NewSelect(nil, func(opt string) {
		table, ok := s.regions[opt]
		if ok && u.table != nil && table != u.table.Region {
			s.reread(u.table.Sheet, 0, table)
		}
	})
	s.header = widget.NewEntry()
	s.header.SetPlaceHolder("row number")
	s.header.Validator = func(t string) error {
		if n, err := strconv.Atoi(strings.TrimSpace(t)); err != nil || n < 1 {
			return fmt.Errorf("a row number, 1 or more")
		}
		return nil
	}
	s.apply = newButton("Use this row", nil, func() {
		n, err := strconv.Atoi(strings.TrimSpace(s.header.Text))
		if err != nil || n < 1 {
			u.showMessage("Header row", "Type the number of the row that holds the column names, as the spreadsheet shows it (1 or more).")
			return
		}
		s.reread(u.table.Sheet, n, "")
	})
	s.header.OnSubmitted = func(string) { s.apply.OnTapped() }
	s.detected = widget.NewLabel("")
	s.detected.Wrapping = fyne.TextWrapWord
	s.formulas = widget.NewLabel("")
	s.formulas.Wrapping = fyne.TextWrapWord
	s.notes = widget.NewLabel("")
	s.notes.Wrapping = fyne.TextWrapWord
	s.preview = widget.NewTable(s.size, func() fyne.CanvasObject {
		l := widget.NewLabel("")
		l.Truncation = fyne.TextTruncateEllipsis
		return l
	}, s.cell)
	return s
}

// reset fills the widgets from a newly opened table.
func (s *rowsScreen) reset() {
	u := s.u
	var names []string
	for _, sh := range u.sheets {
		// Slopewise's own results are not data (the current sheet stays,
		// should someone open one on purpose).
		if sh.Worksheet && (u.sheetSizes[sh.Name] != ownResultsSize || sh.Name == u.table.Sheet) {
			names = append(names, sh.Name)
		}
	}
	s.sheet.Options = names
	s.sheet.SetSelected(u.table.Sheet)
	if len(names) <= 1 {
		s.sheet.Disable()
	} else {
		s.sheet.Enable()
	}
	s.refreshTable()
}

func (s *rowsScreen) refreshTable() {
	t := s.u.table
	s.header.SetText(strconv.Itoa(max(t.HeaderRow, 1)))
	how := "found by Slopewise"
	if !t.HeaderDetected {
		how = "as you set it"
	}
	detected := fmt.Sprintf("Column names are read from row %d (%s). %s of data below it.", t.HeaderRow, how, count(t.Len(), "row"))
	if t.Region != "" {
		detected = fmt.Sprintf("The data are the table %q: column names from its row %d, %s of data below it.", t.Region, t.HeaderRow, count(t.Len(), "row"))
		for _, d := range t.Tables {
			if d.Name == t.Region && d.TotalsRows > 0 {
				detected = fmt.Sprintf("The data are the table %q: column names from its row %d, %s of data below it; its totals row (row %d) is left out.", t.Region, t.HeaderRow, count(t.Len(), "row"), d.LastRow)
			}
		}
	}
	s.detected.SetText(detected)
	s.refreshRegions()
	s.formulas.SetText(formulaSummary(t))
	if s.formulas.Text == "" {
		s.formulas.Hide()
	} else {
		s.formulas.Show()
	}
	s.summaries = make([]string, len(t.Columns))
	for i, c := range t.Columns {
		s.summaries[i] = columnSummary(c)
	}
	var notes []string
	for _, n := range t.Notes {
		notes = append(notes, "• "+n.String())
	}
	const shown = 6
	if len(notes) > shown {
		notes = append(notes[:shown], fmt.Sprintf("• and %d more", len(notes)-shown))
	}
	s.notes.SetText(strings.Join(notes, "\n"))
	// Each column as wide as its name (bold) and its summary line need,
	// within 110 to 300 pixels: the summary ("numbers · 2 missing") is
	// not cut.
	pad := 2*theme.InnerPadding() + 4
	for i, c := range t.Columns {
		w := fyne.MeasureText(c.Name, theme.TextSize(), fyne.TextStyle{Bold: true}).Width
		if i < len(s.summaries) {
			w = max(w, fyne.MeasureText(s.summaries[i], theme.TextSize(), fyne.TextStyle{}).Width)
		}
		s.preview.SetColumnWidth(i, max(110, min(300, w+pad)))
	}
	s.preview.Refresh()
}

// refreshRegions offers the whole sheet and each of its tables as the
// data region.
func (s *rowsScreen) refreshRegions() {
	t := s.u.table
	s.regions = map[string]string{}
	if len(t.Tables) == 0 {
		s.region.Options = []string{"The whole sheet (it holds no tables)"}
		s.region.SetSelected(s.region.Options[0])
		s.region.Disable()
		return
	}
	opts := []string{"The whole sheet"}
	s.regions[opts[0]] = ""
	selected := opts[0]
	for _, d := range t.Tables {
		o := fmt.Sprintf("Table %q (%s)", d.Name, d.Ref)
		opts = append(opts, o)
		s.regions[o] = d.Name
		if d.Name == t.Region {
			selected = o
		}
	}
	s.region.Options = opts
	s.region.SetSelected(selected)
	if len(opts) < 2 {
		s.region.Disable()
	} else {
		s.region.Enable()
	}
}

// formulaSummary says, for each column holding formulas, where its values
// came from: read from the file, calculated by Slopewise, or missing (and
// then that the column cannot be used until the workbook is saved in a
// spreadsheet program).
func formulaSummary(t *workbook.Table) string {
	var lines []string
	for _, c := range t.Columns {
		f := c.Formulas
		if f.Total() == 0 {
			continue
		}
		var parts []string
		if f.Saved > 0 {
			parts = append(parts, fmt.Sprintf("%d results read from the file", f.Saved))
		}
		if f.Computed > 0 {
			parts = append(parts, fmt.Sprintf("%d calculated by Slopewise (the file held no usable result)", f.Computed))
		}
		line := fmt.Sprintf("• %q: %d formula cells; %s", c.Name, f.Total(), strings.Join(parts, ", "))
		if f.Missing > 0 {
			if len(parts) > 0 {
				line += ", "
			}
			line += fmt.Sprintf("%d without a usable result, which Slopewise cannot calculate", f.Missing)
			if f.Why != "" {
				line += " (" + f.Why + ")"
			}
			line += ". This column cannot be used until the workbook is opened and saved in a spreadsheet program"
		}
		lines = append(lines, line+".")
	}
	if len(lines) == 0 {
		return ""
	}
	return "Formulas:\n" + strings.Join(lines, "\n")
}

// columnSummary is the kind and missing count of a column, in words.
func columnSummary(c *workbook.Column) string {
	kind := map[workbook.Kind]string{
		workbook.Empty: "empty", workbook.Number: "numbers", workbook.YesNo: "two values",
		workbook.Category: fmt.Sprintf("%d groups", len(c.Levels)), workbook.Text: "text", workbook.Date: "dates",
	}[c.Kind]
	if m := c.MissingTotal(); m > 0 {
		kind = fmt.Sprintf("%s · %d missing", kind, m)
	}
	switch f := c.Formulas; {
	case f.Missing > 0:
		kind += " · formulas without results"
	case f.Computed > 0:
		kind += " · formulas calculated"
	case f.Saved > 0:
		kind += " · formulas"
	}
	return kind
}

// reread reads another sheet, or the same one with a header row given.
func (s *rowsScreen) reread(sheet string, headerRow int, table string) {
	u := s.u
	u.setStatus("Reading…")
	var t *workbook.Table
	u.background(func() error {
		var err error
		run := u.run
		run.Sheet, run.HeaderRow, run.Table = sheet, headerRow, table
		t, err = pipeline.Read(context.Background(), run, nil)
		return err
	}, func(err error) {
		if err != nil {
			u.setStatus("")
			u.showError(fmt.Sprintf("The sheet %q could not be read that way.", sheet), err)
			s.sheet.SetSelected(u.table.Sheet)
			s.refreshRegions()
			return
		}
		u.table = t
		u.run.Sheet, u.run.HeaderRow, u.run.Table = t.Sheet, t.HeaderRow, table
		u.forget(stepRows)
		u.rolesScreen.reset()
		s.refreshTable()
		u.setStatus(fmt.Sprintf("Sheet %q: %s, %s", t.Sheet, count(t.Len(), "row"), count(len(t.Columns), "column")))
		u.updateBar()
	})
}

func (s *rowsScreen) size() (int, int) {
	t := s.u.table
	if t == nil {
		return 0, 0
	}
	return 2 + min(previewRows, t.Len()), len(t.Columns)
}

// cell fills the preview: the column name, its kind and missing count,
// then the first rows as read.
func (s *rowsScreen) cell(id widget.TableCellID, o fyne.CanvasObject) {
	l := o.(*widget.Label)
	t := s.u.table
	c := t.Columns[id.Col]
	l.TextStyle = fyne.TextStyle{}
	l.Importance = widget.MediumImportance
	switch id.Row {
	case 0:
		l.TextStyle.Bold = true
		l.SetText(c.Name)
	case 1:
		l.Importance = widget.LowImportance
		l.SetText(s.summaries[id.Col])
	default:
		l.SetText(cellText(c, id.Row-2))
	}
}

// cellText shows a cell as read: the number, the text, or why it is
// missing.
func cellText(c *workbook.Column, i int) string {
	if r := c.Missing[i]; r != workbook.Present {
		if r == workbook.Blank {
			return ""
		}
		return "(" + r.String() + ")"
	}
	switch {
	case c.Kind == workbook.Date:
		if tm, ok := c.Time(i); ok {
			return tm.Format("2006-01-02")
		}
	case c.Texts != nil:
		return c.Texts[i]
	case c.Numbers != nil && !math.IsNaN(c.Numbers[i]):
		return strconv.FormatFloat(c.Numbers[i], 'g', 10, 64)
	}
	return ""
}

// sheetsRead says what each sheet holds (the rows of data of those read
// on opening, the rows of cells of the others), and why the one shown was
// chosen when it is not the first.
func (s *rowsScreen) sheetsRead() fyne.CanvasObject {
	u := s.u
	var parts []string
	skipped := false
	for _, sh := range u.sheets {
		size, ok := u.sheetSizes[sh.Name]
		switch {
		case sh.Name == "" || !sh.Worksheet:
			continue
		case ok:
		case sh.Rows == 0:
			size = "empty"
		case sh.RowsMore:
			size = "more than " + count(sh.Rows, "row") + " of cells"
		default:
			size = count(sh.Rows, "row") + " of cells"
		}
		parts = append(parts, fmt.Sprintf("%s: %s", sh.Name, size))
		if u.table != nil && sh.Name != u.table.Sheet && len(parts) == 1 {
			skipped = true
		}
	}
	if len(parts) < 2 {
		return container.NewVBox()
	}
	text := strings.Join(parts, " · ")
	if skipped {
		text += fmt.Sprintf(". %q is shown: the first sheet that holds a table of data.", u.table.Sheet)
	}
	l := widget.NewLabel(text)
	l.Wrapping = fyne.TextWrapWord
	l.Importance = widget.LowImportance
	return l
}

func (s *rowsScreen) content() fyne.CanvasObject {
	intro := widget.NewLabel("Check that the columns were read as you expect. The second line under each name says what the column holds and how many cells are missing.")
	intro.Wrapping = fyne.TextWrapWord
	top := container.NewVBox(
		heading("Check the rows"),
		intro,
		widget.NewForm(
			widget.NewFormItem("Sheet", container.NewVBox(s.sheet, s.sheetsRead())),
			widget.NewFormItem("Row with the column names", container.NewBorder(nil, nil, nil, s.apply, s.header)),
			widget.NewFormItem("Data region", s.region),
		),
		s.detected,
		s.formulas,
	)
	return container.NewBorder(top, s.notes, nil, nil, s.preview)
}
