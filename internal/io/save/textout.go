package save

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/report"

	"slopewise/internal/io/delimited"
	"slopewise/internal/io/draw"
	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
)

// DataSheetName is the sheet that holds a text file's data in the
// workbook written beside it.
const DataSheetName = "Data"

// ResultsPathFor is where the workbook for a text source goes by default:
// "<name> results.xlsx" in the same folder.
func ResultsPathFor(src string) string {
	dir, base := filepath.Split(src)
	return filepath.Join(dir, strings.TrimSuffix(base, filepath.Ext(base))+" results.xlsx")
}

// writeBesideText writes a new workbook holding the results sheet and,
// as opts.CopyData says, the text file's data on a sheet of its own
// (numbers as numbers, as the reader understood them). The text file
// itself is only read.
func writeBesideText(src string, sheet *report.Sheet, opts WriteOptions) (*Written, error) {
	target := opts.CopyTo
	if target == "" {
		target = ResultsPathFor(src)
	}
	unlock, err := takeRunLock(target)
	if err != nil {
		return nil, err
	}
	defer unlock()
	if err := checkCopyTarget(src, target, opts.Replace); err != nil {
		return nil, err
	}
	if lock := lockFile(target); lock != "" {
		return nil, &table.Error{Path: target, Cause: table.ErrOpenElsewhere, Detail: "a lock file is beside it: " + filepath.Base(lock)}
	}
	name := cleanSheetName(sheet.Name)
	if strings.EqualFold(name, DataSheetName) {
		name = draw.DefaultSheetName
	}
	w := &Written{Path: target, Sheet: name}
	switch opts.CopyData {
	case CopyDataNever:
		w.DataNotCopied = -1
	case CopyDataAuto:
		most := opts.CopyDataLines
		if most <= 0 {
			most = DefaultCopyDataLines
		}
		lines, err := countLines(src, most)
		if err != nil {
			return nil, sniff.StatError(src, err)
		}
		if lines > most {
			w.DataNotCopied = lines
		}
	}
	limit, limitXML := opts.limits()
	l := draw.LayOut(sheet)
	tmp, err := buildInTemp(target, nil, limit, limitXML,
		func(xf *excelize.File) error {
			// The data sheet first when there is one, then the results.
			first := name
			if w.DataNotCopied == 0 {
				first = DataSheetName
			}
			if err := xf.SetSheetName("Sheet1", first); err != nil {
				return err
			}
			if first != name {
				if _, err := xf.NewSheet(name); err != nil {
					return err
				}
			}
			return draw.Cells(xf, name, l)
		},
		func(xf *excelize.File) error { return draw.Finish(xf, name, l) })
	if err != nil {
		return nil, err
	}
	defer os.Remove(tmp)
	if err := numberFormulas(tmp, target, name, l.HasFormulas()); err != nil {
		return nil, err
	}
	cut := 0
	wide := &wideCopy{keep: opts.KeepColumns}
	if w.DataNotCopied == 0 {
		cut, err = copyData(src, tmp, wide)
	}
	if err != nil {
		var e *table.Error
		if errors.As(err, &e) {
			return nil, e // a problem in the text file, not in writing
		}
		if diskCause(err) != otherFailure {
			return nil, writeError(target, "writing the data sheet failed", err)
		}
		return nil, &table.Error{Path: target, Cause: table.ErrVerifyFailed, Detail: "writing the data sheet failed: " + err.Error(), Underlying: err}
	}
	if wide.width > table.MaxColumns {
		what := fmt.Sprintf("the %d columns the analysis used", wide.kept)
		if wide.to == nil {
			what = fmt.Sprintf("the first %d", wide.kept)
		}
		w.Lost = append(w.Lost, fmt.Sprintf("%d of the text file's %d columns on sheet %q, which holds no more than %d columns: it holds %s (the results are from the text file, which keeps them all)", wide.width-wide.kept, wide.width, DataSheetName, table.MaxColumns, what))
	}
	if cut > 0 {
		w.Lost = append(w.Lost, fmt.Sprintf("the last %d rows of the data on sheet %q, which holds no more than %d rows (the results are from all rows)", cut, DataSheetName, excelize.TotalRows))
	}
	info, err := os.Stat(src)
	if err != nil {
		return nil, sniff.StatError(src, err)
	}
	if fileExists(target) {
		if w.Backup, err = backup(target, opts.Now()); err != nil {
			return nil, err
		}
		if ti, err := os.Stat(target); err == nil {
			info = ti
		}
	}
	if err := replaceFile(tmp, target, info.Mode().Perm(), info); err != nil {
		return nil, err
	}
	return w, nil
}

// copyData puts the text file's data on the data sheet of the workbook
// at tmp (spliceDataSheet).
func copyData(src, tmp string, wide *wideCopy) (int, error) {
	tf, err := delimited.SniffText(src)
	if err != nil {
		return 0, err
	}
	rows, err := delimited.OpenScanner(src, tf)
	if err != nil {
		return 0, err
	}
	defer rows.Close()
	return spliceDataSheet(tmp, rows, tf.DecimalComma, wide)
}

// countLines counts the lines of the file at path, stopping once they
// pass most (it then returns most+1): a quick measure of a text file's
// size in rows, a record with a line break inside quotes counting as
// two. A last line without a line break counts.
func countLines(path string, most int) (int, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	buf := make([]byte, 1<<20)
	lines, last := 0, byte('\n')
	for {
		n, err := f.Read(buf)
		if n > 0 {
			lines += bytes.Count(buf[:n], []byte{'\n'})
			last = buf[n-1]
			if lines > most {
				return most + 1, nil
			}
		}
		if err == io.EOF {
			break
		}
		if err != nil {
			return 0, err
		}
	}
	if last != '\n' {
		lines++
	}
	return min(lines, most+1), nil
}

// leadingZero reports codes such as "007", digits only, whose zeros a
// number would lose; they are kept as text.
func leadingZero(s string) bool {
	if len(s) < 2 || s[0] != '0' {
		return false
	}
	for _, c := range []byte(s) {
		if c < '0' || c > '9' {
			return false
		}
	}
	return true
}
