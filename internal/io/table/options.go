package table

// Options steer Read. The zero value reads the first worksheet and finds
// the header row by itself.
type Options struct {
	// Sheet is the worksheet to read; empty means the first visible one.
	// Ignored for text files.
	Sheet string
	// HeaderRow is the 1-based row holding the column names. Zero means
	// find it: the first row of mostly text, at least half as wide as the
	// table, above rows with more numbers in them. NoHeader means the sheet
	// has no header row; columns are then named after their letters.
	HeaderRow int
	// UnzipSizeLimit bounds the total unpacked size of a workbook and
	// UnzipXMLSizeLimit the size of one worksheet held in memory (larger
	// ones are unpacked to a temporary file). Zero means the defaults
	// below. A file past either is refused with ErrTooLarge.
	UnzipSizeLimit    int64
	UnzipXMLSizeLimit int64
	// Progress, when set, is called with the number of rows read so far,
	// every few thousand rows.
	Progress func(rows int)
	// Table names a table of the workbook (DataTable) to read as the data
	// region: its header row and its data rows, without its totals row
	// and without what lies outside it. Without Sheet, the sheet that
	// holds it. Empty means the whole sheet (tables' totals rows always
	// left out).
	Table string
}

// NoHeader is the HeaderRow value for a sheet without column names.
const NoHeader = -1

// Default size limits. A genuine 1,000,000-row sheet of twelve columns
// unpacks to well under 1 GiB; a crafted "zip bomb" unpacks to far more.
const (
	DefaultUnzipSizeLimit    = 4 << 30
	DefaultUnzipXMLSizeLimit = 64 << 20
)

// HeaderScanRows is how many non-empty rows are held back to find the
// header row.
const HeaderScanRows = 50
