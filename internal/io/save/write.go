package save

import (
	"archive/zip"
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"strconv"
	"strings"
	"time"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/report"

	"slopewise/internal/io/draw"
	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// WriteOptions steer WriteResults.
type WriteOptions struct {
	// CopyTo, when set, is where the workbook with the results goes; the
	// source file is then only read. For a text source it replaces the
	// default "<name> results.xlsx" beside the source.
	CopyTo string
	// Replace allows replacing what Slopewise wrote before: its own
	// earlier results sheet of the same name, or (with CopyTo, or for a
	// text source) an existing target file, which is kept as a backup.
	// A sheet that Slopewise did not write is never replaced.
	Replace bool
	// Now stamps backups; time.Now when nil.
	Now func() time.Time
	// UnzipSizeLimit and UnzipXMLSizeLimit as in Options.
	UnzipSizeLimit    int64
	UnzipXMLSizeLimit int64
	// CopyData says whether the workbook written beside a text source
	// holds a copy of its data on a sheet of its own; by default only
	// when the file has no more than CopyDataLines lines (physical lines:
	// a header, title lines and line breaks inside quotes count too).
	CopyData CopyData
	// CopyDataLines replaces DefaultCopyDataLines when positive.
	CopyDataLines int
	// Expect is the file as it was when its data were read
	// (Table.Source). Written in place, a workbook that is no longer that
	// version is refused: the results would be of other data.
	Expect fs.FileInfo
	// KeepColumns names the columns the analysis used. When a text
	// source has more columns than a sheet holds (16,384), the data
	// sheet beside it holds these only.
	KeepColumns []string
}

// CopyData is the choice of copying a text source's data into the
// workbook written beside it.
type CopyData int

const (
	// CopyDataAuto copies the data when the text file is small enough
	// for a spreadsheet program to open the copy quickly; a bigger file
	// stays the data's only home and the workbook holds the results.
	CopyDataAuto CopyData = iota
	// CopyDataAlways copies the data whatever the file's size (up to the
	// rows a sheet holds).
	CopyDataAlways
	// CopyDataNever writes the results only.
	CopyDataNever
)

// DefaultCopyDataLines is the most lines a text file may have for its
// data to be copied into the results workbook by default (100,000 rows
// below a header line): at 100,000 rows of a dozen columns the copy is a few megabytes and opens in
// seconds; a million-row copy takes a spreadsheet program much longer to
// open than the results are worth waiting for, doubles the disk the data
// take, and took more time to write than the whole analysis.
const DefaultCopyDataLines = 100_001

// Written says what WriteResults did.
type Written struct {
	// Path is the file that holds the results sheet.
	Path string
	// Sheet is the results sheet's name, which may differ from the name
	// asked for when that was taken.
	Sheet string
	// Backup is the copy of the file that was replaced, if any.
	Backup string
	// Lost lists the features of the source that the copy does not keep
	// (only when writing a copy; in place such a source is refused).
	Lost []string
	// Notes are things about the save a person should know.
	Notes []string
	// Cleaned lists the leftover temporary files of earlier saves that
	// were removed from the folder (cleanDebris).
	Cleaned []string
	// DataNotCopied is set when the workbook written beside a text
	// source holds the results but not a copy of the data: positive (the
	// limit's line count plus one) when the file has more lines than the
	// limit, -1 when CopyDataNever asked for it.
	DataNotCopied int
}

// WriteResults adds the results sheet to the workbook at src, or, for a
// text source, writes a new workbook beside it holding the data and the
// results. Nothing but the new sheet changes: the file is written to a
// temporary file in the same folder, re-opened and checked sheet by sheet
// against the original, the original is copied to a timestamped backup,
// and only then is the temporary file renamed into place. On any failure
// the original's bytes are as they were.
func WriteResults(src string, sheet *report.Sheet, opts WriteOptions) (w *Written, err error) {
	if opts.Now == nil {
		opts.Now = time.Now
	}
	f, err := sniff.File(src)
	if err != nil {
		return nil, err
	}
	target := opts.CopyTo
	if target == "" {
		target = src
	}
	cleaned := cleanDebris(filepath.Dir(target), opts.Now())
	defer func() {
		if w != nil {
			w.Cleaned = cleaned
		}
	}()
	switch f {
	case sniff.XLSX:
		if IsTextName(src) && opts.CopyTo == "" {
			// A workbook named like a text file: read as what it is, and
			// written beside it as a text file's results would be, so
			// that a file called .csv never becomes a workbook in place.
			opts.CopyTo = ResultsPathFor(src)
		}
		return writeWorkbook(src, sheet, opts)
	case sniff.Text:
		return writeBesideText(src, sheet, opts)
	}
	return nil, table.Fail(src, table.ErrNotWritableKind, "")
}

// debrisName matches the temporary files Slopewise makes beside a file
// it writes: ".NAME.slopewise-N.tmp" (the new workbook), with "-backup"
// (a backup being written), and with "-M" after it (a rewrite of one of
// these).
var debrisName = regexp.MustCompile(`^\..+\.slopewise-(backup-)?[0-9]+\.tmp(-[0-9]+)?$`)

// debrisAge is how old a leftover must be before it is removed: no save
// takes a day, so an older one is no other run's work in progress.
const debrisAge = 24 * time.Hour

// cleanDebris removes from dir the leftovers of saves that were stopped
// (a killed process cannot remove its temporary files): only regular
// files named as Slopewise names them, older than debrisAge, that are
// zip archives as every file it writes is. It returns their names.
func cleanDebris(dir string, now time.Time) []string {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil
	}
	var removed []string
	for _, e := range entries {
		if !e.Type().IsRegular() || !debrisName.MatchString(e.Name()) {
			continue
		}
		info, err := e.Info()
		if err != nil || now.Sub(info.ModTime()) < debrisAge {
			continue
		}
		p := filepath.Join(dir, e.Name())
		if !startsWithZip(p) {
			continue
		}
		if os.Remove(p) == nil {
			removed = append(removed, e.Name())
		}
	}
	return removed
}

