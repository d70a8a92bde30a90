package gui

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
	"slopewise/internal/report"
)

// findingsScreen is step 5: the results sheet as the workbook will hold
// it, and saving it.
type findingsScreen struct {
	lastSave  workbook.WriteOptions // the options of the last save tried
	u         *UI
	saveBtn   *button
	copyBtn   *button
	undoBtn   *button
	savedNote *widget.Label
	where     *widget.Label // what becomes of the sheet shown
	view      fyne.CanvasObject
}

func newFindingsScreen(u *UI) *findingsScreen {
	s := &findingsScreen{u: u}
	s.saveBtn = newButton("Add the results to the workbook", theme.DocumentSaveIcon(), s.save)
	s.saveBtn.Importance = widget.HighImportance
	s.copyBtn = newButton("Save a copy…", theme.ContentCopyIcon(), s.saveCopy)
	s.undoBtn = newButton("Put the original back", theme.ContentUndoIcon(), s.restore)
	s.savedNote = widget.NewLabel("")
	s.savedNote.Wrapping = fyne.TextWrapWord
	return s
}

// startRun fits the model off the UI thread, with a progress bar and a
// cancel button.
func (u *UI) startRun() {
	spec, err := u.rolesScreen.spec()
	if err != nil {
		u.showMessage("Roles", err.Error())
		return
	}
	o := u.optionsScreen
	if o.clusteredWithout() {
		u.showMessage("Standard errors", "Clustered standard errors need a cluster column: choose one on the Roles step, or another type of standard errors.")
		return
	}
	spec.Variance = o.variance()
	spec.LeverageFallback = o.leverageFallback()
	spec.Alpha = o.alpha()
	spec.Bootstrap.Off = !o.bootstrap.Checked
	margin, err := o.marginValue()
	if err != nil {
		u.showMessage("Smallest difference that matters", "Type a positive number in the outcome's units, or leave the field empty.")
		return
	}
	spec.EquivalenceMargin = margin
	u.rolesScreen.keepRoles()
	run := u.run
	run.Spec = spec
	run.Randomized = o.randomized.Checked
	run.Version = u.opts.Version
	run.Time = u.opts.Now()
	planned := map[string]bool{}
	for _, m := range o.planned.Selected {
		planned[m] = true
	}
	run.Planned = planned[spec.Moderator.Column]
	var sr *report.ScreenRun
	if mods := u.rolesScreen.moderators(); len(mods) > 1 {
		sr = &report.ScreenRun{Base: run}
		for i, m := range mods {
			mod := spec.Moderator
			if i > 0 {
				mod = u.rolesScreen.candidateSpec(m)
			}
			sr.Candidates = append(sr.Candidates, report.Candidate{Moderator: mod, Planned: planned[m]})
		}
	}

	ctx, cancel := context.WithCancel(context.Background())
	u.cancel = cancel
	u.setStatus("Fitting the model…")
	u.showProgress("Fitting the model…")
	u.updateBar()
	table := u.table
	var a *pipeline.Analysis
	var sa *pipeline.ScreenAnalysis
	u.background(func() error {
		var err error
		if sr != nil {
			sa, err = pipeline.ScreenTable(ctx, *sr, table, nil)
		} else {
			a, err = pipeline.AnalyzeTable(ctx, run, table)
		}
		if err == nil && ctx.Err() != nil {
			err = ctx.Err()
		}
		return err
	}, func(err error) {
		cancel()
		u.cancel = nil
		u.hideProgress()
		switch {
		case errors.Is(err, context.Canceled):
			u.setStatus("Cancelled; nothing was changed.")
			u.updateBar()
			return
		case err != nil:
			u.setStatus("")
			u.updateBar()
			u.fitFailed(err)
			return
		}
		u.analysis, u.screen, u.written = a, sa, nil
		if a != nil {
			u.setStatus(fmt.Sprintf("Done: %s used, %s left out.", count(a.Result.Rows.Used, "row"), thousands(a.Result.Rows.Dropped)))
		} else {
			u.setStatus(fmt.Sprintf("Done: %d moderators tried.", len(sa.Run.Candidates)))
		}
		u.findingsScreen.rebuild()
		u.reach(stepFindings)
		u.show(stepFindings)
	})
}

