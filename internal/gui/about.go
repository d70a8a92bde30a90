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

// readingWithCare is the Help menu's page on reading the findings: the
// cautions the notes keep (METHODS §9), in a few lines.
const readingWithCare = `• An effect in a group is the treatment's effect only when the treatment was randomly assigned (say so on the Judging step); otherwise it is a difference associated with the treatment.
• The moderator is never randomly assigned: a larger effect in one group shows for whom the programme did more, not that the group is the reason.
• An unclear difference between groups is not evidence that the programme works equally well for everyone: the findings give the smallest difference the data could reliably detect.
• Trying many moderators finds some differences by chance: the p-values of moderators not named beforehand are adjusted for how many were tried.
• Rows of the same site or group are alike: choose the column that names them as the cluster, or the results look surer than they are.
• Every number comes with its interval; read the interval, not only whether a test passed.`

// keysText lists the window's keys.
const keysText = `Ctrl+O (Cmd+O on a Mac) — open a workbook
Ctrl+Enter — run the analysis (from any step once the roles are chosen)
Ctrl+S — add the results to the workbook
Tab and Shift+Tab — move between fields; Space or Return presses a button
Return or Escape — close a message`

// showText shows a page of text in a dialog that Return and Escape close.
func (u *UI) showText(title, text string) {
	l := widget.NewLabel(text)
	l.Wrapping = fyne.TextWrapWord
	u.keysClose(dialog.NewCustom(title, "Close", container.NewGridWrap(fyne.NewSize(560, 320), container.NewVScroll(l)), u.win)).Show()
}