func startsWithZip(path string) bool {
	f, err := os.Open(path)
	if err != nil {
		return false
	}
	defer f.Close()
	head := make([]byte, 4)
	n, _ := io.ReadFull(f, head)
	return n == 0 || bytes.Equal(head[:n], []byte("PK\x03\x04")[:n])
}

// IsTextName reports whether a file name has a text file's extension
// (.csv, .tsv, .txt, .tab, as sniff takes them), which a results workbook
// must not take.
func IsTextName(path string) bool {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv", ".tsv", ".txt", ".tab":
		return true
	}
	return false
}

func (o WriteOptions) limits() (int64, int64) {
	return xlsx.SizeLimits(o.UnzipSizeLimit, o.UnzipXMLSizeLimit)
}

// writeWorkbook adds the sheet to an .xlsx/.xlsm, in place or as a copy.
func writeWorkbook(src string, sheet *report.Sheet, opts WriteOptions) (*Written, error) {
	inPlace := opts.CopyTo == ""
	if real, err := filepath.EvalSymlinks(src); err == nil && inPlace {
		src = real // replace the file a link points to, not the link
	}
	target := src
	if !inPlace {
		target = opts.CopyTo
		if err := checkCopyTarget(src, target, opts.Replace); err != nil {
			return nil, err
		}
	}
	unlock, err := takeRunLock(target)
	if err != nil {
		return nil, err
	}
	defer unlock()
	info, err := os.Stat(src)
	if err != nil {
		return nil, sniff.StatError(src, err)
	}
	if inPlace && opts.Expect != nil && !sameVersion(opts.Expect, info) {
		return nil, &table.Error{Path: src, Cause: table.ErrChangedSinceRead, Detail: "another program saved it after its data were read"}
	}
	if inPlace {
		if !writable(src, info) {
			return nil, &table.Error{Path: src, Cause: table.ErrReadOnlyFile}
		}
		if lock := lockFile(src); lock != "" {
			return nil, &table.Error{Path: src, Cause: table.ErrOpenElsewhere, Detail: "a lock file is beside it: " + filepath.Base(lock)}
		}
	}
	orig, err := os.ReadFile(src)
	if err != nil {
		return nil, sniff.StatError(src, err)
	}
	limit, limitXML := opts.limits()
	zr, err := zip.NewReader(bytes.NewReader(orig), int64(len(orig)))
	if err != nil {
		return nil, &table.Error{Path: src, Cause: table.ErrDamaged, Underlying: err}
	}
	if err := checkInflation(src, zr); err != nil {
		return nil, err
	}
	hazards, err := scanHazards(zr, limitXML)
	if err != nil {
		return nil, &table.Error{Path: src, Cause: table.ErrDamaged, Underlying: err}
	}
	w := &Written{Path: target}
	for _, h := range hazards {
		if h.breaks {
			return nil, &table.Error{Path: src, Cause: table.ErrCannotRewrite, Detail: "it uses " + h.feature}
		}
		w.Lost = append(w.Lost, h.feature)
	}
	if inPlace && len(w.Lost) > 0 {
		return nil, &table.Error{Path: src, Cause: table.ErrWouldLose, Detail: "it uses " + strings.Join(w.Lost, "; ")}
	}
	pkg := &xlsx.Package{Path: src, Zip: zr, Parts: map[string]string{}, Limit: limit, LimitXML: limitXML}
	if err := pkg.ReadWorkbook(); err != nil {
		return nil, err
	}
	name, replaced, err := chooseSheetName(pkg, sheet.Name, opts.Replace)
	if err != nil {
		return nil, err
	}
	w.Sheet = name
	base := orig
	if replaced != "" {
		if base, err = removeSheet(pkg, orig, replaced); err != nil {
			return nil, &table.Error{Path: src, Sheet: replaced, Cause: table.ErrSheetPartTaken, Underlying: err}
		}
		if zr, err = zip.NewReader(bytes.NewReader(base), int64(len(base))); err != nil {
			return nil, &table.Error{Path: src, Cause: table.ErrDamaged, Underlying: err}
		}
		pkg = &xlsx.Package{Path: src, Zip: zr, Parts: map[string]string{}, Limit: limit, LimitXML: limitXML}
		if err := pkg.ReadWorkbook(); err != nil {
			return nil, err
		}
	}
	if err := checkFreeParts(pkg, sheet); err != nil {
		return nil, err
	}
	if base, _, err = ensureStyles(base, pkg); err != nil {
		return nil, &table.Error{Path: src, Cause: table.ErrCannotRewrite, Detail: "its styles could not be completed", Underlying: err}
	}
	l := draw.LayOut(sheet)
	tmp, err := buildKeepingSheets(target, base, limit, limitXML,
		func(xf *excelize.File) error {
			if _, err := xf.NewSheet(name); err != nil {
				return err
			}
			return draw.Cells(xf, name, l)
		},
		func(xf *excelize.File) error { return draw.Finish(xf, name, l) })
	if err != nil {
		return nil, err
	}
	defer os.Remove(tmp) // a no-op once renamed
	if err := numberFormulas(tmp, target, name, l.HasFormulas()); err != nil {
		return nil, err
	}
	origWB, err := readLimited(pkg.File(pkg.WorkbookPart), limitXML)
	if err != nil {
		return nil, &table.Error{Path: src, Cause: table.ErrDamaged, Detail: "the workbook part cannot be read", Underlying: err}
	}
	if err := keepSettings(tmp, pkg.WorkbookPart, origWB); err != nil {
		return nil, &table.Error{Path: target, Cause: table.ErrVerifyFailed, Detail: "the workbook's settings could not be kept", Underlying: err}
	}
	if err := verifyRewrite(orig, tmp, replaced, limit, limitXML); err != nil {
		var e *table.Error
		if errors.As(err, &e) && e.Path == "" {
			e.Path = src
		}
		return nil, err
	}
	beforeReplace(src)
	if inPlace {
		// Someone may have saved the workbook while the results were made.
		if now, err := os.Stat(src); err != nil || !sameVersion(now, info) {
			return nil, &table.Error{Path: src, Cause: table.ErrChangedSinceRead, Detail: "another program saved it while the results were being written"}
		}
		if now, err := os.ReadFile(src); err != nil || !bytes.Equal(now, orig) {
			return nil, &table.Error{Path: src, Cause: table.ErrChangedSinceRead, Detail: "another program saved it while the results were being written"}
		}
	}
	if inPlace {
		// The backup is made of the bytes checked, not read again.
		if w.Backup, err = backupBytes(target, orig, info.Mode().Perm(), opts.Now()); err != nil {
			return nil, err
		}
	} else if fileExists(target) {
		if w.Backup, err = backup(target, opts.Now()); err != nil {
			return nil, err
		}
	}
	if inPlace && linkCount(info) > 1 {
		// The new workbook is a new file: the workbook's other names (hard
		// links) keep the old content. Said rather than written through,
		// since writing through would overwrite the file in place, with no
		// moment at which the original is whole if the save is stopped.
		w.Notes = append(w.Notes, fmt.Sprintf("this workbook has %d other name(s) (hard links); they keep the content it had before the results were added", linkCount(info)-1))
	}
	if inPlace {
		err = replaceChecked(tmp, target, orig, info)
		if errors.Is(err, table.ErrChangedSinceRead) {
			os.Remove(w.Backup) // nothing was replaced: no backup of it
			w.Backup = ""
		}
	} else {
		err = replaceFile(tmp, target, info.Mode().Perm(), info)
	}
	if err != nil {
		return nil, err
	}
	return w, nil
}

