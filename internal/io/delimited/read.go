package delimited

import (
	"context"
	"os"

	"slopewise/internal/io/table"
)

// Read reads a delimited text file into a Table, sniffing its encoding,
// delimiter and decimal separator. The file is only read, never changed.
func Read(ctx context.Context, path string, opts table.Options) (*table.Table, error) {
	info, _ := os.Stat(path)
	tbl := &table.Table{Path: path, Source: info}
	src, tf, err := openText(path)
	tbl.Text = tf
	dc := false
	if tf != nil {
		dc = tf.DecimalComma
		if tf.Encoding != "UTF-8" {
			tbl.Notes = append(tbl.Notes, table.Note{Text: "the file is not UTF-8; it was read as " + tf.Encoding + " text"})
		}
	}
	if err != nil {
		return nil, err
	}
	defer src.Close()
	if err := table.Build(ctx, src, tbl, opts, dc); err != nil {
		return nil, table.Located(err, path, "")
	}
	return tbl, nil
}
