// Package gui is the Slopewise window: a guided path from a workbook to an
// annotated workbook in five steps — choose the workbook, check its rows,
// say which column plays which role, choose how to judge the results, and
// read and save the findings. It holds no statistics and no file format:
// it builds a run, hands it to the pipeline off the UI thread, and shows
// the very sheet that internal/report made for the workbook.
package gui

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
	"slopewise/internal/report"
)

// Options configure the window. The choosers can be replaced in tests.
type Options struct {
	Version string
	// ChooseOpen asks for a workbook to open and calls done with its path
	// (not called when the person cancels). Nil: the file dialog.
	ChooseOpen func(done func(path string))
	// ChooseSave asks where to save a copy. Nil: the file dialog.
	ChooseSave func(suggested string, done func(path string))
	// DemoDir is where "Try the demo" writes the demo workbook. Empty: a
	// folder under the user's documents or the temporary folder.
	DemoDir string
	// Now stamps runs and backups; time.Now when nil.
	Now func() time.Time
}

// Preference keys.
const (
	prefWidth   = "window.width"
	prefHeight  = "window.height"
	prefFolder  = "last.folder"
	prefRecent  = "recent.files"
	recentLimit = 6
)

// step is one stage of the path.
type step int

const (
	stepWorkbook step = iota
	stepRows
	stepRoles
	stepOptions
	stepFindings
	stepCount
)

var stepTitles = [stepCount]string{"Workbook", "Rows", "Roles", "Judging", "Findings"}

// UI is the window's state and widgets. Widgets are fields so that tests
// can drive them.
type UI struct {
	app  fyne.App
	win  fyne.Window
	opts Options

	// What is open and what has been chosen.
	path   string
	sheets []workbook.SheetInfo
	// sheetSizes says what each sheet read on opening holds.
	sheetSizes map[string]string
	table      *workbook.Table
	run        report.Run
	analysis   *pipeline.Analysis       // one moderator
	screen     *pipeline.ScreenAnalysis // several moderators
	written    *workbook.Written
	cancel     context.CancelFunc

	current  step
	reached  step
	stepBtns [stepCount]*button
	body     *fyne.Container
	back     *button
	next     *button
	status   *widget.Label
	// barMiddle holds the status line, or during a run the progress bar
	// and Cancel: in the bottom bar, in sight whatever the page's scroll.
	barMiddle *fyne.Container

	openScreen     *openScreen
	rowsScreen     *rowsScreen
	rolesScreen    *rolesScreen
	optionsScreen  *optionsScreen
	findingsScreen *findingsScreen

	// onIdle, when set, is called after each background job finishes
	// (tests wait on it).
	onIdle func()
}

// New builds the window's content and menus.
func New(a fyne.App, w fyne.Window, opts Options) *UI {
	if opts.Now == nil {
		opts.Now = time.Now
	}
	u := &UI{app: a, win: w, opts: opts}
	u.openScreen = newOpenScreen(u)
	u.rowsScreen = newRowsScreen(u)
	u.rolesScreen = newRolesScreen(u)
	u.optionsScreen = newOptionsScreen(u)
	u.findingsScreen = newFindingsScreen(u)

	for i := range u.stepBtns {
		s := step(i)
		u.stepBtns[i] = newButton(stepLabel(s), nil, func() { u.show(s) })
		u.stepBtns[i].Alignment = widget.ButtonAlignLeading
	}
	u.back = newButton("Back", theme.NavigateBackIcon(), func() { u.show(u.current - 1) })
	u.next = newButton("Next", theme.NavigateNextIcon(), u.forward)
	u.next.IconPlacement = widget.ButtonIconTrailingText
	u.next.Importance = widget.HighImportance
	u.status = widget.NewLabel("")
	u.status.Truncation = fyne.TextTruncateEllipsis
	u.body = container.NewStack()

	rail := container.NewVBox(brand())
	for _, b := range u.stepBtns {
		rail.Add(b)
	}
	rail.Add(layout.NewSpacer())
	rail.Add(newButton("About", theme.InfoIcon(), u.showAbout))
	u.barMiddle = container.NewStack(u.status)
	bar := container.NewBorder(nil, nil, u.back, u.next, u.barMiddle)
	w.SetContent(container.NewBorder(nil, container.NewPadded(bar), container.NewPadded(rail), nil, container.NewPadded(u.body)))
	w.SetMainMenu(u.menu())
	u.shortcuts()
	u.watchFocus()
	w.SetOnDropped(func(_ fyne.Position, uris []fyne.URI) {
		for _, uri := range uris {
			if uri.Scheme() == "file" {
				u.open(uri.Path())
				return
			}
		}
	})
	w.SetCloseIntercept(func() {
		size := w.Canvas().Size()
		a.Preferences().SetFloat(prefWidth, float64(size.Width))
		a.Preferences().SetFloat(prefHeight, float64(size.Height))
		if u.cancel != nil {
			u.cancel()
		}
		w.Close()
	})
	u.show(stepWorkbook)
	return u
}

