package gui

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
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
	apply     *widget.Button
	detected  *widget.Label
	preview   *widget.Table
	notes     *widget.Label
	summaries []string
}

func newRowsScreen(u *UI) *rowsScreen {
	s := &rowsScreen{u: u}
	s.sheet = widget.NewSelect(nil, func(name string) {
		if u.table != nil && name != u.table.Sheet {
			s.reread(name, 0)
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
	s.apply = widget.NewButton("Use this row", func() {
		n, err := strconv.Atoi(strings.TrimSpace(s.header.Text))
		if err != nil || n < 1 {
			u.showMessage("Header row", "Type the number of the row that holds the column names, as the spreadsheet shows it (1 or more).")
			return
		}
		s.reread(u.table.Sheet, n)
	})
	s.header.OnSubmitted = func(string) { s.apply.OnTapped() }
	s.detected = widget.NewLabel("")
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
		if sh.Worksheet {
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
	s.detected.SetText(fmt.Sprintf("Column names are read from row %d (%s). %d rows of data below it.", t.HeaderRow, how, t.Len()))
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
	for i, c := range t.Columns {
		s.preview.SetColumnWidth(i, float32(max(110, min(220, 9*len(c.Name)+30))))
	}
	s.preview.Refresh()
}

// columnSummary is the kind and missing count of a column, in words.
func columnSummary(c *workbook.Column) string {
	kind := map[workbook.Kind]string{
		workbook.Empty: "empty", workbook.Number: "numbers", workbook.YesNo: "two values",
		workbook.Category: fmt.Sprintf("%d groups", len(c.Levels)), workbook.Text: "text", workbook.Date: "dates",
	}[c.Kind]
	if m := c.MissingTotal(); m > 0 {
		return fmt.Sprintf("%s · %d missing", kind, m)
	}
	return kind
}

// reread reads another sheet, or the same one with a header row given.
func (s *rowsScreen) reread(sheet string, headerRow int) {
	u := s.u
	u.setStatus("Reading…")
	var t *workbook.Table
	u.background(func() error {
		var err error
		run := u.run
		run.Sheet, run.HeaderRow = sheet, headerRow
		t, err = pipeline.Read(context.Background(), run, nil)
		return err
	}, func(err error) {
		if err != nil {
			u.setStatus("")
			u.showError(fmt.Sprintf("The sheet %q could not be read that way.", sheet), err)
			s.sheet.SetSelected(u.table.Sheet)
			return
		}
		u.table = t
		u.run.Sheet, u.run.HeaderRow = t.Sheet, t.HeaderRow
		u.forget(stepRows)
		u.rolesScreen.reset()
		s.refreshTable()
		u.setStatus(fmt.Sprintf("Sheet %q: %d rows, %d columns", t.Sheet, t.Len(), len(t.Columns)))
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

func (s *rowsScreen) content() fyne.CanvasObject {
	intro := widget.NewLabel("Check that the columns were read as you expect. The second line under each name says what the column holds and how many cells are missing.")
	intro.Wrapping = fyne.TextWrapWord
	top := container.NewVBox(
		heading("Check the rows"),
		intro,
		widget.NewForm(
			widget.NewFormItem("Sheet", s.sheet),
			widget.NewFormItem("Row with the column names", container.NewBorder(nil, nil, nil, s.apply, s.header)),
		),
		s.detected,
	)
	return container.NewBorder(top, s.notes, nil, nil, s.preview)
}
