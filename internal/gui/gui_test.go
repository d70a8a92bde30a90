package gui

import (
	"flag"
	"image/png"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
	"github.com/xuri/excelize/v2"

	"slopewise/assets"
	demodata "slopewise/internal/demo"
	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
	"slopewise/internal/report"
)

var update = flag.Bool("update", false, "rewrite the golden renders in testdata/")

// harness is a window with the UI on the test driver, and a channel that
// receives when a background job has finished.
type harness struct {
	t    *testing.T
	u    *UI
	w    fyne.Window
	idle chan struct{}
}

// fixedDir is a folder with the same path on every run, so that the
// golden renders (which show file names) do not change; each test has its
// own, so tests never share files.
func fixedDir(t *testing.T, name string) string {
	dir := filepath.Join(os.TempDir(), "slopewise-gui-test", t.Name(), name)
	os.RemoveAll(dir)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	return dir
}

func newHarness(t *testing.T, opts Options) *harness {
	a := test.NewTempApp(t)
	w := test.NewTempWindow(t, nil)
	if opts.DemoDir == "" {
		opts.DemoDir = fixedDir(t, "demo")
	}
	if opts.Version == "" {
		opts.Version = "test"
	}
	opts.Now = func() time.Time { return time.Date(2026, 3, 2, 10, 0, 0, 0, time.UTC) }
	u := New(a, w, opts)
	h := &harness{t: t, u: u, w: w, idle: make(chan struct{}, 4)}
	u.onIdle = func() { h.idle <- struct{}{} }
	w.Resize(fyne.NewSize(1100, 760))
	return h
}

// demoRoles opens the demo and moves to the roles step.
func (h *harness) demoRoles() {
	h.t.Helper()
	test.Tap(h.u.openScreen.demoBtn)
	h.wait()
	test.Tap(h.u.next)
	if h.u.current != stepRoles {
		h.t.Fatalf("not on the roles step after opening the demo: step %d", h.u.current)
	}
}

// wait blocks until the next background job has finished.
func (h *harness) wait() {
	h.t.Helper()
	select {
	case <-h.idle:
	case <-time.After(30 * time.Second):
		h.t.Fatal("a background job did not finish")
	}
}

// golden compares the window with testdata/<name>.xml, or rewrites it
// with -update.
func (h *harness) golden(name string) {
	h.t.Helper()
	file := name + ".xml"
	if *update {
		if err := os.WriteFile(filepath.Join("testdata", file), []byte(test.RenderToMarkup(h.w.Canvas())), 0o644); err != nil {
			h.t.Fatal(err)
		}
		return
	}
	test.AssertRendersToMarkup(h.t, file, h.w.Canvas())
}

// overlayText is all the text of the dialog on top, or "".
func (h *harness) overlayText() string {
	top := h.w.Canvas().Overlays().Top()
	if top == nil {
		return ""
	}
	var b strings.Builder
	for _, o := range test.LaidOutObjects(top) {
		switch l := o.(type) {
		case *widget.Label:
			b.WriteString(l.Text + "\n")
		case *widget.Button:
			b.WriteString("[" + l.Text + "]\n")
		}
	}
	return b.String()
}

func (h *harness) tapButton(label string) {
	h.t.Helper()
	top := h.w.Canvas().Overlays().Top()
	if top == nil {
		h.t.Fatalf("no dialog with a %q button", label)
	}
	for _, o := range test.LaidOutObjects(top) {
		if b, ok := o.(*widget.Button); ok && b.Text == label {
			test.Tap(b)
			return
		}
	}
	h.t.Fatalf("no %q button in the dialog:\n%s", label, h.overlayText())
}

