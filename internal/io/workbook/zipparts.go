package workbook

import (
	"archive/zip"
	"io"
)

// emptyWorksheet stands in for a big worksheet while excelize adds the
// results sheet.
const emptyWorksheet = `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData/></worksheet>`

// copyRaw copies a zip entry without recompressing it.
func copyRaw(zw *zip.Writer, f *zip.File) error {
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