// Size is the window size remembered from the last session, or a default.
func Size(a fyne.App) fyne.Size {
	p := a.Preferences()
	return fyne.NewSize(float32(p.FloatWithFallback(prefWidth, 1100)), float32(p.FloatWithFallback(prefHeight, 760)))
}

func stepLabel(s step) string {
	return string(rune('1'+int(s))) + "  " + stepTitles[s]
}

// brand is the name at the top of the step rail.
func brand() fyne.CanvasObject {
	name := widget.NewLabelWithStyle("Slopewise", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	tag := widget.NewLabel("Does it work for everyone?")
	tag.Importance = widget.LowImportance
	return container.NewVBox(name, tag, widget.NewSeparator())
}

// show moves to a step that has been reached.
func (u *UI) show(s step) {
	if s < 0 || s > u.reached {
		return
	}
	u.current = s
	var content fyne.CanvasObject
	switch s {
	case stepWorkbook:
		content = u.openScreen.content()
	case stepRows:
		content = u.rowsScreen.content()
	case stepRoles:
		content = u.rolesScreen.content()
	case stepOptions:
		content = u.optionsScreen.content()
	case stepFindings:
		content = u.findingsScreen.content()
	}
	u.body.Objects = []fyne.CanvasObject{content}
	u.body.Refresh()
	for i, b := range u.stepBtns {
		switch {
		case step(i) == s:
			b.Importance = widget.HighImportance
		case step(i) <= u.reached:
			b.Importance = widget.MediumImportance
		default:
			b.Importance = widget.LowImportance
		}
		if step(i) <= u.reached {
			b.Enable()
		} else {
			b.Disable()
		}
		b.Refresh()
	}
	u.updateBar()
}

// updateBar sets the Back and Next buttons for the current step.
func (u *UI) updateBar() {
	if u.current == stepWorkbook {
		u.back.Disable()
	} else {
		u.back.Enable()
	}
	u.next.SetText("Next")
	ok := true
	switch u.current {
	case stepWorkbook:
		ok = u.table != nil
	case stepRows:
		ok = u.table != nil
	case stepRoles:
		ok = u.rolesScreen.ready()
	case stepOptions:
		u.next.SetText("Run the analysis")
		ok = u.rolesScreen.ready() && u.cancel == nil && !u.optionsScreen.clusteredWithout()
	case stepFindings:
		ok = false
		u.next.SetText("Next")
	}
	if ok {
		u.next.Enable()
	} else {
		u.next.Disable()
	}
}

// forward is the Next button: move on, or run on the options step.
func (u *UI) forward() {
	if u.current == stepOptions {
		u.startRun()
		return
	}
	u.reach(u.current + 1)
	u.show(u.current + 1)
}

// reach allows moving to steps up to s.
func (u *UI) reach(s step) {
	if s > u.reached {
		u.reached = s
	}
}

// forget moves the reachable limit back when an earlier choice changes,
// so that no step shows results of an older choice.
func (u *UI) forget(after step) {
	if u.reached > after {
		u.reached = after
	}
	if after < stepFindings {
		u.analysis, u.screen, u.written = nil, nil, nil
	}
	for i, b := range u.stepBtns {
		if b == nil { // still being built
			return
		}
		if step(i) <= u.reached {
			b.Enable()
		} else {
			b.Disable()
		}
	}
}

func (u *UI) setStatus(s string) { u.status.SetText(s) }

// showProgress puts what is being done, a progress bar and Cancel in the
// bottom bar; hideProgress puts the status line back.
func (u *UI) showProgress(what string) {
	o := u.optionsScreen
	o.progress.Start()
	u.barMiddle.Objects = []fyne.CanvasObject{container.NewBorder(nil, nil, widget.NewLabel(what), o.cancelBtn, o.progress)}
	u.barMiddle.Refresh()
}

func (u *UI) hideProgress() {
	u.optionsScreen.progress.Stop()
	u.barMiddle.Objects = []fyne.CanvasObject{u.status}
	u.barMiddle.Refresh()
}

// menu builds the main menu: File, Analysis and Help, with the keys.
func (u *UI) menu() *fyne.MainMenu {
	recent := fyne.NewMenuItem("Open recent", nil)
	recent.ChildMenu = fyne.NewMenu("")
	for _, p := range u.recentFiles() {
		p := p
		recent.ChildMenu.Items = append(recent.ChildMenu.Items, fyne.NewMenuItem(p, func() { u.open(p) }))
	}
	open := fyne.NewMenuItem("Open a workbook…", u.chooseOpen)
	open.Shortcut = keyOf(fyne.KeyO)
	run := fyne.NewMenuItem("Run the analysis", u.runByKey)
	run.Shortcut = keyOf(fyne.KeyReturn)
	add := fyne.NewMenuItem("Add the results to the workbook", u.saveByKey)
	add.Shortcut = keyOf(fyne.KeyS)
	file := fyne.NewMenu("File",
		open,
		recent,
		fyne.NewMenuItem("Try the demo", u.openDemo),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Put a backup back…", u.chooseRestore),
	)
	analysis := fyne.NewMenu("Analysis", run, add)
	help := fyne.NewMenu("Help",
		fyne.NewMenuItem("Reading the findings with care", func() { u.showText("Reading the findings with care", readingWithCare) }),
		fyne.NewMenuItem("Keys", func() { u.showText("Keys", keysText) }),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("About Slopewise", u.showAbout))
	return fyne.NewMainMenu(file, analysis, help)
}

// chooseOpen asks for a workbook and opens it.
func (u *UI) chooseOpen() {
	if u.opts.ChooseOpen != nil {
		u.opts.ChooseOpen(u.open)
		return
	}
	u.openDialog("The file could not be chosen.", []string{".xlsx", ".xlsm", ".csv", ".tsv", ".txt"}, u.app.Preferences().String(prefFolder), u.open)
}

// openDialog asks for an existing file, starting in dir, and calls done
// with its path; a failure to choose is explained with what.
func (u *UI) openDialog(what string, exts []string, dir string, done func(path string)) {
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil {
			u.showError(what, err)
			return
		}
		if r == nil {
			return
		}
		path := r.URI().Path()
		r.Close()
		done(path)
	}, u.win)
	if exts != nil {
		d.SetFilter(storage.NewExtensionFileFilter(exts))
	}
	startIn(d, dir)
	d.Resize(fyne.NewSize(800, 560))
	d.Show()
}

