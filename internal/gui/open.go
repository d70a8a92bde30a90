package gui

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"slopewise/assets"
	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
	"slopewise/internal/report"
)

// openScreen is step 1: choose the workbook.
type openScreen struct {
	u        *UI
	openBtn  *button
	demoBtn  *button
	recent   *fyne.Container
	fileInfo *widget.Label
}

func newOpenScreen(u *UI) *openScreen {
	s := &openScreen{u: u}
	s.openBtn = newButton("Open a workbook…", theme.FolderOpenIcon(), u.chooseOpen)
	s.openBtn.Importance = widget.HighImportance
	s.demoBtn = newButton("Try the demo", theme.MediaPlayIcon(), u.openDemo)
	s.recent = container.NewVBox()
	s.fileInfo = widget.NewLabel("")
	s.fileInfo.Wrapping = fyne.TextWrapWord
	return s
}

func (s *openScreen) content() fyne.CanvasObject {
	s.recent.Objects = nil
	for _, p := range s.u.recentFiles() {
		p := p
		b := newButton(filepath.Base(p)+"  —  "+filepath.Dir(p), theme.DocumentIcon(), func() { s.u.open(p) })
		b.Alignment = widget.ButtonAlignLeading
		s.recent.Add(b)
	}
	if len(s.recent.Objects) == 0 {
		none := widget.NewLabel("Workbooks you open will be listed here.")
		none.Importance = widget.LowImportance
		s.recent.Add(none)
	}
	s.fileInfo.SetText(s.describe())
	intro := widget.NewLabel("Which workbook holds your data? Slopewise reads Excel workbooks (.xlsx, .xlsm) and text tables (.csv, .tsv, .txt). It only adds a results sheet, and keeps a backup of the file as it was.")
	intro.Wrapping = fyne.TextWrapWord
	drop := widget.NewLabel("You can also drop a file onto this window.")
	drop.Importance = widget.LowImportance
	return container.NewVScroll(container.NewVBox(
		heading("Choose a workbook"),
		intro,
		container.NewHBox(s.openBtn, s.demoBtn),
		drop,
		s.fileInfo,
		widget.NewSeparator(),
		subheading("Recently opened"),
		s.recent,
	))
}

func (s *openScreen) describe() string {
	u := s.u
	if u.table == nil {
		return ""
	}
	return fmt.Sprintf("Open: %s — %s of data, %s.", u.path, count(u.table.Len(), "row"), count(len(u.table.Columns), "column"))
}

// open reads a workbook's sheet list and its first sheet, off the UI
// thread, then moves to the rows step.
func (u *UI) open(path string) {
	u.setStatus("Reading " + filepath.Base(path) + "…")
	var sheets []workbook.SheetInfo
	var table *workbook.Table
	var sizes map[string]string
	u.background(func() error {
		var err error
		if sheets, err = workbook.Sheets(path); err != nil {
			return err
		}
		if table, sizes, err = firstTable(path, sheets, u.readProgress(path)); err != nil {
			return err
		}
		// The rows of the sheets not read, for the Rows step's list.
		if counted, err := workbook.SheetsCounted(path, func(name string) bool { _, read := sizes[name]; return !read }); err == nil {
			sheets = counted
		}
		return nil
	}, func(err error) {
		if err != nil {
			u.setStatus("")
			u.showError("This file could not be opened.", err)
			return
		}
		u.path, u.sheets, u.table, u.sheetSizes = path, sheets, table, sizes
		u.run = report.Run{File: path, Sheet: table.Sheet, HeaderRow: table.HeaderRow, Version: u.opts.Version}
		u.remember(path)
		u.forget(stepWorkbook)
		u.rowsScreen.reset()
		u.rolesScreen.reset()
		u.setStatus(fmt.Sprintf("%s: %s, %s", filepath.Base(path), count(table.Len(), "row"), count(len(table.Columns), "column")))
		u.reach(stepRows)
		u.show(stepRows)
	})
}

// readProgress reports rows read in the status line, at most a few times
// a second, so that a large file visibly moves and the window stays free.
func (u *UI) readProgress(path string) func(rows int) {
	var last time.Time
	name := filepath.Base(path)
	return func(rows int) {
		if now := time.Now(); now.Sub(last) > 200*time.Millisecond {
			last = now
			fyne.Do(func() { u.setStatus(fmt.Sprintf("Reading %s… %s so far", name, count(rows, "row"))) })
		}
	}
}