// TestWholePath drives the real widgets from "Try the demo" to the saved
// workbook and checks the saved results sheet against the analysis, with
// a golden render of every screen.
func TestWholePath(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.golden("1-workbook")

	test.Tap(u.openScreen.demoBtn)
	h.wait()
	if u.current != stepRows || u.table == nil || u.table.Len() != 1200 {
		t.Fatalf("after opening the demo: step %d, table %v", u.current, u.table != nil)
	}
	if got := u.rowsScreen.sheet.Selected; got != "Participants" {
		t.Errorf("sheet %q, want Participants", got)
	}
	if u.table.HeaderRow != 3 || u.rowsScreen.header.Text != "3" {
		t.Errorf("header row %d / %q, want 3", u.table.HeaderRow, u.rowsScreen.header.Text)
	}
	h.golden("2-rows")

	test.Tap(u.next)
	if u.current != stepRoles {
		t.Fatalf("Next from rows went to step %d", u.current)
	}
	r := u.rolesScreen
	if r.treatment.Selected != "coached" || r.outcome.Selected != "earnings_6m" {
		t.Errorf("defaults: treatment %q, outcome %q", r.treatment.Selected, r.outcome.Selected)
	}
	r.moderator.SetSelected("region")
	if r.modKind.Selected != kindGroups {
		t.Errorf("region read as %q, want groups", r.modKind.Selected)
	}
	r.cluster.SetSelected("site")
	r.controls.SetSelected([]string{"age", "baseline_score"})
	if !strings.Contains(checksText(r), "only 24 clusters") {
		t.Errorf("no few-clusters check:\n%s", checksText(r))
	}
	h.golden("3-roles")

	test.Tap(u.next)
	o := u.optionsScreen
	if o.se.Selected != "Clustered by site (CR1)" {
		t.Errorf("default standard errors %q with a cluster, want CR1", o.se.Selected)
	}
	test.Tap(o.randomized)
	o.planned.SetSelected(o.planned.Options)
	h.golden("4-judging")

	test.Tap(u.next) // run
	h.wait()
	if u.current != stepFindings || u.analysis == nil {
		t.Fatalf("after running: step %d", u.current)
	}
	res := u.analysis.Result
	if res.Model.Clusters != 24 || len(res.Effects) != 4 || !u.analysis.Run.Randomized {
		t.Errorf("the run: %d clusters, %d effects, randomized %v", res.Model.Clusters, len(res.Effects), u.analysis.Run.Randomized)
	}
	h.golden("5-findings")

	test.Tap(u.findingsScreen.saveBtn)
	h.wait()
	if u.written == nil || u.written.Backup == "" {
		t.Fatalf("not saved: %s", h.overlayText())
	}
	if !strings.Contains(h.overlayText(), "kept as") {
		t.Errorf("the saved dialog does not mention the backup:\n%s", h.overlayText())
	}
	checkSavedSheet(t, u.written.Path, u.written.Sheet, u.analysis)

	// Put the original back: the backup's bytes return.
	backup, _ := os.ReadFile(u.written.Backup)
	h.tapButton("OK")
	test.Tap(u.findingsScreen.undoBtn)
	h.tapButton("Yes")
	if got := u.findingsScreen.where.Text; !strings.Contains(got, "Nothing has been written yet.") {
		t.Errorf("above the sheet after putting the original back: %q", got)
	}
	after, _ := os.ReadFile(filepath.Join(u.opts.DemoDir, "slopewise-demo.xlsx"))
	if string(after) != string(backup) {
		t.Error("putting the original back did not restore the backup's bytes")
	}
}

func checksText(r *rolesScreen) string {
	var b strings.Builder
	for _, c := range r.lastChecks {
		b.WriteString(c.Message + "\n")
	}
	return b.String()
}