// startIn points a file dialog at a folder, when there is one.
func startIn(d interface{ SetLocation(fyne.ListableURI) }, dir string) {
	if dir == "" {
		return
	}
	if l, err := storage.ListerForURI(storage.NewFileURI(dir)); err == nil {
		d.SetLocation(l)
	}
}

// remember puts a path at the top of the recent files and its folder as
// the last folder.
func (u *UI) remember(path string) {
	p := u.app.Preferences()
	p.SetString(prefFolder, filepath.Dir(path))
	list := []string{path}
	for _, r := range u.recentFiles() {
		if r != path && len(list) < recentLimit {
			list = append(list, r)
		}
	}
	p.SetString(prefRecent, strings.Join(list, "\n"))
	u.win.SetMainMenu(u.menu())
}

func (u *UI) recentFiles() []string {
	var out []string
	for _, p := range strings.Split(u.app.Preferences().String(prefRecent), "\n") {
		if p == "" {
			continue
		}
		if _, err := os.Stat(p); err == nil {
			out = append(out, p)
		}
	}
	return out
}

// background runs work off the UI thread and then done on it.
func (u *UI) background(work func() error, done func(err error)) {
	go func() {
		err := work()
		fyne.Do(func() {
			done(err)
			if u.onIdle != nil {
				u.onIdle()
			}
		})
	}()
}

// finished is true when there are results to show and save.
func (u *UI) finished() bool { return u.analysis != nil || u.screen != nil }

// resultSheet is the sheet of the finished run.
func (u *UI) resultSheet() *report.Sheet {
	if u.screen != nil {
		return u.screen.Sheet
	}
	return u.analysis.Sheet
}

// saveResults writes the finished run's sheet.
func (u *UI) saveResults(opts workbook.WriteOptions) (*workbook.Written, error) {
	if u.screen != nil {
		return u.screen.Save(opts)
	}
	return u.analysis.Save(opts)
}

// clusterCount is the number of distinct values of a column, 0 when there
// is no such column.
func (u *UI) clusterCount(name string) int {
	if u.table == nil || name == "" {
		return 0
	}
	c := u.table.Column(name)
	if c == nil {
		return 0
	}
	seen := map[string]bool{}
	for i := range c.Missing {
		if v := cellText(c, i); v != "" && c.Missing[i] == workbook.Present {
			seen[v] = true
		}
	}
	return len(seen)
}

// Open opens a workbook, as when it is given on the command line.
func (u *UI) Open(path string) { u.open(path) }
