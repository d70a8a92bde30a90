package table

import (
	"errors"
	"fmt"
	"strings"
)

// Causes of a failed read or write. Each is a whole sentence that says what
// is wrong and what to do; an *Error wraps one of them with the place.
// Test for them with errors.Is.
var (
	ErrNotFound         = errors.New("the file does not exist; check the name and the folder")
	ErrIsFolder         = errors.New("this is a folder, not a file; choose a workbook or a CSV file inside it")
	ErrNoReadAccess     = errors.New("you do not have permission to read this file; ask its owner for access or copy it somewhere you can read it")
	ErrEmptyFile        = errors.New("the file is empty (0 bytes); it may not have finished copying or saving")
	ErrOldExcel         = errors.New("this is an old-style Excel workbook (.xls), which Slopewise does not read; open it in a spreadsheet program and save it as an Excel workbook (.xlsx)")
	ErrEncrypted        = errors.New("this workbook is protected with a password to open; open it in a spreadsheet program, remove the password (or save an unprotected copy) and open that copy")
	ErrOpenDocument     = errors.New("this is an OpenDocument spreadsheet (.ods), which Slopewise does not read; save it as an Excel workbook (.xlsx) or as CSV and open that")
	ErrNumbers          = errors.New("this is an Apple Numbers file, which Slopewise does not read; export it from Numbers as an Excel workbook (.xlsx) or as CSV and open that")
	ErrBinaryWorkbook   = errors.New("this is an Excel binary workbook (.xlsb), which Slopewise does not read; open it in a spreadsheet program and save it as an Excel workbook (.xlsx)")
	ErrNotWorkbook      = errors.New("this is a zip archive but not an Excel workbook; check that you chose the right file")
	ErrDamaged          = errors.New("the workbook is damaged or incomplete (it may be truncated or only partly downloaded); open it in a spreadsheet program, or copy it again from where it came from")
	ErrUnknownFormat    = errors.New("Slopewise cannot tell what kind of file this is; it reads Excel workbooks (.xlsx, .xlsm) and text tables (.csv, .tsv, .txt)")
	ErrTooLarge         = errors.New("the workbook unpacks to more than the size limit Slopewise sets to protect your computer's memory; if the file is genuine, save the sheet you need as CSV and open that")
	ErrNoSheets         = errors.New("the workbook has no worksheets with cells to read")
	ErrSheetNotFound    = errors.New("there is no worksheet with this name; choose one of the workbook's sheets")
	ErrNotWorksheet     = errors.New("this sheet is a chart or macro sheet, not a worksheet with cells; choose another sheet")
	ErrEmptySheet       = errors.New("the sheet has no cells with values; choose the sheet that holds your data")
	ErrNoDataRows       = errors.New("the sheet has a header row but no rows of data below it; check the sheet, or set the header row yourself")
	ErrHeaderOutside    = errors.New("the header row chosen lies below the last row with values; choose a row that holds the column names")
	ErrNotText          = errors.New("the file is not readable text (it holds bytes that no text encoding Slopewise knows uses); if it came from a spreadsheet program, save it again as CSV UTF-8")
	ErrRaggedRow        = errors.New("a row has more values than the header has columns, so values would land under the wrong names; fix the quoting or the delimiter in that row, or add the missing column names")
	ErrBadQuote         = errors.New("a quoted value is not closed or has a stray quote mark; fix the quotes in that row")
	ErrCancelled        = errors.New("reading was cancelled")
	ErrOpenElsewhere    = errors.New("the workbook seems to be open in a spreadsheet program; close it there and try again, or save the results to a copy")
	ErrCannotReplace    = errors.New("the workbook could not be replaced (it may be open in another program, or read-only); close it and try again, or save the results to a copy")
	ErrFolderReadOnly   = errors.New("Slopewise cannot create files in this folder; save the results to a copy in a folder you can write to")
	ErrWouldLose        = errors.New("writing into this workbook would silently drop a feature it uses; save the results to a copy instead (the original stays as it is)")
	ErrCannotRewrite    = errors.New("Slopewise cannot write into a workbook of this kind without breaking it; save it in a spreadsheet program as a normal Excel workbook (.xlsx) first")
	ErrVerifyFailed     = errors.New("the rewritten workbook did not match the original when checked, so nothing was replaced; please report this, and save the results to a copy meanwhile")
	ErrTargetExists     = errors.New("a file with this name already exists; choose another name, or allow Slopewise to replace its own earlier results (the window offers it; on the command line, --replace)")
	ErrSheetNameTaken   = errors.New("the workbook already has a sheet with this name that Slopewise did not write, so it is left alone; choose another name for the results sheet")
	ErrSheetPartTaken   = errors.New("the workbook's internal layout leaves no safe place for a new sheet; save it in a spreadsheet program and try again")
	ErrNotWritableKind  = errors.New("results can be written into Excel workbooks (.xlsx, .xlsm) or beside a CSV file; choose one of those")
	ErrSameFile         = errors.New("the copy would overwrite the original workbook; choose another name for the copy")
	ErrUnusual          = errors.New("the workbook holds something that spreadsheet programs do not write, so Slopewise will not guess what it means; open the workbook in a spreadsheet program and save it again, which writes it in the usual form")
	ErrWriterStopped    = errors.New("the workbook library that Slopewise writes with stopped on an internal error while adding the results, so nothing was changed; save the results to a copy, or save the workbook again in a spreadsheet program and retry (and please report this, with the file if you can)")
	ErrTooManyColumns   = errors.New("the file has more columns than Slopewise reads; keep only the columns the analysis needs and open that")
	ErrTooManyCells     = errors.New("the data have more cells than Slopewise holds in memory; keep only the columns the analysis needs (a CSV file of them is read in passes, not held whole) and open that")
	ErrNoSpace          = errors.New("the disk is full, so the results could not be written (nothing was changed); free some space, or save the results to a copy on another disk")
	ErrNameTooLong      = errors.New("the file's name, with the temporary or backup name Slopewise gives it while saving, is longer than the system allows (nothing was changed); save the results to a copy with a shorter name, or move the workbook to a shorter path")
	ErrDiskReadOnly     = errors.New("the disk or share holding this folder is read-only (nothing was changed); save the results to a copy on a disk you can write to")
	ErrReadOnlyFile     = errors.New("this workbook is read-only (its permissions do not allow changes), so Slopewise will not replace it; save the results to a copy, or make the file writable first")
	ErrChangedSinceRead = errors.New("the workbook changed on disk after Slopewise read it, so the results, made from the earlier version, were not written (nothing was changed); run the analysis again")
	ErrTableNotFound    = errors.New("there is no table with this name; choose one of the tables listed, or read the whole sheet")
	ErrFormulaNoResult  = errors.New("this column holds formulas without a usable saved result, so their values are unknown; open the workbook in a spreadsheet program and save it (which calculates every formula), or choose another column")
)

