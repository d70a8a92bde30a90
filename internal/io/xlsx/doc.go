// Package xlsx reads Excel workbook packages (.xlsx, .xlsm).
//
// OpenPackage opens the zip with readers of our own that bound every
// part's unpacked size and nesting depth (xlsx.go), and reads the
// workbook part, the styles (to know which number formats are dates,
// styles.go), the sheets' tables (tables.go) and the shared strings.
// A worksheet's rows come from one of two readers side by side, both
// behind table.RowSource: the byte scanner (fastsheet.go), and the
// encoding/xml token reader (sheetstream.go) that takes every sheet the
// scanner gives back (errFastFallback); their differential test and fuzz
// target (fastsheet_test.go, testdata/fuzz/FuzzFastSheet) hold them to
// the same table. Read gives a whole table.Table; a formula cell whose
// saved result is missing or marked out of date is calculated when its
// formula uses only what was checked against LibreOffice (formulas.go),
// which reads the sheet a second time with those values.
//
// fastsheet.go is above 500 lines: the scanner is one concept (a row's
// bytes, its cells, their texts and entities, checked as it goes) and
// reads faster kept together.
//
// It never writes or changes a workbook (package save does) and never
// reads text files (package delimited does).
package xlsx
