package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
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
