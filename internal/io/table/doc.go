// Package table holds what a reading gives and how rows become it: a
// Table of named, typed columns, each cell's value or the reason it is
// missing (Reason), the notes a person should know (Note), the options
// of a reading (Options), and the errors every reading and writing
// returns (*Error and its Err causes, errors.go).
//
// It owns the typing rules common to every file format: a reader hands
// rows of raw cells through RowSource (cells.go); Build finds the header
// row (the first row of mostly text, at least half as wide as the table,
// above rows with more numbers), keeps a workbook's rows to the region of
// its tables (region.go), and decides each column's kind — number, yes/no,
// category, text, date or empty — keeping every unusable cell as missing
// with its reason (build.go, rows.go).
//
// It never opens a file and knows no file format: packages xlsx and
// delimited read files and hand it rows; it imports no other package of
// the reading and writing side.
package table