// sameVersion reports whether two looks at a file saw the same version
// of it: the same file (device and inode, or Windows' file index), size
// and modification time.
func sameVersion(a, b fs.FileInfo) bool {
	return os.SameFile(a, b) && a.Size() == b.Size() && a.ModTime().Equal(b.ModTime())
}

// keptName is a free name beside target for a version of it that another
// program saved: "<name> (saved by another program).xlsx".
func keptName(target string) string {
	dir, base := filepath.Split(target)
	ext := filepath.Ext(base)
	stem := strings.TrimSuffix(base, ext)
	name := filepath.Join(dir, stem+" (saved by another program)"+ext)
	for k := 2; fileExists(name); k++ {
		name = filepath.Join(dir, fmt.Sprintf("%s (saved by another program %d)%s", stem, k, ext))
	}
	return name
}

// errNoExchange: the system cannot swap two files in one step.
var errNoExchange = errors.New("no atomic exchange here")

// beforeExchange runs when the backup is named and the new workbook is
// about to take the original's place; tests use it to act at that moment.
var beforeExchange = func(string) {}

// afterExchange runs when the new workbook and the original have been
// swapped; tests use it to act at that moment.
var afterExchange = func(string) {}

// replaceChecked puts the new workbook at target in place of the file
// analysed. Where the system can swap two files in one step (Linux's
// RENAME_EXCHANGE; Windows' ReplaceFileW with a backup name, which moves
// the file that was at target aside as the new one takes its name), it
// swaps them and then checks that the file swapped
// out is the one analysed, byte for byte; if another program saved the
// workbook in the instant between the last check and the swap, it swaps
// back, so that edit stays in place, and refuses. Elsewhere it renames,
// the check just before being the last (the window between them is the
// time of one rename call).
func replaceChecked(tmp, target string, orig []byte, info fs.FileInfo) error {
	if err := os.Chmod(tmp, info.Mode().Perm()); err != nil {
		return &table.Error{Path: target, Cause: table.ErrCannotReplace, Underlying: err}
	}
	chownLike(tmp, info)
	beforeExchange(tmp)
	err := exchange(tmp, target)
	if errors.Is(err, errNoExchange) {
		return replaceFile(tmp, target, info.Mode().Perm(), info)
	}
	if err != nil {
		return &table.Error{Path: target, Cause: table.ErrCannotReplace, Underlying: err}
	}
	afterExchange(tmp)
	out, err1 := os.Stat(tmp)
	body, err2 := os.ReadFile(tmp)
	// Windows may move a file's identity to its replacement: there the
	// bytes decide.
	if err1 != nil || err2 != nil || (exchangeKeepsIdentity && !os.SameFile(out, info)) || !bytes.Equal(body, orig) {
		if err := exchange(tmp, target); err != nil {
			// Keep the other program's version where a person finds it;
			// the caller removes tmp.
			kept := keptName(target)
			if rerr := os.Rename(tmp, kept); rerr != nil {
				kept = tmp + ".kept"
				os.Rename(tmp, kept)
			}
			return &table.Error{Path: target, Cause: table.ErrCannotReplace, Detail: "another program saved the workbook at the moment it was replaced, and its version could not be put back; it is kept as " + filepath.Base(kept), Underlying: err}
		}
		os.Remove(tmp)
		return &table.Error{Path: target, Cause: table.ErrChangedSinceRead, Detail: "another program saved it at the moment it was to be replaced; its version is in place"}
	}
	os.Remove(tmp) // the original, of which the backup is a copy
	syncDir(filepath.Dir(target))
	return nil
}

