package workbook

import (
	"context"
	"errors"
	"os"
)

// Read reads one sheet of a workbook or a text file into a Table.
// The file is only read, never changed.
//
// Formula cells without a usable saved result are calculated where
// Slopewise can (formulas.go), which reads the sheet a second time with
// the calculated values in place.
func Read(ctx context.Context, path string, opts Options) (*Table, error) {
	return readCalc(ctx, path, opts, true)
}

// readCalc is Read with the fast worksheet reader (falling back to
// sheetStream), or with sheetStream only.
func readCalc(ctx context.Context, path string, opts Options, fast bool) (*Table, error) {
	t, log, part, err := readFast(ctx, path, opts, nil, fast)
	if err != nil || len(log.need) == 0 && !log.over {
		return t, err
	}
	if err := ctx.Err(); err != nil {
		return nil, &Error{Path: path, Sheet: t.Sheet, Cause: ErrCancelled, Underlying: err}
	}
	res := calculate(path, t.Sheet, part, log, opts)
	if len(res.values) > 0 {
		if t, _, _, err = readFast(ctx, path, opts, res, fast); err != nil {
			return nil, err
		}
	}
	explainFormulas(t, res)
	return t, nil
}

// readFast is read with the fast worksheet reader, falling back to the
// standard one; or, with fast false, with the standard one only. calc
// holds the values calculated for the sheet's formula cells after a
// first reading (formulas.go), or is nil.
func readFast(ctx context.Context, path string, opts Options, calc *formulaResults, fast bool) (*Table, formulaLog, string, error) {
	t, log, part, err := read(ctx, path, opts, calc, fast)
	if fast && errors.Is(err, errFastFallback) {
		return read(ctx, path, opts, calc, false)
	}
	return t, log, part, err
}

// read is Read with the fast worksheet reader or with sheetStream; it
// also gives the formula cells that need a value calculated, and the
// worksheet's part in the package.
func read(ctx context.Context, path string, opts Options, calc *formulaResults, fast bool) (*Table, formulaLog, string, error) {
	var log formulaLog
	var part string
	t, err := readTableWith(ctx, path, opts, calc, fast, func(p *xlsxPackage, sheet string) {
		log, part = p.formulas, p.parts[sheet]
	})
	if err != nil {
		return nil, formulaLog{}, "", err
	}
	return t, log, part, nil
}

// readTable reads path into a Table without calculating formulas.
func readTable(ctx context.Context, path string, opts Options, fast bool) (*Table, error) {
	return readTableWith(ctx, path, opts, nil, fast, nil)
}

// readTableWith is readTable with calculated formula values, handing
// the workbook's package, once read, to done.
func readTableWith(ctx context.Context, path string, opts Options, calc *formulaResults, fast bool, done func(p *xlsxPackage, sheet string)) (*Table, error) {
	info, _ := os.Stat(path)
	f, err := sniff(path)
	if err != nil {
		return nil, err
	}
	var (
		src   rowSource
		table = &Table{Path: path, Source: info}
		dc    bool
	)
	switch f {
	case formatXLSX:
		var sheet string
		src, sheet, err = openXLSXSheet(path, opts, calc, fast)
		table.Sheet = sheet
	default:
		var tf *TextFormat
		src, tf, err = openText(path)
		table.Text = tf
		if tf != nil {
			dc = tf.DecimalComma
			if tf.Encoding != "UTF-8" {
				table.Notes = append(table.Notes, Note{Text: "the file is not UTF-8; it was read as " + tf.Encoding + " text"})
			}
		}
	}
	if err != nil {
		return nil, err
	}
	defer src.Close()
	if err := build(ctx, src, table, opts, dc); err != nil {
		if errors.Is(err, errFastFallback) {
			return nil, err
		}
		var e *Error
		if errors.As(err, &e) {
			if e.Path == "" {
				e.Path = path
			}
			if e.Sheet == "" {
				e.Sheet = table.Sheet
			}
			return nil, e
		}
		return nil, &Error{Path: path, Sheet: table.Sheet, Underlying: err}
	}
	if x, ok := src.(interface{ Package() *xlsxPackage }); ok && done != nil {
		done(x.Package(), table.Sheet)
	}
	return table, nil
}
