package gui

import (
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
)

// pressShortcut delivers Ctrl (the platform's shortcut modifier) with key
// as Fyne 2.7's desktop driver does (internal/driver/glfw/window.go,
// triggersShortcut): a desktop.CustomShortcut, tried on the main menu's
// items first, then on the focused widget if it takes shortcuts, else on
// the canvas. It reports whether anything took it.
func pressShortcut(w fyne.Window, key fyne.KeyName) bool {
	sc := &desktop.CustomShortcut{KeyName: key, Modifier: fyne.KeyModifierShortcutDefault}
	if m := w.MainMenu(); m != nil {
		for _, menu := range m.Items {
			for _, it := range menu.Items {
				if it.Shortcut != nil && it.Shortcut.ShortcutName() == sc.ShortcutName() {
					it.Action()
					return true
				}
			}
		}
	}
	if f, ok := w.Canvas().Focused().(fyne.Shortcutable); ok {
		f.TypedShortcut(sc)
		return true
	}
	w.Canvas().(fyne.Shortcutable).TypedShortcut(sc)
	return true
}

// TestShortcuts: Ctrl+O asks for a workbook, Ctrl+Enter runs from the
// Roles step, Ctrl+S adds the results; each is shown in the menus, and
// each works on the canvas too (a window without menus), also while a
// text field has the focus (the menu takes it first).
func TestShortcuts(t *testing.T) {
	asked := 0
	h := newHarness(t, Options{ChooseOpen: func(func(string)) { asked++ }})
	u := h.u
	shown := map[string]bool{}
	for _, m := range h.w.MainMenu().Items {
		for _, it := range m.Items {
			if it.Shortcut != nil {
				shown[it.Label] = true
			}
		}
	}
	for _, l := range []string{"Open a workbook…", "Run the analysis", "Add the results to the workbook"} {
		if !shown[l] {
			t.Errorf("the menu item %q shows no key", l)
		}
	}

	pressShortcut(h.w, fyne.KeyO)
	if asked != 1 {
		t.Fatalf("Ctrl+O asked for a workbook %d times", asked)
	}
	// The canvas alone, as in a window without menus.
	h.w.Canvas().(fyne.Shortcutable).TypedShortcut(keyOf(fyne.KeyO))
	if asked != 2 {
		t.Fatalf("Ctrl+O on the canvas: asked %d times", asked)
	}

	pressShortcut(h.w, fyne.KeyReturn) // nothing open: says so, runs nothing
	if u.cancel != nil || u.status.Text == "" {
		t.Errorf("Ctrl+Enter with nothing open: status %q", u.status.Text)
	}

	h.demoRoles()
	u.rolesScreen.cluster.SetSelected("site")
	h.w.Canvas().Focus(u.optionsScreen.margin) // a text field has the focus
	pressShortcut(h.w, fyne.KeyReturn)
	h.wait()
	if u.current != stepFindings || u.analysis == nil {
		t.Fatalf("Ctrl+Enter on the Roles step: step %d, status %q", u.current, u.status.Text)
	}

	pressShortcut(h.w, fyne.KeyS)
	h.wait()
	if u.written == nil {
		t.Fatalf("Ctrl+S did not add the results: %s", h.overlayText())
	}
	// The Saved dialog closes with Escape; Return closes the next.
	if h.w.Canvas().Overlays().Top() == nil {
		t.Fatal("no Saved dialog")
	}
	h.w.Canvas().OnTypedKey()(&fyne.KeyEvent{Name: fyne.KeyEscape})
	if h.w.Canvas().Overlays().Top() != nil {
		t.Errorf("Escape left the dialog open: %s", h.overlayText())
	}
	pressShortcut(h.w, fyne.KeyS) // already added: nothing new to add
	if u.status.Text != "There are no new results to add yet." {
		t.Errorf("Ctrl+S a second time: %q", u.status.Text)
	}
	u.showMessage("A title", "A message.")
	h.w.Canvas().OnTypedKey()(&fyne.KeyEvent{Name: fyne.KeyReturn})
	if h.w.Canvas().Overlays().Top() != nil {
		t.Errorf("Return left the dialog open: %s", h.overlayText())
	}
	// With the dialogs gone, the window's own key handler is back.
	if h.w.Canvas().OnTypedKey() != nil {
		t.Error("a dialog's key handler stayed after it closed")
	}
}

