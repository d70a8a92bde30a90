// Package save writes results into the user's file without damaging
// anything else in it.
//
// WriteResults adds a results sheet (drawn by package draw) to a
// workbook as a new sheet with a name of its own (write.go). Only the new
// sheet's parts are added: the package is spliced part by part
// (splice.go), big worksheets are kept out of excelize's hands
// (bigsheets.go), and the workbook settings and styles excelize would
// drop are put back (settings.go, stylesfix.go). The new file is written
// beside the original, re-opened and checked sheet by sheet against it
// (verify.go); a backup of the original is written and read back; only
// then is the original replaced, by an exchange checked against the
// version read (exchange_*.go), two saves into one file taking turns
// through a lock of our own (runlock*.go). Workbooks that use a feature
// excelize would drop are refused in place with the feature named
// (hazards.go) and can be written to a copy. For a text file, a new
// workbook "<name> results.xlsx" holds the data (textout.go,
// datasheet.go) and the results. ReadSpec reads back the run spec a
// results sheet holds (spec.go).
//
// write.go is above 500 lines: the in-place save is one sequence of
// steps (check, build, verify, back up, exchange) whose order is the
// guarantee, and reads best in one file.
//
// It never changes a text file, and never decides what the results sheet
// holds.
package save