// fitFailed explains a fit that stopped, with what can be done in the
// window: for a row fitted perfectly, running again with HC1 for such
// rows (the Judging step's box, ticked by the button); for terms that
// cannot be told apart, which choice on the Roles step to undo.
func (u *UI) fitFailed(err error) {
	advice := u.rolesScreen.undoAdvice(err)
	if errors.Is(err, estimate.ErrLeverage) && u.optionsScreen.leverageFallback() == "" && u.optionsScreen.offersFallback() {
		l := widget.NewLabel("The model could not be fitted.\n\n" + plain(err) + advice + "\n\nThe box \"If a row is fitted perfectly…\" under Standard errors allows that; the button below ticks it and runs again.")
		l.Wrapping = fyne.TextWrapWord
		u.keysClose(dialog.NewCustomConfirm("Something needs your attention", "Use HC1 for such rows and run again", "Close",
			container.NewGridWrap(fyne.NewSize(520, 220), container.NewVScroll(l)), func(ok bool) {
				if ok {
					u.optionsScreen.hc1Fallback.SetChecked(true)
					u.startRun()
				}
			}, u.win)).Show()
		return
	}
	u.showError("The model could not be fitted."+advice, err)
}

// rebuild renders the results sheet: the findings in short, the chart,
// and the whole sheet as the workbook will hold it.
func (s *findingsScreen) rebuild() {
	sh := s.u.resultSheet()
	if s.u.screen != nil {
		// Several moderators: the summary first; each moderator's detail
		// follows in the whole sheet.
		s.view = container.NewAppTabs(
			container.NewTabItem("In short", sheetView(sh, "headline", "screen", "note")),
			container.NewTabItem("Chart", sheetView(sh, "chart")),
			container.NewTabItem("The whole sheet", sheetView(sh)),
		)
	} else {
		s.view = container.NewAppTabs(
			container.NewTabItem("In short", sheetView(sh, "headline", "effects", "note", "differences", "equivalence", "linearity")),
			container.NewTabItem("Chart", sheetView(sh, "chart")),
			container.NewTabItem("The whole sheet", sheetView(sh)),
		)
	}
	s.savedNote.SetText("")
	s.saveBtn.Enable()
	s.undoBtn.Hide()
}

func (s *findingsScreen) content() fyne.CanvasObject {
	if !s.u.finished() {
		return widget.NewLabel("Run the analysis to see the findings.")
	}
	s.where = widget.NewLabel(s.unsaved())
	s.where.Wrapping = fyne.TextWrapWord
	if s.u.written != nil {
		s.where.SetText(s.saved(s.u.written))
	}
	actions := container.NewHBox(s.saveBtn, s.copyBtn, s.undoBtn)
	top := container.NewVBox(heading("What we found"), s.where, actions, s.savedNote)
	return container.NewBorder(top, nil, nil, nil, s.view)
}

func isWorkbook(path string) bool {
	ext := strings.ToLower(filepath.Ext(path))
	return ext == ".xlsx" || ext == ".xlsm"
}

// save adds the results sheet to the workbook (or writes the workbook
// beside a text file).
func (s *findingsScreen) save() { s.write("") }

// saveCopy asks where, then writes the workbook with the results there.
func (s *findingsScreen) saveCopy() {
	u := s.u
	suggested := strings.TrimSuffix(filepath.Base(u.path), filepath.Ext(u.path)) + " with results.xlsx"
	if u.opts.ChooseSave != nil {
		u.opts.ChooseSave(suggested, s.write)
		return
	}
	d := dialog.NewFileSave(func(w fyne.URIWriteCloser, err error) {
		if err != nil {
			u.showError("The place for the copy could not be chosen.", err)
			return
		}
		if w == nil {
			return
		}
		path := w.URI().Path()
		w.Close()
		os.Remove(path) // the writer creates the file itself, atomically
		s.write(path)
	}, u.win)
	d.SetFileName(suggested)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".xlsx"}))
	startIn(d, filepath.Dir(u.path))
	d.Resize(fyne.NewSize(800, 560))
	d.Show()
}

