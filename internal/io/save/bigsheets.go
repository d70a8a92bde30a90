package save

import (
	"archive/zip"
	"bufio"
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/io/xlsx"
)

// bigSheet is the unpacked size from which a worksheet is kept from
// excelize when the results are written.
var bigSheet uint64 = 8 << 20

// buildKeepingSheets is buildInTemp for a workbook whose worksheets may be
// big: excelize unpacks, and on saving packs again, every worksheet it
// opens (v2.11.1 source, lib.go, ReadZipReader; file.go, writeToZip), twice
// over when there are two stages, though it changes none of them. So each
// worksheet part larger than bigSheet is replaced by an empty worksheet
// for excelize, and its original entry is put back into the result still
// packed. When that cannot be done (excelize renamed or dropped such a
// part) the workbook is built whole with buildInTemp instead.
func buildKeepingSheets(target string, base []byte, limit, limitXML int64, stages ...func(*excelize.File) error) (string, error) {
	zr, err := zip.NewReader(bytes.NewReader(base), int64(len(base)))
	if err != nil {
		return buildInTemp(target, base, limit, limitXML, stages...)
	}
	stubbed := map[string]*zip.File{}
	var small bytes.Buffer
	zw := zip.NewWriter(&small)
	for _, f := range zr.File {
		if xlsx.IsWorksheetPart(f.Name) && f.UncompressedSize64 > bigSheet {
			stubbed[strings.ToLower(f.Name)] = f
			w, err := zw.CreateHeader(&zip.FileHeader{Name: f.Name, Method: zip.Deflate, Modified: f.Modified})
			if err == nil {
				_, err = io.WriteString(w, xlsx.EmptyWorksheet)
			}
			if err != nil {
				return buildInTemp(target, base, limit, limitXML, stages...)
			}
			continue
		}
		if err := xlsx.CopyRaw(zw, f); err != nil {
			return buildInTemp(target, base, limit, limitXML, stages...)
		}
	}
	if len(stubbed) == 0 || zw.Close() != nil {
		return buildInTemp(target, base, limit, limitXML, stages...)
	}
	tmp, err := buildInTemp(target, small.Bytes(), limit, limitXML, stages...)
	if err != nil {
		return "", err
	}
	if err := putBack(tmp, stubbed); err != nil {
		os.Remove(tmp)
		return buildInTemp(target, base, limit, limitXML, stages...)
	}
	return tmp, nil
}

// putBack rewrites the workbook at tmp with the stubbed parts' original
// entries, copied without unpacking.
func putBack(tmp string, stubbed map[string]*zip.File) error {
	zr, err := zip.OpenReader(tmp)
	if err != nil {
		return err
	}
	defer zr.Close()
	return replaceZipFile(tmp, zr, func(zw *zip.Writer) error {
		found := 0
		for _, f := range zr.File {
			var err error
			if orig, ok := stubbed[strings.ToLower(f.Name)]; ok {
				found++
				err = xlsx.CopyRaw(zw, orig)
			} else {
				err = xlsx.CopyRaw(zw, f)
			}
			if err != nil {
				return err
			}
		}
		if found != len(stubbed) {
			return fmt.Errorf("%d of %d worksheets kept their part", found, len(stubbed))
		}
		return nil
	})
}

// replaceZipFile replaces the file at path by the zip archive that write
// makes: written to a temporary file beside it, synced, then renamed
// over it; on any failure path is left as it was. src, the reader of the
// file at path that write copies from, is closed before the rename:
// Windows renames over no file that is open (found under Wine).
func replaceZipFile(path string, src io.Closer, write func(zw *zip.Writer) error) error {
	out, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+"-*")
	if err != nil {
		return err
	}
	defer os.Remove(out.Name()) // a no-op once renamed
	bw := bufio.NewWriterSize(out, 1<<20)
	zw := zip.NewWriter(bw)
	err = write(zw)
	if err == nil {
		err = zw.Close()
	}
	if err == nil {
		err = bw.Flush()
	}
	if err == nil {
		err = out.Sync()
	}
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return err
	}
	src.Close()
	return os.Rename(out.Name(), path)
}
