// Package sniff tells what a file is, from its first bytes and, for
// text, its name: an Excel workbook (XLSX), a delimited text table
// (Text), or one of the kinds Slopewise refuses — an old .xls, a
// password-protected workbook, an OpenDocument or Numbers file, an Excel
// binary workbook, a zip that is no workbook, an empty or missing file —
// with the refusal worded as a table.Error that says what to do.
//
// It never parses a workbook or a table; it reads only what it needs to
// decide.
package sniff
