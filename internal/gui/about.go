package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"
)

// licences names the licences of Slopewise and of what it links in.
const licences = `Slopewise is free software under the MIT licence.

It is built with:
• Fyne (BSD 3-Clause) — the window
• excelize (BSD 3-Clause) — Excel workbooks
• gonum and gonum/plot (BSD 3-Clause) — numbers and charts
• the Go standard library and golang.org/x packages (BSD 3-Clause)
and the libraries they use, each under its own open licence (MIT, BSD,
Apache 2.0, ISC, zlib, the FreeType licence, CC BY 4.0, and the SIL Open
Font Licence for the fonts); the full texts are in THIRD_PARTY_LICENSES
with the program.`

// showAbout shows the version and the licences.
func (u *UI) showAbout() {
	title := widget.NewLabelWithStyle("Slopewise "+u.opts.Version, fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	what := widget.NewLabel("Does the programme work equally well for everyone? Slopewise estimates a treatment's effect in each group of a moderator, the differences between groups, and how sure one can be, and writes them back into your workbook.")
	what.Wrapping = fyne.TextWrapWord
	lic := widget.NewLabel(licences)
	lic.Wrapping = fyne.TextWrapWord
	body := container.NewVBox(title, what, widget.NewSeparator(), lic)
	u.keysClose(dialog.NewCustom("About Slopewise", "Close", container.NewGridWrap(fyne.NewSize(560, 360), container.NewVScroll(body)), u.win)).Show()
}
