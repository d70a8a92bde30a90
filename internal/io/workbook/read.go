package workbook

import (
	"context"

	"slopewise/internal/io/delimited"
	"slopewise/internal/io/sniff"
	"slopewise/internal/io/xlsx"
)

// Read reads one sheet of a workbook or a text file into a Table: what
// the file is decides the reader (xlsx.Read for a workbook, delimited.Read
// for a text table), and any other kind of file is refused with an
// *Error that says what it is and what to do. The file is only read,
// never changed.
func Read(ctx context.Context, path string, opts Options) (*Table, error) {
	f, err := sniff.File(path)
	if err != nil {
		return nil, err
	}
	if f == sniff.XLSX {
		return xlsx.Read(ctx, path, opts)
	}
	return delimited.Read(ctx, path, opts)
}