// Parts that excelize holds whole in memory when it opens a workbook to
// write it (every part but the big worksheets kept from it) are refused
// when they unpack past 64 MiB at more than 100 times their packed size:
// genuine XML packs to a tenth or a twentieth of its size, pictures
// hardly at all (common practice), while a crafted part inflates a
// thousandfold.
const (
	inflationSize  = 64 << 20
	inflationRatio = 100
)

func checkInflation(src string, zr *zip.Reader) error {
	for _, f := range zr.File {
		if xlsx.IsWorksheetPart(f.Name) && f.UncompressedSize64 > bigSheet {
			continue
		}
		if f.UncompressedSize64 > inflationSize && f.UncompressedSize64 > inflationRatio*max(f.CompressedSize64, 1) {
			return &table.Error{Path: src, Cause: table.ErrTooLarge, Detail: fmt.Sprintf("the part %s unpacks to %s from %s, far more than a genuine part does", f.Name, xlsx.ByteSize(int64(min(f.UncompressedSize64, 1<<62))), xlsx.ByteSize(int64(f.CompressedSize64)))}
		}
	}
	return nil
}

// beforeReplace runs just before the check that the original is as it
// was read; tests use it to change the file at that moment.
var beforeReplace = func(string) {}

// checkCopyTarget refuses a copy that would overwrite the source, or an
// existing file the caller did not allow to replace.
func checkCopyTarget(src, target string, replace bool) error {
	si, err := os.Stat(src)
	if err != nil {
		return sniff.StatError(src, err)
	}
	ti, err := os.Stat(target)
	switch {
	case err == nil && os.SameFile(si, ti):
		return table.Fail(target, table.ErrSameFile, "")
	case err == nil && ti.IsDir():
		return table.Fail(target, table.ErrIsFolder, "")
	case err == nil && !replace:
		return table.Fail(target, table.ErrTargetExists, "")
	case err == nil && !holdsOurResults(target):
		return table.Fail(target, table.ErrTargetExists, "it is not a workbook of Slopewise's results, so it is not replaced")
	case err != nil && !errors.Is(err, fs.ErrNotExist):
		return sniff.StatError(target, err)
	}
	return nil
}

