package workbook

import (
	"io"
	"strings"
)

// ReadSpec returns the machine-readable run spec stored in a results
// sheet that Slopewise wrote, so that a later run can repeat it exactly.
// It returns nil and no error when the sheet holds no spec.
func ReadSpec(path, sheet string) ([]byte, error) {
	f, err := sniff(path)
	if err != nil {
		return nil, err
	}
	if f != formatXLSX {
		return nil, fail(path, ErrNotWritableKind, "a run spec is kept only in workbooks")
	}
	p, err := openPackage(path, Options{})
	if err != nil {
		return nil, err
	}
	defer p.Close()
	if _, ok := p.parts[sheet]; !ok {
		return nil, &Error{Path: path, Sheet: sheet, Cause: ErrSheetNotFound, Detail: "the sheets are " + sheetList(p.sheets)}
	}
	return readSpec(p, sheet)
}

// readSpec finds the spec row of a sheet: the marker in column A, the
// JSON in the cells to its right.
func readSpec(p *xlsxPackage, sheet string) ([]byte, error) {
	part, ok := p.parts[sheet]
	if !ok {
		return nil, nil
	}
	s, err := newSheetStream(p, part)
	if err != nil {
		return nil, err
	}
	defer s.rc.Close()
	for {
		_, cells, err := s.Next()
		if err == io.EOF {
			return nil, nil
		}
		if err != nil {
			return nil, err
		}
		if len(cells) == 0 || cells[0].Col != 0 || cells[0].Type != cellText || cells[0].Text != SpecMarker {
			continue
		}
		var b strings.Builder
		for _, c := range cells[1:] {
			if c.Type == cellText {
				b.WriteString(c.Text)
			}
		}
		return []byte(b.String()), nil
	}
}
