package gui

import (
	"errors"
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
)

// showError explains a failure in plain words: what happened, then the
// message of the error that happened, which says where and what to do.
func (u *UI) showError(what string, err error) {
	text := what + "\n\n" + plain(err)
	l := widget.NewLabel(text)
	l.Wrapping = fyne.TextWrapWord
	u.keysClose(dialog.NewCustom("Something needs your attention", "Close", container.NewGridWrap(fyne.NewSize(520, 200), container.NewVScroll(l)), u.win)).Show()
}

// showMessage is a short information dialog.
func (u *UI) showMessage(title, text string) {
	l := widget.NewLabel(text)
	l.Wrapping = fyne.TextWrapWord
	u.keysClose(dialog.NewCustom(title, "Close", container.NewGridWrap(fyne.NewSize(480, 120), l), u.win)).Show()
}

// plain turns an error into a sentence a person can act on. Errors of the
// workbook and engine packages already say where and what to do; anything
// else is introduced as a system message.
func plain(err error) string {
	var we *workbook.Error
	var ee *estimate.Error
	switch {
	case errors.As(err, &we), errors.As(err, &ee):
		return capitalise(err.Error()) + "."
	}
	return fmt.Sprintf("The system reported: %s.", strings.TrimSuffix(err.Error(), "."))
}

func capitalise(s string) string {
	s = strings.TrimSuffix(s, ".")
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

func heading(s string) fyne.CanvasObject {
	return widget.NewLabelWithStyle(s, fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
}

func subheading(s string) fyne.CanvasObject {
	l := widget.NewLabelWithStyle(s, fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	l.Importance = widget.HighImportance
	return l
}