// checkSavedSheet reads the saved workbook and compares the effect table
// with the analysis, value by value as stored.
func checkSavedSheet(t *testing.T, path, sheet string, a *pipeline.Analysis) {
	t.Helper()
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := f.GetRows(sheet, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	found := 0
	for _, e := range a.Result.Effects {
		label := e.Group
		if e.Reference {
			label += " (reference)"
		}
		for _, row := range rows {
			if len(row) >= 9 && row[0] == label {
				v, _ := strconv.ParseFloat(row[4], 64)
				lo, _ := strconv.ParseFloat(row[6], 64)
				if v != e.Estimate || lo != e.CILow {
					t.Errorf("group %s: sheet %v %v, analysis %v %v", label, v, lo, e.Estimate, e.CILow)
				}
				found++
				break
			}
		}
	}
	if found != len(a.Result.Effects) {
		t.Errorf("found %d of %d effect rows in the saved sheet", found, len(a.Result.Effects))
	}
}

// TestChecksBeforeRunning shows each kind of check on the roles screen.
func TestChecksBeforeRunning(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	r := u.rolesScreen
	cases := []struct {
		name  string
		set   func()
		words string
		block bool
	}{
		// Hundreds of one-row groups: a warning about the kind, and groups
		// where the treatment cannot vary block the run.
		{"number read as groups", func() { r.moderator.SetSelected("baseline_score"); r.modKind.SetSelected(kindGroups) }, "different numbers. Treat it as a number", true},
		{"treatment constant in a group", func() { r.moderator.SetSelected("baseline_score"); r.modKind.SetSelected(kindGroups) }, "the treatment never varies", true},
		{"what the window offers instead of merging", func() {}, "Here: choose another moderator, or treat this one as a number", true},
		{"few clusters", func() { r.moderator.SetSelected("region"); r.cluster.SetSelected("site") }, "only 24 clusters", false},
		{"small group", func() { r.cluster.SetSelected(none); r.moderator.SetSelected("age"); r.modKind.SetSelected(kindGroups) }, "The smallest group", false},
		{"two groups that are more", func() { r.moderator.SetSelected("region"); r.modKind.SetSelected(kindTwo) }, "chosen as two groups but has 4", true},
		{"bad values to report at", func() {
			r.moderator.SetSelected("baseline_score")
			r.modKind.SetSelected(kindNumber)
			r.probes.SetText("20, fifty")
		}, `"fifty" is not a number`, true},
		{"a clean choice", func() { r.probes.SetText("20, 50"); r.moderator.SetSelected("first_time") }, "will be left out", false},
	}
	for _, c := range cases {
		c.set()
		if !strings.Contains(checksText(r), c.words) {
			t.Errorf("%s: the checks do not say %q:\n%s", c.name, c.words, checksText(r))
		}
		if c.block != u.next.Disabled() {
			t.Errorf("%s: Next disabled = %v, want %v", c.name, u.next.Disabled(), c.block)
		}
	}
}

// TestGroupingWarning: the demo with its default roles and no cluster
// column warns that every row of a site has the same region, and the
// button beside the warning, not the window by itself, chooses "site";
// a cluster column that does not hold the regions constant is named too.
func TestGroupingWarning(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	r := u.rolesScreen
	if r.moderator.Selected != "region" || r.cluster.Selected != none {
		t.Fatalf("defaults: moderator %q, cluster %q", r.moderator.Selected, r.cluster.Selected)
	}
	want := "Every row of a site has the same region: the comparison across region rests on 24 clusters of site, not on 1193 independent rows."
	if !strings.Contains(checksText(r), want) {
		t.Errorf("the checks do not say %q:\n%s", want, checksText(r))
	}
	if r.useCluster == nil || r.useCluster.Text != `Use "site" as the cluster` {
		t.Fatalf("no button to choose site: %+v", r.useCluster)
	}
	if u.next.Disabled() {
		t.Error("the warning blocks the run; it should only warn")
	}
	h.shotIfAsked()
	test.Tap(r.useCluster)
	if r.cluster.Selected != "site" {
		t.Errorf("after the button the cluster is %q, want site", r.cluster.Selected)
	}
	if strings.Contains(checksText(r), "has the same region") || r.useCluster != nil {
		t.Errorf("the warning stays with site as the cluster:\n%s", checksText(r))
	}
	r.cluster.SetSelected("first_time")
	if !strings.Contains(checksText(r), "The cluster column first_time does not hold region constant, but site does.") || r.useCluster == nil {
		t.Errorf("a cluster column that does not hold region constant is not named:\n%s", checksText(r))
	}
}

// TestUnreadableFile shows the error dialog for a file that is not a
// workbook, in plain words, and stays on the first step.
func TestUnreadableFile(t *testing.T) {
	dir := fixedDir(t, "bad")
	bad := filepath.Join(dir, "notes.xlsx")
	if err := os.WriteFile(bad, []byte("not a workbook at all"), 0o644); err != nil {
		t.Fatal(err)
	}
	h := newHarness(t, Options{ChooseOpen: func(done func(string)) { done(bad) }})
	test.Tap(h.u.openScreen.openBtn)
	h.wait()
	text := h.overlayText()
	if !strings.Contains(text, "This file could not be opened.") || !strings.Contains(text, "notes.xlsx") {
		t.Errorf("dialog:\n%s", text)
	}
	if h.u.current != stepWorkbook || h.u.table != nil {
		t.Errorf("moved on after a failed open")
	}
}

// TestLockedWorkbook: a workbook open in a spreadsheet program (its lock
// file beside it) is not written; the dialog offers a copy, and the copy
// is written where chosen.
func TestLockedWorkbook(t *testing.T) {
	copyDir := fixedDir(t, "copy")
	copyPath := filepath.Join(copyDir, "with results.xlsx")
	h := newHarness(t, Options{ChooseSave: func(_ string, done func(string)) { done(copyPath) }})
	u := h.u
	test.Tap(u.openScreen.demoBtn)
	h.wait()
	path := filepath.Join(u.opts.DemoDir, "slopewise-demo.xlsx")
	before, _ := os.ReadFile(path)
	if err := os.WriteFile(filepath.Join(u.opts.DemoDir, "~$slopewise-demo.xlsx"), []byte("lock"), 0o644); err != nil {
		t.Fatal(err)
	}
	test.Tap(u.next)
	u.rolesScreen.moderator.SetSelected("first_time")
	test.Tap(u.next)
	test.Tap(u.next)
	h.wait()
	test.Tap(u.findingsScreen.saveBtn)
	h.wait()
	text := h.overlayText()
	if !strings.Contains(text, "Your workbook is unchanged") || !strings.Contains(text, "[Save a copy instead]") {
		t.Fatalf("dialog:\n%s", text)
	}
	if after, _ := os.ReadFile(path); string(after) != string(before) {
		t.Error("the locked workbook changed")
	}
	h.tapButton("Save a copy instead")
	h.wait()
	if u.written == nil || u.written.Path != copyPath {
		t.Fatalf("the copy was not written: %+v\n%s", u.written, h.overlayText())
	}
}

// TestBackupTarget checks how a backup's name leads back to its workbook.
func TestBackupTarget(t *testing.T) {
	got, ok := backupTarget("/data/visits (before Slopewise 2026-01-02 10.11.12).xlsx")
	if !ok || got != "/data/visits.xlsx" {
		t.Errorf("got %q %v", got, ok)
	}
	if _, ok := backupTarget("/data/visits.xlsx"); ok {
		t.Error("a plain workbook taken for a backup")
	}
}

// TestFormatNumber checks the display formats the report uses (the same
// notation as the spreadsheet's; common practice).
func TestFormatNumber(t *testing.T) {
	for _, c := range []struct {
		v      float64
		format string
		want   string
	}{
		{1234.5678, "0.000", "1234.568"},
		{1234567, "#,##0", "1,234,567"},
		{-1234.5, "#,##0.00", "-1,234.50"},
		{0.000012346, "0.000E+00", "1.235E-05"},
		{3, "0", "3"},
	} {
		if got := formatNumber(c.v, c.format); got != c.want {
			t.Errorf("formatNumber(%v, %q) = %q, want %q", c.v, c.format, got, c.want)
		}
	}
}

// TestSeveralModerators tries three moderators at once: the run becomes a
// screen whose sheet leads with the comparison of moderators, adjusted
// for how many were tried, and is saved like a single run.
func TestSeveralModerators(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	r := u.rolesScreen
	r.moderator.SetSelected("region")
	r.controls.SetSelected([]string{"age"})
	r.extra.SetSelected([]string{"first_time", "baseline_score"})
	test.Tap(u.next)
	o := u.optionsScreen
	if got := strings.Join(o.planned.Options, ","); got != "region,first_time,baseline_score" {
		t.Fatalf("moderators offered for marking: %s", got)
	}
	o.planned.SetSelected([]string{"region"})
	test.Tap(u.next)
	h.wait()
	if u.screen == nil || u.analysis != nil {
		t.Fatalf("three moderators did not make a screen: %s", h.overlayText())
	}
	if n := len(u.screen.Run.Candidates); n != 3 || !u.screen.Run.Candidates[0].Planned || u.screen.Run.Candidates[1].Planned {
		t.Errorf("candidates %+v", u.screen.Run.Candidates)
	}
	if got := u.resultSheet().Blocks; len(got) == 0 {
		t.Fatal("no sheet")
	}
	test.Tap(u.findingsScreen.saveBtn)
	h.wait()
	if u.written == nil {
		t.Fatalf("not saved: %s", h.overlayText())
	}
	f, err := excelize.OpenFile(u.written.Path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if idx, _ := f.GetSheetIndex(u.written.Sheet); idx < 0 || !strings.HasPrefix(u.written.Sheet, "Moderators") {
		t.Errorf("saved sheet %q", u.written.Sheet)
	}
}

// TestBootstrapSwitch: with fewer than 42 clusters the wild cluster
// bootstrap is offered and on; turning it off runs without it.
func TestBootstrapSwitch(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	u.rolesScreen.moderator.SetSelected("first_time")
	u.rolesScreen.cluster.SetSelected("site")
	test.Tap(u.next)
	o := u.optionsScreen
	if !o.bootstrap.Checked {
		t.Fatal("the bootstrap is not on by default with 24 clusters")
	}
	o.bootstrap.SetChecked(false)
	test.Tap(u.next)
	h.wait()
	if u.analysis == nil || u.analysis.Result.Bootstrap != nil {
		t.Errorf("the bootstrap ran although turned off")
	}
}

// TestEquivalenceMargin: a smallest difference that matters reaches the
// run and the note speaks of it; a bad value is refused in plain words.
func TestEquivalenceMargin(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	u.rolesScreen.moderator.SetSelected("first_time")
	test.Tap(u.next)
	o := u.optionsScreen
	o.margin.SetText("lots")
	test.Tap(u.next)
	if !strings.Contains(h.overlayText(), "positive number") || u.cancel != nil {
		t.Fatalf("a bad margin was not refused:\n%s", h.overlayText())
	}
	h.tapButton("Close")
	o.margin.SetText("400")
	test.Tap(u.next)
	h.wait()
	if u.analysis == nil || u.analysis.Run.Spec.EquivalenceMargin != 400 {
		t.Fatalf("the margin did not reach the run")
	}
	if note := report.Note(u.analysis.Run, u.analysis.Result); !strings.Contains(note, "smallest difference that matters") {
		t.Errorf("the note does not use the margin:\n%s", note)
	}
}

// TestLinearityShown: for a number moderator the findings in short carry
// the check of the straight line against the moderator's thirds.
func TestLinearityShown(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	u.rolesScreen.moderator.SetSelected("baseline_score")
	if u.rolesScreen.modKind.Selected != kindNumber {
		t.Fatalf("baseline_score read as %q", u.rolesScreen.modKind.Selected)
	}
	test.Tap(u.next)
	test.Tap(u.next)
	h.wait()
	if u.analysis == nil || u.analysis.Result.Linearity == nil {
		t.Fatalf("no linearity check in the result")
	}
	found := false
	for _, b := range u.analysis.Sheet.Blocks {
		found = found || b.Key == "linearity"
	}
	if !found {
		t.Error("the sheet has no linearity block to show")
	}
}

// pupilsToFindings writes dir/pupils.csv of n invented rows (score,
// tutored, area), opens it in the window, picks the roles and runs,
// stopping at the findings.
func pupilsToFindings(t *testing.T, dir string, n int) *harness {
	t.Helper()
	var b strings.Builder
	b.WriteString("score,tutored,area\n")
	for i := range n {
		b.WriteString(strconv.Itoa((i*7919)%101) + "," + strconv.Itoa(i%2) + "," + string(rune('a'+i%3)) + "\n")
	}
	src := filepath.Join(dir, "pupils.csv")
	if err := os.WriteFile(src, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	h := newHarness(t, Options{ChooseOpen: func(done func(string)) { done(src) }})
	u := h.u
	test.Tap(u.openScreen.openBtn)
	h.wait()
	test.Tap(u.next)
	r := u.rolesScreen
	r.outcome.SetSelected("score")
	r.treatment.SetSelected("tutored")
	r.moderator.SetSelected("area")
	test.Tap(u.next)
	test.Tap(u.next) // run
	h.wait()
	if u.analysis == nil {
		t.Fatalf("no analysis: %s", h.overlayText())
	}
	return h
}

// TestBigCSVKeepsItsData: the results saved beside a text file of more
// than 100,000 rows hold the results only, and the saved dialog says the
// data stay in the text file.
func TestBigCSVKeepsItsData(t *testing.T) {
	dir := fixedDir(t, "big")
	h := pupilsToFindings(t, dir, 100_001)
	u := h.u
	test.Tap(u.findingsScreen.saveBtn)
	h.wait()
	text := h.overlayText()
	if !strings.Contains(text, "The data stay in pupils.csv only: at more than 100,000 rows") {
		t.Errorf("the saved dialog does not say where the data stay:\n%s", text)
	}
	if u.written == nil || u.written.DataNotCopied == 0 || u.written.Path != filepath.Join(dir, "pupils results.xlsx") {
		t.Errorf("written: %+v", u.written)
	}
	if got := u.findingsScreen.where.Text; got != `This sheet has been added to pupils results.xlsx as sheet "Results".` {
		t.Errorf("above the sheet after saving: %q", got)
	}
	h.shotIfAsked()
}

// shotIfAsked saves the window as it is to the PNG file named by
// SLOPEWISE_GUI_SHOT, for a person to look at.
func (h *harness) shotIfAsked() {
	path := os.Getenv("SLOPEWISE_GUI_SHOT")
	if path == "" {
		return
	}
	f, err := os.Create(path)
	if err != nil {
		h.t.Fatal(err)
	}
	defer f.Close()
	if err := png.Encode(f, h.w.Canvas().Capture()); err != nil {
		h.t.Fatal(err)
	}
}

// TestReplaceEarlierResultsDialog: saving beside a text file whose
// results workbook an earlier run wrote offers to replace those results;
// taking the offer writes them, with a backup of the earlier workbook.
func TestReplaceEarlierResultsDialog(t *testing.T) {
	dir := t.TempDir()
	h := pupilsToFindings(t, dir, 200)
	u := h.u
	// An earlier run's results workbook is already there.
	if _, err := u.analysis.Save(workbook.WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	test.Tap(u.findingsScreen.saveBtn)
	h.wait()
	if text := h.overlayText(); !strings.Contains(text, "Results of an earlier run are already there") || !strings.Contains(text, "[Replace the earlier results]") {
		t.Fatalf("the dialog does not offer to replace them:\n%s", text)
	}
	h.shotIfAsked()
	h.tapButton("Replace the earlier results")
	h.wait()
	if u.written == nil || u.written.Backup == "" || u.written.Path != filepath.Join(dir, "pupils results.xlsx") {
		t.Errorf("written: %+v\n%s", u.written, h.overlayText())
	}
}

// TestBeforeAfterRoles: on the Roles step, "Measured before and after?"
// asks for the period, the value after the start and the unit; a
// treatment of three values asks for the comparison arm; the checks speak
// before running, the other moderators are not offered, and the run gives
// each arm's difference in differences (the roll-out demo, whose true
// effects lie inside the intervals).
func TestBeforeAfterRoles(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	path := filepath.Join(fixedDir(t, "rollout"), demodata.RolloutFile)
	if err := os.WriteFile(path, assets.DemoRolloutWorkbook, 0o644); err != nil {
		t.Fatal(err)
	}
	u.open(path)
	h.wait()
	test.Tap(u.next)
	r := u.rolesScreen
	r.outcome.SetSelected("earnings")
	r.treatment.SetSelected("programme")
	r.moderator.SetSelected("region")
	if _, err := r.spec(); err == nil || !strings.Contains(err.Error(), `is the comparison group`) {
		t.Errorf("three arms without a comparison: %v", err)
	}
	r.control.SetSelected("none")
	test.Tap(r.beforeAfter)
	r.period.SetSelected("year")
	if !strings.Contains(checksText(r), `is after the start`) {
		t.Errorf("no question about the value after the start:\n%s", checksText(r))
	}
	r.after.SetSelected("2024")
	r.unit.SetSelected("person_id")
	test.Tap(r.unitEffects)
	sp, err := r.spec()
	if err != nil {
		t.Fatal(err)
	}
	if sp.Period != "year" || sp.After != "2024" || sp.Unit != "person_id" || !sp.UnitEffects || sp.Cluster != "person_id" ||
		sp.Treatment.Kind != estimate.TreatmentArms || sp.Treatment.Control != "none" || r.extraBox.Visible() {
		t.Fatalf("spec %+v, other moderators shown %v", sp, r.extraBox.Visible())
	}
	for _, c := range r.lastChecks {
		if c.Severity == pipeline.Blocking {
			t.Errorf("blocking check: %s", c.Message)
		}
	}
	h.golden("3-roles-before-after")
	h.shotIfAsked()
	test.Tap(u.next)
	u.optionsScreen.randomized.SetChecked(true)
	test.Tap(u.next)
	h.wait()
	if u.analysis == nil {
		t.Fatalf("no analysis: %s", h.overlayText())
	}
	truth := demodata.RolloutTrueEffects()
	for _, e := range u.analysis.Result.Effects {
		if want := truth[e.Arm][e.Group]; !(e.CILow < want && want < e.CIHigh) {
			t.Errorf("%s in %s: %.1f [%.1f, %.1f] misses %g", e.Arm, e.Group, e.Estimate, e.CILow, e.CIHigh, want)
		}
	}
}