// write saves in place (copyTo empty) or to a copy, off the UI thread.
func (s *findingsScreen) write(copyTo string) {
	s.writeWith(workbook.WriteOptions{CopyTo: copyTo})
}

// writeWith saves with the options given.
func (s *findingsScreen) writeWith(opts workbook.WriteOptions) {
	u := s.u
	u.setStatus("Saving…")
	s.saveBtn.Disable()
	s.lastSave = opts
	opts.Now = u.opts.Now
	var w *workbook.Written
	u.background(func() error {
		var err error
		w, err = u.saveResults(opts)
		return err
	}, func(err error) {
		if err != nil {
			s.saveBtn.Enable()
			u.setStatus("")
			s.saveFailed(err)
			return
		}
		u.written = w
		if s.where != nil {
			s.where.SetText(s.saved(w))
		}
		msg := fmt.Sprintf("The results are in %s, sheet %q.", w.Path, w.Sheet)
		if w.Backup != "" {
			msg += fmt.Sprintf(" The file as it was is kept as %s.", filepath.Base(w.Backup))
			s.undoBtn.Show()
		}
		if len(w.Lost) > 0 {
			msg += " The copy does not keep: " + strings.Join(w.Lost, "; ") + "."
		}
		if w.DataNotCopied > 0 {
			msg += fmt.Sprintf(" The data stay in %s only: at more than 100,000 rows a copy in the workbook would be slow to open.", filepath.Base(u.path))
		}
		for _, n := range w.Notes {
			msg += " Note: " + n + "."
		}
		if n := len(w.Cleaned); n > 0 {
			msg += fmt.Sprintf(" %d leftover temporary file(s) of earlier saves that were stopped were removed from the folder.", n)
		}
		s.savedNote.SetText(msg)
		u.setStatus("Saved.")
		u.keysClose(dialog.NewInformation("Saved", msg, u.win)).Show()
	})
}

// saveFailed explains a failed save and, when writing in place cannot
// work, offers the copy.
func (s *findingsScreen) saveFailed(err error) {
	u := s.u
	if errors.Is(err, workbook.ErrTargetExists) && !s.lastSave.Replace {
		target := s.lastSave.CopyTo
		var we *workbook.Error
		if errors.As(err, &we) && we.Path != "" {
			target = we.Path
		}
		msg := widget.NewLabel(fmt.Sprintf("Results of an earlier run are already there, in %s. Nothing has been written.\n\nReplace them with these? The earlier workbook is kept as a backup beside it.", filepath.Base(target)))
		msg.Wrapping = fyne.TextWrapWord
		u.keysClose(dialog.NewCustomConfirm("Not saved", "Replace the earlier results", "Close", container.NewGridWrap(fyne.NewSize(520, 160), msg), func(replace bool) {
			if replace {
				opts := s.lastSave
				opts.Replace = true
				s.writeWith(opts)
			}
		}, u.win)).Show()
		return
	}
	inPlace := errors.Is(err, workbook.ErrOpenElsewhere) || errors.Is(err, workbook.ErrCannotReplace) ||
		errors.Is(err, workbook.ErrWouldLose) || errors.Is(err, workbook.ErrFolderReadOnly) ||
		errors.Is(err, workbook.ErrReadOnlyFile) || errors.Is(err, workbook.ErrDiskReadOnly) || errors.Is(err, workbook.ErrNameTooLong)
	if !inPlace {
		u.showError("The results could not be saved. Your workbook is unchanged.", err)
		return
	}
	msg := widget.NewLabel("The results could not be added to the workbook. Your workbook is unchanged.\n\n" + plain(err))
	msg.Wrapping = fyne.TextWrapWord
	u.keysClose(dialog.NewCustomConfirm("Not saved", "Save a copy instead", "Close", container.NewGridWrap(fyne.NewSize(520, 160), msg), func(copy bool) {
		if copy {
			s.saveCopy()
		}
	}, u.win)).Show()
}

