package save

import (
	"context"

	"slopewise/internal/io/delimited"
	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// Read reads a file back as workbook.Read does, which these tests cannot
// import (it imports this package): by its kind, with the workbook
// reader or the text reader.
func Read(ctx context.Context, path string, opts table.Options) (*table.Table, error) {
	f, err := sniff.File(path)
	if err != nil {
		return nil, err
	}
	if f == sniff.XLSX {
		return xlsx.Read(ctx, path, opts)
	}
	return delimited.Read(ctx, path, opts)
}