// Error is a failed read or write of a workbook: the cause, and where it
// happened as precisely as known. Cause is one of the Err variables above;
// Detail adds specifics (a line number, the features found); Underlying is
// the error from the operating system or a library, kept for errors.Is/As.
type Error struct {
	Path       string
	Sheet      string
	Cell       string // a cell reference such as "D17", or a CSV line
	Column     string // the column's name, when one applies
	Cause      error
	Detail     string
	Underlying error
}

// Error reads as: where, then what is wrong and what to do, then details.
func (e *Error) Error() string {
	var b strings.Builder
	var where []string
	if e.Path != "" {
		where = append(where, fmt.Sprintf("%q", e.Path))
	}
	if e.Sheet != "" {
		where = append(where, fmt.Sprintf("sheet %q", e.Sheet))
	}
	if e.Cell != "" {
		where = append(where, e.Cell)
	}
	if e.Column != "" {
		where = append(where, fmt.Sprintf("column %q", e.Column))
	}
	if len(where) > 0 {
		b.WriteString(strings.Join(where, ", "))
		b.WriteString(": ")
	}
	if e.Cause != nil {
		b.WriteString(e.Cause.Error())
	}
	if e.Detail != "" {
		b.WriteString(" (")
		b.WriteString(e.Detail)
		b.WriteString(")")
	}
	if e.Underlying != nil && e.Cause == nil {
		b.WriteString(e.Underlying.Error())
	}
	return b.String()
}

// Unwrap gives both the cause and the underlying error to errors.Is and
// errors.As.
func (e *Error) Unwrap() []error {
	var errs []error
	if e.Cause != nil {
		errs = append(errs, e.Cause)
	}
	if e.Underlying != nil {
		errs = append(errs, e.Underlying)
	}
	return errs
}

// Fail builds an *Error for path with a cause and optional detail.
func Fail(path string, cause error, detail string) *Error {
	return &Error{Path: path, Cause: cause, Detail: detail}
}

// FailWrap is fail keeping the underlying error.
func FailWrap(path string, cause error, underlying error) *Error {
	return &Error{Path: path, Cause: cause, Underlying: underlying}
}

// Located gives a reading's error the file and sheet where it happened,
// unless it names them already; an error of another kind is wrapped.
func Located(err error, path, sheet string) error {
	var e *Error
	if errors.As(err, &e) {
		if e.Path == "" {
			e.Path = path
		}
		if e.Sheet == "" {
			e.Sheet = sheet
		}
		return e
	}
	return &Error{Path: path, Sheet: sheet, Underlying: err}
}