// TestReturnPressesFocusedButton: Return and the keypad's Enter press
// the focused button, as Space does; a disabled one stays unpressed.
func TestReturnPressesFocusedButton(t *testing.T) {
	h := newHarness(t, Options{})
	pressed := 0
	b := newButton("Press", nil, func() { pressed++ })
	h.w.SetContent(b)
	h.w.Canvas().Focus(b)
	h.w.Canvas().Focused().TypedKey(&fyne.KeyEvent{Name: fyne.KeyReturn})
	h.w.Canvas().Focused().TypedKey(&fyne.KeyEvent{Name: fyne.KeyEnter})
	b.TypedKey(&fyne.KeyEvent{Name: fyne.KeySpace}) // as before
	b.Disable()
	b.TypedKey(&fyne.KeyEvent{Name: fyne.KeyReturn})
	if pressed != 3 {
		t.Errorf("pressed %d times, want 3 (Return, Enter, Space)", pressed)
	}
}

// TestProgressInSight: during a run the progress bar and Cancel are in
// the bottom bar, inside the window at 1024×640 whatever the page's
// scroll, and Cancel stops the run; afterwards the status line is back.
func TestProgressInSight(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	test.Tap(u.next) // to Judging
	h.w.Resize(fyne.NewSize(1024, 640))
	for _, o := range test.LaidOutObjects(h.w.Canvas().Content()) {
		if s, ok := o.(*container.Scroll); ok {
			s.ScrollToBottom()
		}
	}
	u.showProgress("Fitting the model…")
	h.shotIfAsked()
	size := h.w.Canvas().Size()
	for _, o := range []fyne.CanvasObject{u.optionsScreen.cancelBtn, u.optionsScreen.progress} {
		pos := fyne.CurrentApp().Driver().AbsolutePositionForObject(o)
		end := pos.Add(o.Size())
		if !o.Visible() || o.Size().Width == 0 || pos.X < 0 || pos.Y < 0 || end.X > size.Width || end.Y > size.Height {
			t.Errorf("%T at %v to %v, outside the %v window", o, pos, end, size)
		}
	}
	cancelled := false
	u.cancel = func() { cancelled = true }
	test.Tap(u.optionsScreen.cancelBtn)
	if !cancelled {
		t.Error("Cancel did not stop the run")
	}
	u.cancel = nil
	u.hideProgress()
	if len(u.barMiddle.Objects) != 1 || u.barMiddle.Objects[0] != u.status {
		t.Error("the status line is not back in the bar")
	}
}

// TestHelpMenu: the Help menu holds more than About: the cautions for
// reading the findings and the keys, each in a dialog that Escape closes.
func TestHelpMenu(t *testing.T) {
	h := newHarness(t, Options{})
	var help *fyne.Menu
	for _, m := range h.w.MainMenu().Items {
		if m.Label == "Help" {
			help = m
		}
	}
	if help == nil {
		t.Fatal("no Help menu")
	}
	for _, it := range help.Items {
		if it.IsSeparator {
			continue
		}
		it.Action()
		if !strings.Contains(h.overlayText(), "[Close]") {
			t.Errorf("%q shows no dialog: %q", it.Label, h.overlayText())
		}
		h.w.Canvas().OnTypedKey()(&fyne.KeyEvent{Name: fyne.KeyEscape})
	}
	if n := len(help.Items); n < 4 {
		t.Errorf("the Help menu holds %d items", n)
	}
}

