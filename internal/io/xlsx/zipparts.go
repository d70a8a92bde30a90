package xlsx

import (
	"archive/zip"
	"io"
)

// EmptyWorksheet stands in for a big worksheet while excelize adds the
// results sheet.
const EmptyWorksheet = `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData/></worksheet>`

// CopyRaw copies a zip entry without recompressing it.
func CopyRaw(zw *zip.Writer, f *zip.File) error {
	r, err := f.OpenRaw()
	if err != nil {
		return err
	}
	hdr := f.FileHeader
	w, err := zw.CreateRaw(&hdr)
	if err != nil {
		return err
	}
	_, err = io.Copy(w, r)
	return err
}
