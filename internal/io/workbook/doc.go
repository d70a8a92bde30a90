// Package workbook is the door to the reading and writing side: it reads
// an evaluator's workbook or text table into a Table of named, typed
// columns, and writes a results sheet back without damaging anything else
// in the file. It holds no reading or writing of its own: Read asks
// package sniff what the file is and hands it to the reader for its kind,
// and the other names here are those of the packages that do the work,
// so that callers (pipeline, gui, cmd/app) need import only this one:
//
//	table      the Table, its columns, kinds, missing reasons, notes and
//	           errors, and the typing of raw rows into a Table
//	sniff      what a file is, and the refusal of the kinds not read
//	delimited  text tables: encodings, the reader, the streamed passes
//	           with their read-ahead and replay file
//	xlsx       workbook packages: the byte scanner and the token reader,
//	           styles, tables, formula calculation
//	draw       a report.Sheet laid out on a worksheet
//	save       the results written into the file: splicing, checking,
//	           backups, the data sheet beside a text file, the exchange
//	           and the lock
//
// The imports run one way: table, then sniff, then delimited and xlsx,
// then draw and save, then workbook; none imports one after it. What
// their tests share is in package iotest.
//
// # Reading
//
// Read takes .xlsx and .xlsm workbooks and .csv, .tsv and .txt files; every
// other kind of file is refused with an *Error that says what it is and
// what to do (an old .xls, a password-protected workbook, an OpenDocument
// or Numbers file, a zip that is no workbook, a truncated or empty file).
//
// A workbook is opened with excelize (stored values, never displayed ones:
// Options.RawCellValue, and explicit unzip size limits against crafted
// files), and the chosen worksheet is then streamed row by row from its
// zip part by the readers of package xlsx. excelize's own row iterator is not used for the
// cells because it drops what the reader needs: whether a cell holds an
// error value or text, its number format (so that dates are known), and
// whether a formula has a saved result. Date serials are converted here,
// minding the 1900 system's phantom 29 February and the 1904 system.
// Everything format-specific sits behind the small table.RowSource
// interface, so a faster reader can replace one implementation.
//
// A formula cell's saved result is its value, unless the file holds none
// (an empty <v> is none) or the workbook marks every saved result as out
// of date (calcPr fullCalcOnLoad): then Slopewise calculates the cell
// itself with excelize's engine when the formula uses only what was
// checked against LibreOffice (xlsx/formulas.go), reading the sheet a second
// time with those values; any other such cell is missing with the reason
// NoCachedValue, Column.Formulas says where each column's formula values
// came from, and Table.FormulaError is the refusal for a column a model
// uses. A sheet's tables (xlsx/tables.go) are read too: a table's totals row
// is never data, and a table can be the data region (Options.Table).
//
// A text file is sniffed for its encoding (UTF-8 with or without a byte
// order mark, UTF-16 with one, else Windows-1252), its delimiter (',' ';'
// tab '|'), and its decimal separator; quoted fields may span lines.
//
// The header row is found as the first row of mostly text, at least half
// as wide as the table, above rows with more numbers; the caller may set
// it. Columns become number, yes/no, category, text, date or empty. Each
// cell that cannot be used is kept as missing with its Reason (blank, an
// error value, a hand-typed marker, text among numbers, a formula without
// a saved result, not a date), and Table.CellRef names any cell as
// `sheet "Visits", cell D17`. Notes tell a person what the reader found
// or did.
//
// # Writing
//
// WriteResults adds a report.Sheet to the workbook as a new sheet with a
// name of its own. The original is only ever replaced by a rename, after
// the new file has been written beside it, re-opened and checked sheet by
// sheet (values and formulas) against the original, and after a
// timestamped backup of the original has been made and read back. Only
// the new sheet's parts are added; excelize re-serialises workbook.xml,
// its relationships, the package's relationships, [Content_Types].xml,
// styles.xml, the theme, calcChain.xml and the document properties, and
// every other part is copied byte for byte. The attributes of the
// original's workbookPr and calcPr that excelize drops are put back
// (save/settings.go) and checked with the rest. Workbooks
// that use a feature excelize would drop are refused in place with the
// feature named, and can be written to a copy (WriteOptions.CopyTo). For a
// text file, a new workbook "<name> results.xlsx" holds the data and the
// results; the text file is never changed.
package workbook