// holdsOurResults reports whether the file at path is a workbook with a
// results sheet that Slopewise wrote (its stored run reads back): only
// such a file is replaced when earlier results may be.
func holdsOurResults(path string) bool {
	p, err := xlsx.OpenPackage(path, table.Options{})
	if err != nil {
		return false
	}
	defer p.Close()
	for _, s := range p.Sheets {
		if s.Worksheet && isResultsSheet(p, s.Name) {
			return true
		}
	}
	return false
}

func fileExists(path string) bool {
	_, err := os.Stat(path)
	return err == nil
}

// lockFile returns the lock file that a spreadsheet program keeps beside
// a workbook it has open, or "". Excel writes "~$" before the name (for
// long names in place of its first two characters); LibreOffice writes
// ".~lock.<name>#" (both from memory, checked by hand on files left by
// those programs).
func lockFile(path string) string {
	dir, base := filepath.Split(path)
	candidates := []string{"~$" + base, ".~lock." + base + "#"}
	if r := []rune(base); len(r) > 2 {
		candidates = append(candidates, "~$"+string(r[2:]))
	}
	for _, c := range candidates {
		if c == base {
			continue // a workbook named "~$…" is not its own lock file
		}
		p := filepath.Join(dir, c)
		if _, err := os.Lstat(p); err == nil {
			return p
		}
	}
	return ""
}

