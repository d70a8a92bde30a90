package workbook

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"

	"slopewise/internal/report"
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

// writeBesideText writes a new workbook holding the text file's data on
// a sheet of its own (numbers as numbers, as the reader understood them)
// and the results sheet. The text file itself is only read.
func writeBesideText(src string, sheet *report.Sheet, opts WriteOptions) (*Written, error) {
	target := opts.CopyTo
	if target == "" {
		target = ResultsPathFor(src)
	}
	if err := checkCopyTarget(src, target, opts.Replace); err != nil {
		return nil, err
	}
	if lock := lockFile(target); lock != "" {
		return nil, &Error{Path: target, Cause: ErrOpenElsewhere, Detail: "a lock file is beside it: " + filepath.Base(lock)}
	}
	rows, tf, err := openText(src)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	name := cleanSheetName(sheet.Name)
	if strings.EqualFold(name, DataSheetName) {
		name = DefaultSheetName
	}
	limit, limitXML := opts.limits()
	l := layOut(sheet)
	var exact []exactCell
	tmp, err := buildInTemp(target, nil, limit, limitXML,
		func(xf *excelize.File) error {
			if err := xf.SetSheetName("Sheet1", DataSheetName); err != nil {
				return err
			}
			if exact, err = copyTextData(xf, rows, tf.DecimalComma); err != nil {
				return err
			}
			if _, err := xf.NewSheet(name); err != nil {
				return err
			}
			return drawCells(xf, name, l)
		},
		func(xf *excelize.File) error {
			for _, c := range exact {
				if err := xf.SetCellFloat(DataSheetName, c.ref, c.v, decimalsOf(c.v), 64); err != nil {
					return err
				}
			}
			return finishSheet(xf, name, l)
		})
	if err != nil {
		var e *Error
		if errors.As(err, &e) && errors.Is(err, ErrVerifyFailed) {
			var inner *Error
			if errors.As(e.Underlying, &inner) {
				return nil, inner // a problem in the text file, not in writing
			}
		}
		return nil, err
	}
	defer os.Remove(tmp)
	w := &Written{Path: target, Sheet: name}
	info, err := os.Stat(src)
	if err != nil {
		return nil, statError(src, err)
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

// copyTextData streams the text file's records into the data sheet, each
// record on the row a spreadsheet program would give it. The stream writer
// keeps 15 significant digits of a number (excelize v2.11.1 source,
// cell.go, formatCellFloat); the longer ones are returned, to be set again
// exactly once the sheet is saved.
func copyTextData(xf *excelize.File, rows rowSource, decimalComma bool) ([]exactCell, error) {
	sw, err := xf.NewStreamWriter(DataSheetName)
	if err != nil {
		return nil, err
	}
	// The rows down to the header row, found as the reader finds it, stay
	// text, so that a name such as "2024" or "00" keeps its form.
	var buf []bufRow
	for len(buf) < headerScanRows {
		num, cells, err := rows.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		if !isBlankRow(cells) {
			buf = append(buf, bufRow{num, slices.Clone(cells)})
		}
	}
	headerRow := 0
	if hi := detectHeader(buf); hi >= 0 {
		headerRow = buf[hi].num
	}
	var exact []exactCell
	put := func(num int, cells []rawCell) error {
		if len(cells) == 0 {
			return nil
		}
		values := make([]any, cells[len(cells)-1].Col+1)
		for _, c := range cells {
			s := trimSpace(c.Text)
			if v, ok := parseNumber(s, decimalComma); ok && num > headerRow && !strings.HasSuffix(s, "%") && !leadingZero(s) {
				values[c.Col] = v
				if significantDigits(v) > 15 {
					exact = append(exact, exactCell{cellName(num-1, c.Col), v})
				}
			} else {
				values[c.Col] = c.Text
			}
		}
		return sw.SetRow(fmt.Sprintf("A%d", num), values)
	}
	for _, r := range buf {
		if err := put(r.num, r.cells); err != nil {
			return nil, err
		}
	}
	for {
		num, cells, err := rows.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		if err := put(num, cells); err != nil {
			return nil, err
		}
	}
	return exact, sw.Flush()
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

type exactCell struct {
	ref string
	v   float64
}

// significantDigits counts the digits of v's shortest exact form.
func significantDigits(v float64) int {
	s := strconv.FormatFloat(v, 'e', -1, 64)
	mantissa, _, _ := strings.Cut(s, "e")
	return len(strings.NewReplacer("-", "", ".", "").Replace(mantissa))
}
