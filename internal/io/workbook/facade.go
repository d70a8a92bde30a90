package workbook

import (
	"context"
	"io/fs"

	"slopewise/internal/io/delimited"
	"slopewise/internal/io/draw"
	"slopewise/internal/io/save"
	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
	"slopewise/internal/report"
)

// The names a caller needs, from the packages that hold them. Each is
// the same type, value or function as there; see each package for what
// it means.

// The table read (package table).
type (
	Table        = table.Table
	Column       = table.Column
	Kind         = table.Kind
	Reason       = table.Reason
	Note         = table.Note
	Problem      = table.Problem
	FormulaCount = table.FormulaCount
	TextFormat   = table.TextFormat
	DataTable    = table.DataTable
	Options      = table.Options
	Error        = table.Error
)

// Column kinds.
const (
	Empty    = table.Empty
	Number   = table.Number
	YesNo    = table.YesNo
	Category = table.Category
	Text     = table.Text
	Date     = table.Date
)

// Reasons a cell is missing.
const (
	Present       = table.Present
	Blank         = table.Blank
	ErrorValue    = table.ErrorValue
	Marker        = table.Marker
	TextInNumbers = table.TextInNumbers
	NoCachedValue = table.NoCachedValue
	BadDate       = table.BadDate
)

// Reading options.
const (
	NoHeader                 = table.NoHeader
	DefaultUnzipSizeLimit    = table.DefaultUnzipSizeLimit
	DefaultUnzipXMLSizeLimit = table.DefaultUnzipXMLSizeLimit
)

// Causes of a failed read or write (package table); test with errors.Is.
var (
	ErrNotFound         = table.ErrNotFound
	ErrIsFolder         = table.ErrIsFolder
	ErrNoReadAccess     = table.ErrNoReadAccess
	ErrEmptyFile        = table.ErrEmptyFile
	ErrOldExcel         = table.ErrOldExcel
	ErrEncrypted        = table.ErrEncrypted
	ErrOpenDocument     = table.ErrOpenDocument
	ErrNumbers          = table.ErrNumbers
	ErrBinaryWorkbook   = table.ErrBinaryWorkbook
	ErrNotWorkbook      = table.ErrNotWorkbook
	ErrDamaged          = table.ErrDamaged
	ErrUnknownFormat    = table.ErrUnknownFormat
	ErrTooLarge         = table.ErrTooLarge
	ErrNoSheets         = table.ErrNoSheets
	ErrSheetNotFound    = table.ErrSheetNotFound
	ErrNotWorksheet     = table.ErrNotWorksheet
	ErrEmptySheet       = table.ErrEmptySheet
	ErrNoDataRows       = table.ErrNoDataRows
	ErrHeaderOutside    = table.ErrHeaderOutside
	ErrNotText          = table.ErrNotText
	ErrRaggedRow        = table.ErrRaggedRow
	ErrBadQuote         = table.ErrBadQuote
	ErrCancelled        = table.ErrCancelled
	ErrOpenElsewhere    = table.ErrOpenElsewhere
	ErrCannotReplace    = table.ErrCannotReplace
	ErrFolderReadOnly   = table.ErrFolderReadOnly
	ErrWouldLose        = table.ErrWouldLose
	ErrCannotRewrite    = table.ErrCannotRewrite
	ErrVerifyFailed     = table.ErrVerifyFailed
	ErrTargetExists     = table.ErrTargetExists
	ErrSheetNameTaken   = table.ErrSheetNameTaken
	ErrSheetPartTaken   = table.ErrSheetPartTaken
	ErrNotWritableKind  = table.ErrNotWritableKind
	ErrSameFile         = table.ErrSameFile
	ErrUnusual          = table.ErrUnusual
	ErrWriterStopped    = table.ErrWriterStopped
	ErrTooManyColumns   = table.ErrTooManyColumns
	ErrTooManyCells     = table.ErrTooManyCells
	ErrNoSpace          = table.ErrNoSpace
	ErrNameTooLong      = table.ErrNameTooLong
	ErrDiskReadOnly     = table.ErrDiskReadOnly
	ErrReadOnlyFile     = table.ErrReadOnlyFile
	ErrChangedSinceRead = table.ErrChangedSinceRead
	ErrTableNotFound    = table.ErrTableNotFound
	ErrFormulaNoResult  = table.ErrFormulaNoResult
	ErrChangedWhileRead = delimited.ErrChangedWhileRead
)

// A workbook's sheets (package xlsx).
type SheetInfo = xlsx.SheetInfo

// Sheets lists a workbook's sheets in tab order; a text file has one
// sheet with an empty name (xlsx.Sheets).
func Sheets(path string) ([]SheetInfo, error) { return xlsx.Sheets(path) }

// SheetsCounted is Sheets with the rows of the sheets count names counted
// (xlsx.SheetsCounted).
func SheetsCounted(path string, count func(name string) bool) ([]SheetInfo, error) {
	return xlsx.SheetsCounted(path, count)
}

// A text file read in passes (package delimited).
type Stream = delimited.Stream

// OpenStream surveys a delimited text file for streamed reading
// (delimited.OpenStream).
func OpenStream(ctx context.Context, path string, opts Options) (*Stream, error) {
	return delimited.OpenStream(ctx, path, opts)
}

// Writing results (packages save and draw).
type (
	WriteOptions = save.WriteOptions
	Written      = save.Written
	CopyData     = save.CopyData
)

// How much of a text file's data the results workbook holds.
const (
	CopyDataAuto         = save.CopyDataAuto
	CopyDataAlways       = save.CopyDataAlways
	CopyDataNever        = save.CopyDataNever
	DefaultCopyDataLines = save.DefaultCopyDataLines
)

// Names of the sheets Slopewise writes, and the marker of its run spec.
const (
	DefaultSheetName = draw.DefaultSheetName
	DataSheetName    = save.DataSheetName
	SpecMarker       = draw.SpecMarker
)

// WriteResults adds a results sheet to a workbook, or writes a results
// workbook beside a text file (save.WriteResults).
func WriteResults(src string, sheet *report.Sheet, opts WriteOptions) (*Written, error) {
	return save.WriteResults(src, sheet, opts)
}

// WriteWhole writes data to a new file at path, whole or not at all: to
// a temporary name beside it, synced, then renamed; an existing file is
// not replaced (save.WriteWhole).
func WriteWhole(path string, data []byte, perm fs.FileMode) error {
	return save.WriteWhole(path, data, perm)
}

// ResultsPathFor is where the workbook for a text source goes by
// default: "<name> results.xlsx" in the same folder (save.ResultsPathFor).
func ResultsPathFor(src string) string { return save.ResultsPathFor(src) }

// IsTextName reports whether a file name has a text file's extension,
// which a results workbook must not take (save.IsTextName).
func IsTextName(path string) bool { return save.IsTextName(path) }

// ReadSpec returns the run spec stored in a results sheet that Slopewise
// wrote; nil and no error when the sheet holds none (save.ReadSpec).
func ReadSpec(path, sheet string) ([]byte, error) { return save.ReadSpec(path, sheet) }
