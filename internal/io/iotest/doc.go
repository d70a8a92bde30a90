// Package iotest holds what the tests of the reading and saving packages
// share: workbooks built part by part by hand (RawBook, SimpleBook,
// VisitsBook), zip surgery (ReplacePart, RewriteZip), the results sheet
// written in tests (ResultsGrid), the generated benchmark files and
// messy CSV files, LibreOffice for conversions (Soffice), and the check
// that two tables are the same (SameTables). Only tests import it.
package iotest