// wideTable runs the demo with site as the cluster and returns the window,
// at 1024×640, with the first table on the findings wider than the page.
func wideTable(t *testing.T) (*harness, *sideScroll) {
	t.Helper()
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	u.rolesScreen.cluster.SetSelected("site")
	test.Tap(u.next)
	test.Tap(u.next) // run
	h.wait()
	h.w.Resize(fyne.NewSize(1024, 640))
	var side *sideScroll
	for _, o := range test.LaidOutObjects(h.w.Canvas().Content()) {
		if s, ok := o.(*sideScroll); ok && side == nil && s.Content.MinSize().Width > s.Size().Width {
			side = s
		}
	}
	if side == nil {
		t.Fatal("no table wider than the page at 1024×640")
	}
	return h, side
}

// TestWheelScrollsThePage: the wheel turned over a wide table scrolls the
// page, not the table; scrolled sideways, the table slides.
func TestWheelScrollsThePage(t *testing.T) {
	_, side := wideTable(t)
	if side.page == nil {
		t.Fatal("the table does not know its page")
	}
	before := side.page.Offset.Y
	side.Scrolled(&fyne.ScrollEvent{Scrolled: fyne.Delta{DY: -60}})
	if side.Offset.X != 0 || side.page.Offset.Y <= before {
		t.Errorf("the wheel over the table: table at %v, page from %v to %v", side.Offset.X, before, side.page.Offset.Y)
	}
	side.Scrolled(&fyne.ScrollEvent{Scrolled: fyne.Delta{DX: -80}})
	if side.Offset.X <= 0 {
		t.Errorf("scrolled sideways, the table stays at %v", side.Offset.X)
	}
}

// TestLabelsStayWhenATableSlides: slid sideways, a table's values move and
// its labels (the first column) stay where they were, in sight.
func TestLabelsStayWhenATableSlides(t *testing.T) {
	h, side := wideTable(t)
	d := fyne.CurrentApp().Driver()
	var label, value *widget.Label
	for _, o := range test.LaidOutObjects(h.w.Canvas().Content()) {
		if l, ok := o.(*widget.Label); ok && l.Text == "Plains" && label == nil {
			label = l
		}
	}
	if label == nil {
		t.Fatal("the effects table's row of Plains is not on the page")
	}
	// A number in the same row.
	for _, o := range test.LaidOutObjects(side.Content) {
		if l, ok := o.(*widget.Label); ok && value == nil && d.AbsolutePositionForObject(l).Y == d.AbsolutePositionForObject(label).Y {
			if _, err := strconv.ParseFloat(strings.ReplaceAll(l.Text, ",", ""), 64); err == nil {
				value = l
			}
		}
	}
	if value == nil {
		t.Fatal("no number beside the label Plains")
	}
	l0, v0 := d.AbsolutePositionForObject(label), d.AbsolutePositionForObject(value)
	side.Scrolled(&fyne.ScrollEvent{Scrolled: fyne.Delta{DX: -120}})
	l1, v1 := d.AbsolutePositionForObject(label), d.AbsolutePositionForObject(value)
	if side.Offset.X <= 0 || v1.X >= v0.X {
		t.Errorf("the values did not slide: offset %v, from %v to %v", side.Offset.X, v0, v1)
	}
	if l1 != l0 || l1.X < 0 {
		t.Errorf("the label moved from %v to %v", l0, l1)
	}
}

// TestFocusScrolledIntoSight: the focus moved to a field below the part of
// the page in sight (as Tab does) scrolls the page to it.
func TestFocusScrolledIntoSight(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	test.Tap(u.next) // to Judging
	h.w.Resize(fyne.NewSize(1024, 640))
	m := u.optionsScreen.margin
	d := fyne.CurrentApp().Driver()
	inSight := func() bool {
		y := d.AbsolutePositionForObject(m).Y
		return y >= 0 && y+m.Size().Height <= h.w.Canvas().Size().Height
	}
	if inSight() {
		t.Fatal("the margin field is in sight before scrolling: the test shows nothing")
	}
	h.w.Canvas().Focus(m)
	u.revealFocused()
	if !inSight() {
		t.Errorf("the focused field is at %v in a %v window", d.AbsolutePositionForObject(m), h.w.Canvas().Size())
	}
}
