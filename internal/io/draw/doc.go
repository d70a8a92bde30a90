// Package draw lays a report.Sheet out on a worksheet: LayOut places the
// report's blocks top to bottom on a grid; Cells writes the grid's
// values, with a style for each kind of cell (numbers with their
// decimals, p-values, headings, notes) and the rows of the machine-
// readable run spec behind SpecMarker; Finish sets the column widths,
// the images and the page.
//
// It writes into an excelize.File it is given: it never opens, checks or
// saves a file (package save does), and never decides what a result says
// (package report does).
//
// Files: draw.go lays the sheet out (LayOut, widths, wrapped heights,
// formulas' references), cells.go writes it (styles, Cells, Finish),
// print.go sets up the printed page (row heights, page breaks, setup).
package draw