// chooseSheetName returns the results sheet's name, and the name of the
// earlier results sheet to replace, if any.
func chooseSheetName(pkg *xlsx.Package, want string, replace bool) (name, replaced string, err error) {
	want = cleanSheetName(want)
	existing := func(n string) (xlsx.SheetInfo, bool) {
		for _, s := range pkg.Sheets {
			if strings.EqualFold(s.Name, n) {
				return s, true
			}
		}
		return xlsx.SheetInfo{}, false
	}
	s, taken := existing(want)
	if !taken {
		return want, "", nil
	}
	if replace {
		last := pkg.Sheets[len(pkg.Sheets)-1]
		ours := s.Worksheet && isResultsSheet(pkg, s.Name)
		if !ours {
			return "", "", &table.Error{Path: pkg.Path, Sheet: s.Name, Cause: table.ErrSheetNameTaken}
		}
		if last.Name == s.Name && len(pkg.Sheets) > 1 {
			return s.Name, s.Name, nil
		}
		// An earlier results sheet that is not the last one is kept, and
		// the new one gets a fresh name: removing a sheet from the middle
		// would renumber the others' sheet-scoped names.
	}
	for k := 2; ; k++ {
		suffix := fmt.Sprintf(" (%d)", k)
		n := []rune(want)
		if len(n)+len(suffix) > 31 {
			n = n[:31-len(suffix)]
		}
		candidate := string(n) + suffix
		if _, taken := existing(candidate); !taken {
			return candidate, "", nil
		}
	}
}

// cleanSheetName makes a legal sheet name: at most 31 characters, none of
// : \ / ? * [ ], not starting or ending with an apostrophe, not "History"
// (the rules spreadsheet programs enforce; common practice).
func cleanSheetName(s string) string {
	s = strings.Map(func(r rune) rune {
		if strings.ContainsRune(`:\/?*[]`, r) || r < 0x20 {
			return ' '
		}
		return r
	}, s)
	s = strings.Trim(strings.Join(strings.Fields(s), " "), "'")
	if r := []rune(s); len(r) > 31 {
		s = strings.TrimSpace(string(r[:31]))
	}
	if s == "" || strings.EqualFold(s, "History") {
		return draw.DefaultSheetName
	}
	return s
}

// isResultsSheet reports whether a sheet holds Slopewise's spec marker in
// column A, the mark of a results sheet it wrote.
func isResultsSheet(p *xlsx.Package, name string) bool {
	spec, err := readSpec(p, name)
	return err == nil && spec != nil
}

// checkFreeParts checks that the part names excelize will pick for the
// new sheet and its picture are free. NewSheet names the part after the
// largest sheetId plus one, and AddPicture names the drawing and the image
// after the count of such parts plus one, none checking that the name is
// unused (excelize v2.11.1 source: sheet.go NewSheet, picture.go
// countDrawings and addMedia); an existing part of that name would be
// overwritten.
func checkFreeParts(pkg *xlsx.Package, sheet *report.Sheet) error {
	want := []string{fmt.Sprintf("xl/worksheets/sheet%d.xml", pkg.MaxID+1)}
	if hasImages(sheet) {
		drawings, media := 0, 0
		for _, f := range pkg.Zip.File {
			switch {
			case strings.Contains(f.Name, "xl/drawings/drawing"):
				drawings++
			case strings.Contains(f.Name, "xl/media/image"):
				media++
			}
		}
		want = append(want, fmt.Sprintf("xl/drawings/drawing%d.xml", drawings+1), fmt.Sprintf("xl/media/image%d.png", media+1))
	}
	for _, name := range want {
		if pkg.File(name) != nil {
			return &table.Error{Path: pkg.Path, Cause: table.ErrSheetPartTaken, Detail: "the part " + name + " is already used"}
		}
	}
	return nil
}

func hasImages(s *report.Sheet) bool {
	for _, b := range s.Blocks {
		if b.Image != nil && len(b.Image.PNG) > 0 {
			return true
		}
	}
	return false
}

