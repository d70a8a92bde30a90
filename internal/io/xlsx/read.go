package xlsx

import (
	"context"
	"errors"
	"os"

	"slopewise/internal/io/table"
)

// Read reads one worksheet of a workbook into a Table. The file is only
// read, never changed.
//
// Formula cells without a usable saved result are calculated where
// Slopewise can (formulas.go), which reads the sheet a second time with
// the calculated values in place.
func Read(ctx context.Context, path string, opts table.Options) (*table.Table, error) {
	return readCalc(ctx, path, opts, true)
}

// readCalc is Read with the fast worksheet reader (falling back to
// sheetStream), or with sheetStream only.
func readCalc(ctx context.Context, path string, opts table.Options, fast bool) (*table.Table, error) {
	t, log, part, err := readFast(ctx, path, opts, nil, fast)
	if err != nil || len(log.need) == 0 && !log.over {
		return t, err
	}
	if err := ctx.Err(); err != nil {
		return nil, &table.Error{Path: path, Sheet: t.Sheet, Cause: table.ErrCancelled, Underlying: err}
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
func readFast(ctx context.Context, path string, opts table.Options, calc *formulaResults, fast bool) (*table.Table, formulaLog, string, error) {
	t, log, part, err := read(ctx, path, opts, calc, fast)
	if fast && errors.Is(err, errFastFallback) {
		return read(ctx, path, opts, calc, false)
	}
	return t, log, part, err
}

// read is Read with the fast worksheet reader or with sheetStream; it
// also gives the formula cells that need a value calculated, and the
// worksheet's part in the package.
func read(ctx context.Context, path string, opts table.Options, calc *formulaResults, fast bool) (*table.Table, formulaLog, string, error) {
	var log formulaLog
	var part string
	t, err := readTableWith(ctx, path, opts, calc, fast, func(p *Package, sheet string) {
		log, part = p.formulas, p.Parts[sheet]
	})
	if err != nil {
		return nil, formulaLog{}, "", err
	}
	return t, log, part, nil
}

// readTable reads path into a Table without calculating formulas.
func readTable(ctx context.Context, path string, opts table.Options, fast bool) (*table.Table, error) {
	return readTableWith(ctx, path, opts, nil, fast, nil)
}

// readTableWith is readTable with calculated formula values, handing
// the workbook's package, once read, to done.
func readTableWith(ctx context.Context, path string, opts table.Options, calc *formulaResults, fast bool, done func(p *Package, sheet string)) (*table.Table, error) {
	info, _ := os.Stat(path)
	tbl := &table.Table{Path: path, Source: info}
	src, sheet, err := openXLSXSheet(path, opts, calc, fast)
	tbl.Sheet = sheet
	if err != nil {
		return nil, err
	}
	defer src.Close()
	if err := table.Build(ctx, src, tbl, opts, false); err != nil {
		if errors.Is(err, errFastFallback) {
			return nil, err
		}
		return nil, table.Located(err, path, tbl.Sheet)
	}
	if x, ok := src.(interface{ Package() *Package }); ok && done != nil {
		done(x.Package(), tbl.Sheet)
	}
	return tbl, nil
}
