package draw

// The printed page

import (
	"fmt"
	"math"
	"strings"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/io/table"
)

// Printed pages: portrait, fitted to one page wide. The breaks between
// blocks are placed for the smaller of A4 and Letter in each direction
// (A4 is narrower, Letter shorter), with the margins written by
// Finish, and a tenth kept in reserve for the spreadsheet program's
// own rounding.
const (
	printWidthPt  = 595 - 2*36 // A4 width less margins of 0.5 in
	printHeightPt = 792 - 2*54 // Letter height less margins of 0.75 in
	printReserve  = 0.97
	// printWidthChars is the width, in characters, a sheet is widened to
	// (about 660 points at 7 pixels a character, printed at about 80%).
	printWidthChars = 126
	// titleHeight is the height of a block's title row (13-point bold).
	titleHeight = 18
)

// rowHeight is a row's height in points.
func (l *layout) rowHeight(r int) float64 {
	if h, ok := l.heights[r]; ok {
		return h
	}
	return lineHight
}

// pageBreaks places the page breaks of the printed sheet: before a table
// or a picture that would otherwise be split across two pages but fits on
// one, and within text where the page is full, so that the spreadsheet
// program need place none of its own. Pages are measured at the scale at
// which the sheet's columns fit one page wide, with a reserve, so that a
// program whose page holds a little more still breaks where these breaks
// say. A block longer than a page (a long list of rows left out) is left
// to the program to break, and the block after it starts a new page.
func (l *layout) pageBreaks() []int {
	total := 0.0
	for _, w := range l.widths {
		total += columnPoints(w)
	}
	scale := math.Min(1, printWidthPt/total)
	page := printHeightPt * printReserve / scale
	next := 0
	if l.title {
		page -= l.rowHeight(0)
		next = 1
	}
	var breaks []int
	used := 0.0
	for _, u := range l.units {
		for r := next; r < u.from; r++ { // the blank row before the block
			used += l.rowHeight(r)
		}
		next = u.to
		h := 0.0
		for r := u.from; r < u.to; r++ {
			h += l.rowHeight(r)
		}
		switch {
		case h > page:
			if used > 0 && page-used < page/4 {
				breaks = append(breaks, u.from)
			}
			used = page // where the program breaks it is its own: start afresh
			continue
		case used > 0 && used+h > page && (u.keep || page-used < page/4):
			breaks = append(breaks, u.from)
			used = 0
		}
		for r := u.from; r < u.to; r++ {
			if rh := l.rowHeight(r); used > 0 && used+rh > page {
				breaks = append(breaks, r)
				used = rh
			} else {
				used += rh
			}
		}
	}
	return breaks
}

// Page margins in inches: half an inch at the sides, three quarters at
// top and bottom with the footer 0.3 in from the edge (common practice).
const (
	marginSide, marginEnd, marginFooter = 0.5, 0.75, 0.3
)

// pageSetup sets how the sheet prints.
func pageSetup(f *excelize.File, name string, l *layout) error {
	lastCol := max(len(l.widths), 2) - 1
	if err := f.SetSheetProps(name, &excelize.SheetPropsOptions{FitToPage: ptr(true)}); err != nil {
		return err
	}
	if err := f.SetPageLayout(name, &excelize.PageLayoutOptions{Orientation: ptr("portrait"), FitToWidth: ptr(1), FitToHeight: ptr(0)}); err != nil {
		return err
	}
	if err := f.SetPageMargins(name, &excelize.PageLayoutMarginsOptions{Left: ptr(marginSide), Right: ptr(marginSide),
		Top: ptr(marginEnd), Bottom: ptr(marginEnd), Header: ptr(marginFooter), Footer: ptr(marginFooter)}); err != nil {
		return err
	}
	footer := "&L&F"
	if l.footer != "" {
		footer += ", " + strings.ReplaceAll(l.footer, "&", "&&")
	}
	if err := f.SetHeaderFooter(name, &excelize.HeaderFooterOptions{OddFooter: footer + "&RPage &P of &N"}); err != nil {
		return err
	}
	for _, r := range l.breaks {
		if err := f.InsertPageBreak(name, cellName(r, 0)); err != nil {
			return err
		}
	}
	quoted := "'" + strings.ReplaceAll(name, "'", "''") + "'"
	if l.title {
		if err := f.SetDefinedName(&excelize.DefinedName{Name: "_xlnm.Print_Titles", RefersTo: quoted + "!$1:$1", Scope: name}); err != nil {
			return err
		}
	}
	printRows := l.rows
	if l.specRow > 0 {
		printRows = l.specRow // the spec row is for programs, not for paper
	}
	return f.SetDefinedName(&excelize.DefinedName{
		Name:     "_xlnm.Print_Area",
		RefersTo: fmt.Sprintf("%s!$A$1:$%s$%d", quoted, table.ColumnLetter(lastCol), max(printRows, 1)),
		Scope:    name,
	})
}