// unsaved says where the sheet shown will go.
func (s *findingsScreen) unsaved() string {
	target := filepath.Base(s.u.path)
	if !isWorkbook(s.u.path) {
		target = filepath.Base(workbook.ResultsPathFor(s.u.path))
	}
	return fmt.Sprintf("This is the sheet that will be added to %s. Nothing has been written yet.", target)
}

// saved says where the sheet shown went.
func (s *findingsScreen) saved(w *workbook.Written) string {
	return fmt.Sprintf("This sheet has been added to %s as sheet %q.", filepath.Base(w.Path), w.Sheet)
}

// restore puts the backup back in place of the workbook, after asking.
func (s *findingsScreen) restore() {
	u := s.u
	w := u.written
	if w == nil || w.Backup == "" {
		return
	}
	u.keysClose(dialog.NewConfirm("Put the original back?",
		fmt.Sprintf("This replaces %s with the copy kept before Slopewise wrote to it (%s). The results sheet will be gone from the workbook.", filepath.Base(w.Path), filepath.Base(w.Backup)),
		func(ok bool) {
			if !ok {
				return
			}
			if err := restoreBackup(w.Backup, w.Path); err != nil {
				u.showError("The original could not be put back. Both files are as they were.", err)
				return
			}
			s.undoBtn.Hide()
			s.savedNote.SetText(fmt.Sprintf("%s is back as it was before the results were added.", filepath.Base(w.Path)))
			u.written = nil
			s.saveBtn.Enable() // nothing is written now: the results can be added again
			if s.where != nil {
				s.where.SetText(s.unsaved())
			}
		}, u.win)).Show()
}

// chooseRestore picks any backup Slopewise made and puts it back.
func (u *UI) chooseRestore() {
	u.openDialog("The backup could not be chosen.", []string{".xlsx", ".xlsm"}, u.app.Preferences().String(prefFolder), func(backup string) {
		target, ok := backupTarget(backup)
		if !ok {
			u.showMessage("Not a backup", "Choose a file whose name contains “(before Slopewise …)”: that is how Slopewise names the copies it keeps.")
			return
		}
		u.keysClose(dialog.NewConfirm("Put this backup back?", fmt.Sprintf("This replaces %s with %s.", filepath.Base(target), filepath.Base(backup)), func(ok bool) {
			if !ok {
				return
			}
			if err := restoreBackup(backup, target); err != nil {
				u.showError("The backup could not be put back. Both files are as they were.", err)
				return
			}
			u.showMessage("Put back", filepath.Base(target)+" is as it was when the backup was made.")
		}, u.win)).Show()
	})
}

// backupTarget is the workbook a backup was made of: "name (before
// Slopewise 2026-01-02 10.11.12).xlsx" belongs to "name.xlsx".
func backupTarget(backup string) (string, bool) {
	dir, base := filepath.Split(backup)
	i := strings.Index(base, " (before Slopewise ")
	j := strings.LastIndex(base, ")")
	if i < 0 || j < i {
		return "", false
	}
	return filepath.Join(dir, base[:i]+base[j+1:]), true
}

// restoreBackup copies the backup over the target through a temporary
// file and a rename, so the target is never half-written; the backup stays.
func restoreBackup(backup, target string) error {
	in, err := os.Open(backup)
	if err != nil {
		return err
	}
	defer in.Close()
	tmp, err := os.CreateTemp(filepath.Dir(target), ".slopewise-restore-*")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if _, err := io.Copy(tmp, in); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	if info, err := os.Stat(target); err == nil {
		os.Chmod(tmp.Name(), info.Mode().Perm())
	}
	return os.Rename(tmp.Name(), target)
}