// buildInTemp opens base (the workbook's bytes; nil for a new workbook) in
// a fresh excelize File that has read nothing through its getters, lets
// each stage add to it, saving and re-opening between stages, and writes
// the result to a temporary file beside target.
func buildInTemp(target string, base []byte, limit, limitXML int64, stages ...func(*excelize.File) error) (tmpPath string, err error) {
	defer func() {
		if r := recover(); r != nil {
			err = &table.Error{Path: target, Cause: table.ErrWriterStopped, Detail: fmt.Sprint(r)}
		}
	}()
	var xf *excelize.File
	for i, stage := range stages {
		if base == nil {
			xf = excelize.NewFile()
		} else {
			xf, err = excelize.OpenReader(bytes.NewReader(base), excelize.Options{UnzipSizeLimit: limit, UnzipXMLSizeLimit: limitXML})
			if err != nil {
				return "", xlsx.ExcelizeOpenError(target, err, limit)
			}
		}
		if err := stage(xf); err != nil {
			xf.Close()
			return "", &table.Error{Path: target, Cause: table.ErrVerifyFailed, Detail: "drawing the results sheet failed", Underlying: err}
		}
		if i == len(stages)-1 {
			break
		}
		var buf bytes.Buffer
		_, err := xf.WriteTo(&buf)
		xf.Close()
		if err != nil {
			return "", &table.Error{Path: target, Cause: table.ErrVerifyFailed, Detail: "drawing the results sheet failed", Underlying: err}
		}
		base = buf.Bytes()
	}
	defer xf.Close()
	dir, name := filepath.Dir(target), filepath.Base(target)
	tmp, err := os.CreateTemp(dir, "."+name+".slopewise-*.tmp")
	if err != nil {
		return "", writeError(dir, "", err)
	}
	if _, err := xf.WriteTo(tmp); err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		return "", writeError(target, "writing the new file failed", err)
	}
	if err := tmp.Sync(); err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		return "", writeError(target, "the new file could not be saved to disk", err)
	}
	if err := tmp.Close(); err != nil {
		os.Remove(tmp.Name())
		return "", writeError(target, "", err)
	}
	return tmp.Name(), nil
}

// backup copies path to "<name> (before Slopewise <time>).<ext>" beside
// it and checks that the copy's bytes equal the original's.
func backup(path string, now time.Time) (string, error) {
	orig, err := os.ReadFile(path)
	if err != nil {
		return "", sniff.StatError(path, err)
	}
	mode := fs.FileMode(0o644)
	if info, err := os.Stat(path); err == nil {
		mode = info.Mode().Perm()
	}
	return backupBytes(path, orig, mode, now)
}

// sameBackup is an existing backup of the workbook stem+ext in dir whose
// bytes are orig, or "". Only files named as Slopewise names its backups
// are looked at, and only those of orig's size are read.
func sameBackup(dir, stem, ext string, orig []byte) string {
	pattern := filepath.Join(dir, globEscape(stem)+" (before Slopewise *)"+globEscape(ext))
	names, _ := filepath.Glob(pattern)
	for _, n := range names {
		info, err := os.Lstat(n)
		if err != nil || !info.Mode().IsRegular() || info.Size() != int64(len(orig)) {
			continue
		}
		if b, err := os.ReadFile(n); err == nil && bytes.Equal(b, orig) {
			return n
		}
	}
	return ""
}

