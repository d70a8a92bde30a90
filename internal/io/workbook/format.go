package workbook

import (
	"archive/zip"
	"bytes"
	"errors"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/richardlehane/mscfb"
)

// format is what a file turned out to be, judged by its first bytes and,
// for text, by its name.
type format int

const (
	formatUnknown format = iota
	formatXLSX           // Office Open XML workbook, .xlsx or .xlsm
	formatText           // delimited text: .csv, .tsv, .txt
)

// Signatures of the containers we meet. The OLE compound file signature
// (used by .xls and by password-encrypted .xlsx alike) is from the
// "[MS-CFB] Compound File Binary File Format" specification, section 2.2;
// the zip local header signature from the PKWARE APPNOTE, section 4.3.7.
var (
	oleSignature = []byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}
	zipSignature = []byte{'P', 'K', 0x03, 0x04}
	// An empty zip archive holds only the end-of-central-directory record.
	zipEmptySignature = []byte{'P', 'K', 0x05, 0x06}
)

// sniff opens path and decides its format, returning a refusal for every
// kind of file that Slopewise does not read.
func sniff(path string) (format, error) {
	info, err := os.Stat(path)
	if err != nil {
		return formatUnknown, statError(path, err)
	}
	if info.IsDir() {
		return formatUnknown, fail(path, ErrIsFolder, "")
	}
	if info.Size() == 0 {
		return formatUnknown, fail(path, ErrEmptyFile, "")
	}
	f, err := os.Open(path)
	if err != nil {
		return formatUnknown, statError(path, err)
	}
	defer f.Close()
	head := make([]byte, 8)
	n, _ := io.ReadFull(f, head)
	head = head[:n]
	ext := strings.ToLower(filepath.Ext(path))
	switch {
	case bytes.HasPrefix(head, oleSignature):
		return formatUnknown, classifyOLE(path, f)
	case bytes.HasPrefix(head, zipSignature) || bytes.HasPrefix(head, zipEmptySignature):
		return classifyZip(path, f, info.Size())
	}
	switch ext {
	case ".csv", ".tsv", ".txt", ".tab":
		return formatText, nil
	case ".xlsx", ".xlsm", ".xltx", ".xltm":
		// A workbook name without a zip inside: damaged or mislabelled.
		return formatUnknown, fail(path, ErrDamaged, "it does not start like a workbook")
	case ".xls":
		return formatUnknown, fail(path, ErrOldExcel, "")
	case ".ods":
		return formatUnknown, fail(path, ErrOpenDocument, "")
	case ".numbers":
		return formatUnknown, fail(path, ErrNumbers, "")
	}
	// Unknown extension: accept it as text when the start looks like text.
	if looksLikeText(head) {
		return formatText, nil
	}
	return formatUnknown, fail(path, ErrUnknownFormat, "")
}

// statError turns an operating-system error into our words.
func statError(path string, err error) error {
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return failWrap(path, ErrNotFound, err)
	case errors.Is(err, fs.ErrPermission):
		return failWrap(path, ErrNoReadAccess, err)
	}
	return &Error{Path: path, Underlying: err}
}

// looksLikeText reports whether the first bytes have no control characters
// other than tab, CR and LF.
func looksLikeText(b []byte) bool {
	for _, c := range b {
		if c < 0x20 && c != '\t' && c != '\r' && c != '\n' {
			return false
		}
	}
	return true
}

// classifyOLE tells an encrypted Office Open XML package from an old binary
// workbook. Both are OLE compound files; an encrypted package holds the
// streams "EncryptionInfo" and "EncryptedPackage" ([MS-OFFCRYPTO] section
// 2.3.4.1), an .xls holds a "Workbook" (or, before Excel 97, "Book") stream
// ([MS-XLS] section 2.1.2).
func classifyOLE(path string, r io.ReaderAt) error {
	doc, err := mscfb.New(r)
	if err != nil {
		return fail(path, ErrDamaged, "an OLE container that cannot be read")
	}
	var encrypted, binary bool
	for entry, err := doc.Next(); err == nil; entry, err = doc.Next() {
		switch entry.Name {
		case "EncryptedPackage", "EncryptionInfo":
			encrypted = true
		case "Workbook", "Book":
			binary = true
		}
	}
	switch {
	case encrypted:
		return fail(path, ErrEncrypted, "")
	case binary:
		return fail(path, ErrOldExcel, "")
	}
	return fail(path, ErrUnknownFormat, "an OLE container holding neither a workbook nor an encrypted package, such as a Word document")
}

// classifyZip tells a workbook from the other zip-based formats.
func classifyZip(path string, r io.ReaderAt, size int64) (format, error) {
	zr, err := zip.NewReader(r, size)
	if err != nil {
		return formatUnknown, &Error{Path: path, Cause: ErrDamaged, Underlying: err}
	}
	var hasWorkbook, hasContentTypes bool
	for _, f := range zr.File {
		name := strings.ToLower(strings.ReplaceAll(f.Name, "\\", "/"))
		switch {
		case name == "[content_types].xml":
			hasContentTypes = true
		case name == "xl/workbook.xml" || name == "xl/workbook2.xml":
			hasWorkbook = true
		case name == "mimetype":
			if isODS(f) {
				return formatUnknown, fail(path, ErrOpenDocument, "")
			}
		case name == "index/document.iwa" || strings.HasPrefix(name, "index/") && strings.HasSuffix(name, ".iwa"):
			return formatUnknown, fail(path, ErrNumbers, "")
		case name == "xl/workbook.bin":
			return formatUnknown, fail(path, ErrBinaryWorkbook, "")
		}
	}
	if !hasContentTypes || !hasWorkbook {
		if hasContentTypes && hasPart(zr, "word/document.xml") {
			return formatUnknown, fail(path, ErrNotWorkbook, "it is a Word document")
		}
		return formatUnknown, fail(path, ErrNotWorkbook, "")
	}
	return formatXLSX, nil
}

func hasPart(zr *zip.Reader, name string) bool {
	for _, f := range zr.File {
		if strings.EqualFold(f.Name, name) {
			return true
		}
	}
	return false
}

// isODS reads the OpenDocument mimetype entry (OpenDocument v1.3 part 2,
// section 3.3).
func isODS(f *zip.File) bool {
	rc, err := f.Open()
	if err != nil {
		return false
	}
	defer rc.Close()
	b, _ := io.ReadAll(io.LimitReader(rc, 100))
	return strings.HasPrefix(string(b), "application/vnd.oasis.opendocument")
}