// A real table has at least this many rows and columns: a cover sheet of
// a title and two lines of notes is passed over.
const (
	tableRows    = 5
	tableColumns = 2
)

// firstTable reads the first visible worksheet that holds a real table
// and is not a results sheet of Slopewise's own (its run-spec row),
// else the first visible worksheet; sizes says what each sheet read holds,
// for the Rows step's list.
func firstTable(path string, sheets []workbook.SheetInfo, progress func(int)) (*workbook.Table, map[string]string, error) {
	sizes := map[string]string{}
	var first *workbook.Table
	var firstErr error
	tried := 0
	for _, sh := range sheets {
		if !sh.Worksheet || sh.Hidden {
			continue
		}
		if tried++; tried > 8 {
			break // a workbook of many small sheets: the first is shown
		}
		t, err := pipeline.Read(context.Background(), report.Run{File: path, Sheet: sh.Name}, progress)
		if err != nil {
			if tried == 1 {
				firstErr = err
			}
			continue
		}
		if first == nil {
			first = t
		}
		if ownResults(t) {
			sizes[sh.Name] = ownResultsSize
			continue
		}
		sizes[sh.Name] = count(t.Len(), "row") + ", " + count(len(t.Columns), "column")
		if t.Len() >= tableRows && len(t.Columns) >= tableColumns {
			markOwnResults(path, sheets, sizes)
			return t, sizes, nil
		}
	}
	if first == nil {
		if firstErr == nil {
			// A text file, or no visible worksheet was read.
			t, err := pipeline.Read(context.Background(), report.Run{File: path, Sheet: firstWorksheet(sheets)}, progress)
			return t, sizes, err
		}
		return nil, sizes, firstErr
	}
	return first, sizes, nil
}

// markOwnResults reads the sheets named as Slopewise names its results
// ("Results", "Moderators", with a number after a second run) and marks
// those that hold its run-spec row, so that the Rows step does not offer
// them as data. They are small; other sheets are not read.
func markOwnResults(path string, sheets []workbook.SheetInfo, sizes map[string]string) {
	for _, sh := range sheets {
		if _, seen := sizes[sh.Name]; seen || !sh.Worksheet || !(strings.HasPrefix(sh.Name, report.ResultsSheet) || strings.HasPrefix(sh.Name, report.ModeratorsSheet)) {
			continue
		}
		if t, err := pipeline.Read(context.Background(), report.Run{File: path, Sheet: sh.Name}, nil); err == nil && ownResults(t) {
			sizes[sh.Name] = ownResultsSize
		}
	}
}

// ownResultsSize marks a results sheet of Slopewise's in the sheet sizes.
const ownResultsSize = "results of Slopewise"

// ownResults reports a results sheet that Slopewise wrote: a cell holds
// the marker of its run-spec row.
func ownResults(t *workbook.Table) bool {
	for _, c := range t.Columns {
		for _, v := range c.Texts {
			if v == workbook.SpecMarker {
				return true
			}
		}
	}
	return false
}

// firstWorksheet is the first visible worksheet's name ("" for text files).
func firstWorksheet(sheets []workbook.SheetInfo) string {
	for _, s := range sheets {
		if s.Worksheet && !s.Hidden {
			return s.Name
		}
	}
	return ""
}

// openDemo writes the demonstration workbook to a folder of its own and
// opens it.
func (u *UI) openDemo() {
	dir := u.opts.DemoDir
	if dir == "" {
		base, err := os.UserHomeDir()
		if err != nil {
			base = os.TempDir()
		}
		dir = filepath.Join(base, "Slopewise demo")
	}
	path := filepath.Join(dir, "slopewise-demo.xlsx")
	if _, err := os.Stat(path); err != nil {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			u.showError("The demo workbook could not be written.", err)
			return
		}
		if err := workbook.WriteWhole(path, assets.DemoWorkbook, 0o644); err != nil {
			u.showError("The demo workbook could not be written.", err)
			return
		}
	}
	u.open(path)
}
