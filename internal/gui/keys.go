package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// The window's keys. Fyne 2.7's desktop driver delivers Ctrl (Cmd on
// macOS) with a key as a desktop.CustomShortcut and matches handlers by
// the shortcut's name, so the handlers are registered with that type (a
// shortcut type of our own never matched). They sit on the menu items,
// which show them and which the driver tries first, even when a text
// field has the focus; and on the canvas, for a window without menus.

// keyOf is Ctrl (Cmd on macOS) with a key.
func keyOf(k fyne.KeyName) *desktop.CustomShortcut {
	return &desktop.CustomShortcut{KeyName: k, Modifier: fyne.KeyModifierShortcutDefault}
}

// shortcuts: Ctrl+O opens, Ctrl+Enter runs, Ctrl+S adds the results.
func (u *UI) shortcuts() {
	c := u.win.Canvas()
	c.AddShortcut(keyOf(fyne.KeyO), func(fyne.Shortcut) { u.chooseOpen() })
	c.AddShortcut(keyOf(fyne.KeyReturn), func(fyne.Shortcut) { u.runByKey() })
	c.AddShortcut(keyOf(fyne.KeyEnter), func(fyne.Shortcut) { u.runByKey() })
	c.AddShortcut(keyOf(fyne.KeyS), func(fyne.Shortcut) { u.saveByKey() })
}

// runByKey runs the analysis when the roles allow it, from any step;
// else it says why not.
func (u *UI) runByKey() {
	switch {
	case u.cancel != nil:
		u.setStatus("The analysis is already running.")
	case u.table == nil || !u.rolesScreen.ready():
		u.setStatus("Open a workbook and choose the roles first (step 3), then run.")
	default:
		// The Judging step's choices take their defaults when it is
		// shown: it is shown first, and stays in sight while running.
		if u.current != stepOptions {
			u.reach(stepOptions)
			u.show(stepOptions)
		}
		u.startRun()
	}
}

// saveByKey adds the results to the workbook when there are results not
// yet added.
func (u *UI) saveByKey() {
	if !u.finished() || u.findingsScreen.saveBtn.Disabled() {
		u.setStatus("There are no new results to add yet.")
		return
	}
	u.findingsScreen.save()
}

// button is a widget.Button that Return (and the keypad's Enter) presses
// when it has the focus, as Space does.
type button struct{ widget.Button }

func newButton(label string, icon fyne.Resource, tapped func()) *button {
	b := &button{}
	b.Text, b.Icon, b.OnTapped = label, icon, tapped
	b.ExtendBaseWidget(b)
	return b
}

func (b *button) TypedKey(ev *fyne.KeyEvent) {
	if (ev.Name == fyne.KeyReturn || ev.Name == fyne.KeyEnter) && !b.Disabled() && b.OnTapped != nil {
		b.OnTapped()
		return
	}
	b.Button.TypedKey(ev)
}

// keysClose lets Return and Escape close a dialog, as its Close (or
// dismiss) button would: never its confirming action, which may replace
// a file. The window's own key handler is put back when it closes.
func (u *UI) keysClose(d dialog.Dialog) dialog.Dialog {
	c := u.win.Canvas()
	prev := c.OnTypedKey()
	c.SetOnTypedKey(func(ev *fyne.KeyEvent) {
		switch ev.Name {
		case fyne.KeyEscape, fyne.KeyReturn, fyne.KeyEnter:
			d.Hide()
		default:
			if prev != nil {
				prev(ev)
			}
		}
	})
	d.SetOnClosed(func() { c.SetOnTypedKey(prev) })
	return d
}

// watchFocus scrolls the page to the field that Tab has just moved the
// focus to, when it lies outside the part of the page in sight (Fyne 2.7
// moves the focus without scrolling).
func (u *UI) watchFocus() {
	dc, ok := u.win.Canvas().(desktop.Canvas)
	if !ok {
		return
	}
	dc.SetOnKeyUp(func(ev *fyne.KeyEvent) {
		if ev.Name == fyne.KeyTab {
			u.revealFocused()
		}
	})
}

// revealFocused scrolls each page that holds the focused widget so that
// the widget is in sight.
func (u *UI) revealFocused() {
	o, ok := u.win.Canvas().Focused().(fyne.CanvasObject)
	if !ok || o == nil {
		return
	}
	path := pathTo(u.win.Canvas().Content(), o)
	for i := len(path) - 1; i >= 0; i-- {
		switch s := path[i].(type) {
		case *container.Scroll:
			reveal(s, o)
		case *sideScroll:
			reveal(&s.Scroll, o)
		}
	}
}

// pathTo is the chain of objects from root down to o, through the
// containers and widgets the window is built of (containers, scrollers,
// splits, tabs, forms); nil when o is not found.
func pathTo(root, o fyne.CanvasObject) []fyne.CanvasObject {
	if root == nil {
		return nil
	}
	if root == o {
		return []fyne.CanvasObject{root}
	}
	var kids []fyne.CanvasObject
	switch v := root.(type) {
	case *fyne.Container:
		kids = v.Objects
	case *container.Scroll:
		kids = []fyne.CanvasObject{v.Content}
	case *sideScroll:
		kids = []fyne.CanvasObject{v.Content}
	case *container.Split:
		kids = []fyne.CanvasObject{v.Leading, v.Trailing}
	case *container.AppTabs:
		if t := v.Selected(); t != nil {
			kids = []fyne.CanvasObject{t.Content}
		}
	case *widget.Form:
		for _, it := range v.Items {
			kids = append(kids, it.Widget)
		}
	}
	for _, k := range kids {
		if p := pathTo(k, o); p != nil {
			return append([]fyne.CanvasObject{root}, p...)
		}
	}
	return nil
}

// reveal scrolls s up or down just enough for o to be in sight.
func reveal(s *container.Scroll, o fyne.CanvasObject) {
	d := fyne.CurrentApp().Driver()
	top := d.AbsolutePositionForObject(o).Y - d.AbsolutePositionForObject(s).Y + s.Offset.Y
	bottom := top + o.Size().Height
	view := s.Size().Height
	switch {
	case top < s.Offset.Y:
		s.Offset.Y = max(top-theme.Padding(), 0)
	case bottom > s.Offset.Y+view:
		s.Offset.Y = min(bottom-view+theme.Padding(), max(s.Content.Size().Height-view, 0))
	default:
		return
	}
	s.Refresh()
}
