package sniff

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

	"slopewise/internal/io/table"
)

// Kind is what a file turned out to be, judged by its first bytes and,
// for text, by its name.
type Kind int

const (
	Unknown Kind = iota
	XLSX         // Office Open XML workbook, .xlsx or .xlsm
	Text         // delimited text: .csv, .tsv, .txt
)

// Signatures of the containers we meet. The OLE compound file signature
// (used by .xls and by password-encrypted .xlsx alike) is from the
// "[MS-CFB] Compound File Binary File Format" specification, section 2.2;
// the zip local header signature from the PKWARE APPNOTE, section 4.3.7.
var (
	OleSignature = []byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}
	zipSignature = []byte{'P', 'K', 0x03, 0x04}
	// An empty zip archive holds only the end-of-central-directory record.
	zipEmptySignature = []byte{'P', 'K', 0x05, 0x06}
)

// File opens path and decides its format, returning a refusal for every
// kind of file that Slopewise does not read.
func File(path string) (Kind, error) {
	info, err := os.Stat(path)
	if err != nil {
		return Unknown, StatError(path, err)
	}
	if info.IsDir() {
		return Unknown, table.Fail(path, table.ErrIsFolder, "")
	}
	if info.Size() == 0 {
		return Unknown, table.Fail(path, table.ErrEmptyFile, "")
	}
	f, err := os.Open(path)
	if err != nil {
		return Unknown, StatError(path, err)
	}
	defer f.Close()
	head := make([]byte, 8)
	n, _ := io.ReadFull(f, head)
	head = head[:n]
	ext := strings.ToLower(filepath.Ext(path))
	switch {
	case bytes.HasPrefix(head, OleSignature):
		return Unknown, classifyOLE(path, f)
	case bytes.HasPrefix(head, zipSignature) || bytes.HasPrefix(head, zipEmptySignature):
		return classifyZip(path, f, info.Size())
	}
	switch ext {
	case ".csv", ".tsv", ".txt", ".tab":
		return Text, nil
	case ".xlsx", ".xlsm", ".xltx", ".xltm":
		// A workbook name without a zip inside: damaged or mislabelled.
		return Unknown, table.Fail(path, table.ErrDamaged, "it does not start like a workbook")
	case ".xls":
		return Unknown, table.Fail(path, table.ErrOldExcel, "")
	case ".ods":
		return Unknown, table.Fail(path, table.ErrOpenDocument, "")
	case ".numbers":
		return Unknown, table.Fail(path, table.ErrNumbers, "")
	}
	// Unknown extension: accept it as text when the start looks like text.
	if looksLikeText(head) {
		return Text, nil
	}
	return Unknown, table.Fail(path, table.ErrUnknownFormat, "")
}

// StatError turns an operating-system error into our words.
func StatError(path string, err error) error {
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return table.FailWrap(path, table.ErrNotFound, err)
	case errors.Is(err, fs.ErrPermission):
		return table.FailWrap(path, table.ErrNoReadAccess, err)
	}
	return &table.Error{Path: path, Underlying: err}
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
		return table.Fail(path, table.ErrDamaged, "an OLE container that cannot be read")
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
		return table.Fail(path, table.ErrEncrypted, "")
	case binary:
		return table.Fail(path, table.ErrOldExcel, "")
	}
	return table.Fail(path, table.ErrUnknownFormat, "an OLE container holding neither a workbook nor an encrypted package, such as a Word document")
}

// classifyZip tells a workbook from the other zip-based formats.
func classifyZip(path string, r io.ReaderAt, size int64) (Kind, error) {
	zr, err := zip.NewReader(r, size)
	if err != nil {
		return Unknown, &table.Error{Path: path, Cause: table.ErrDamaged, Underlying: err}
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
				return Unknown, table.Fail(path, table.ErrOpenDocument, "")
			}
		case name == "index/document.iwa" || strings.HasPrefix(name, "index/") && strings.HasSuffix(name, ".iwa"):
			return Unknown, table.Fail(path, table.ErrNumbers, "")
		case name == "xl/workbook.bin":
			return Unknown, table.Fail(path, table.ErrBinaryWorkbook, "")
		}
	}
	if !hasContentTypes || !hasWorkbook {
		if hasContentTypes && hasPart(zr, "word/document.xml") {
			return Unknown, table.Fail(path, table.ErrNotWorkbook, "it is a Word document")
		}
		return Unknown, table.Fail(path, table.ErrNotWorkbook, "")
	}
	return XLSX, nil
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