// globEscape quotes the characters filepath.Match gives a meaning to.
func globEscape(s string) string {
	var b strings.Builder
	for _, r := range s {
		if strings.ContainsRune(`*?[\`, r) {
			if runtime.GOOS == "windows" {
				// No escape character there: a class of one.
				b.WriteString("[" + string(r) + "]")
				continue
			}
			b.WriteByte('\\')
		}
		b.WriteRune(r)
	}
	return b.String()
}

// backupBytes writes orig, the bytes of the file at path, as its backup.
// A backup already beside the workbook that holds these very bytes (the
// results were added, the original put back, and added again) is the
// backup: no second copy of the same bytes is made.
func backupBytes(path string, orig []byte, mode fs.FileMode, now time.Time) (string, error) {
	dir, base := filepath.Split(path)
	ext := filepath.Ext(base)
	stem := strings.TrimSuffix(base, ext)
	if same := sameBackup(dir, stem, ext, orig); same != "" {
		return same, nil
	}
	stamp := now.Format("2006-01-02 15.04.05")
	var dst string
	for k := 1; ; k++ {
		extra := ""
		if k > 1 {
			extra = " " + strconv.Itoa(k)
		}
		dst = filepath.Join(dir, fmt.Sprintf("%s (before Slopewise %s%s)%s", stem, stamp, extra, ext))
		if !fileExists(dst) {
			break
		}
	}
	// Written whole under a temporary name, synced and read back, and only
	// then given its name: a backup killed half-way is never left looking
	// like a real one (issue 13).
	f, err := os.CreateTemp(filepath.Dir(path), "."+base+".slopewise-backup-*.tmp")
	if err != nil {
		return "", writeError(dst, "the backup could not be made", err)
	}
	tmp := f.Name()
	defer os.Remove(tmp) // a no-op once renamed
	if err := fillTemp(f, orig, mode); err != nil {
		return "", writeError(dst, "the backup could not be made", err)
	}
	again, err := os.ReadFile(tmp)
	if err != nil || !bytes.Equal(again, orig) {
		return "", &table.Error{Path: dst, Cause: table.ErrVerifyFailed, Detail: "the backup does not read back equal to the original"}
	}
	beforeBackupNamed(tmp)
	if err := renameNoClobber(tmp, dst); err != nil {
		if errors.Is(err, fs.ErrExist) {
			return "", &table.Error{Path: dst, Cause: table.ErrTargetExists, Detail: "a file of the backup's name appeared while it was made"}
		}
		return "", writeError(dst, "the backup could not be given its name", err)
	}
	syncDir(filepath.Dir(path))
	return dst, nil
}

// writeError words a failure to create or write a file by its cause: a
// full disk, a name too long, a read-only disk, else a folder Slopewise
// may not write to; the system's own reason stays underneath.
func writeError(path, detail string, err error) *table.Error {
	cause := table.ErrFolderReadOnly
	switch diskCause(err) {
	case diskFull:
		cause = table.ErrNoSpace
	case nameTooLong:
		cause = table.ErrNameTooLong
	case diskReadOnly:
		cause = table.ErrDiskReadOnly
	}
	return &table.Error{Path: path, Cause: cause, Detail: detail, Underlying: err}
}

// WriteWhole writes data to a new file at path, whole or not at all: to a
// temporary name beside it, synced, then renamed; an existing file at
// path is not replaced (ErrTargetExists). Failures carry their cause
// (a full disk, a name too long, a folder that may not be written).
func WriteWhole(path string, data []byte, perm fs.FileMode) error {
	if fileExists(path) {
		return table.Fail(path, table.ErrTargetExists, "")
	}
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".slopewise-*.tmp")
	if err != nil {
		return writeError(filepath.Dir(path), "", err)
	}
	tmp := f.Name()
	defer os.Remove(tmp) // a no-op once renamed
	if err := fillTemp(f, data, perm); err != nil {
		return writeError(path, "", err)
	}
	if err := renameNoClobber(tmp, path); err != nil {
		if errors.Is(err, fs.ErrExist) {
			return table.Fail(path, table.ErrTargetExists, "")
		}
		return writeError(path, "", err)
	}
	syncDir(filepath.Dir(path))
	return nil
}

// fillTemp writes data to the new file f, syncs and closes it and gives
// it perm, as every file Slopewise names only once it is whole.
func fillTemp(f *os.File, data []byte, perm fs.FileMode) error {
	_, werr := f.Write(data)
	serr := f.Sync()
	cerr := f.Close()
	return errors.Join(werr, serr, cerr, os.Chmod(f.Name(), perm))
}

// renameNoClobber gives the file at tmp the name dst unless a file of
// that name exists, in one step where the file system has hard links (a
// link fails on an existing name), else by a check and a rename.
func renameNoClobber(tmp, dst string) error {
	err := os.Link(tmp, dst)
	switch {
	case err == nil:
		os.Remove(tmp)
		return nil
	case errors.Is(err, fs.ErrExist):
		return err
	}
	if fileExists(dst) {
		return fs.ErrExist
	}
	return os.Rename(tmp, dst)
}

// beforeBackupNamed runs when the backup is complete under its temporary
// name; tests use it to stop the save there.
var beforeBackupNamed = func(string) {}

// replaceFile gives tmp the original's permissions (and owner, where
// allowed) and renames it over target.
func replaceFile(tmp, target string, perm fs.FileMode, orig fs.FileInfo) error {
	if err := os.Chmod(tmp, perm); err != nil {
		return &table.Error{Path: target, Cause: table.ErrCannotReplace, Underlying: err}
	}
	chownLike(tmp, orig)
	if err := os.Rename(tmp, target); err != nil {
		return &table.Error{Path: target, Cause: table.ErrCannotReplace, Underlying: err}
	}
	syncDir(filepath.Dir(target))
	return nil
}

func syncDir(dir string) {
	if d, err := os.Open(dir); err == nil {
		_ = d.Sync() // best effort: not every system can sync a folder
		d.Close()
	}
}
