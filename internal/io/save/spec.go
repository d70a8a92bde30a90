package save

import (
	"io"
	"strings"

	"slopewise/internal/io/draw"
	"slopewise/internal/io/sniff"
	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// ReadSpec returns the machine-readable run spec stored in a results
// sheet that Slopewise wrote, so that a later run can repeat it exactly.
// It returns nil and no error when the sheet holds no spec.
func ReadSpec(path, sheet string) ([]byte, error) {
	f, err := sniff.File(path)
	if err != nil {
		return nil, err
	}
	if f != sniff.XLSX {
		return nil, table.Fail(path, table.ErrNotWritableKind, "a run spec is kept only in workbooks")
	}
	p, err := xlsx.OpenPackage(path, table.Options{})
	if err != nil {
		return nil, err
	}
	defer p.Close()
	if _, ok := p.Parts[sheet]; !ok {
		return nil, &table.Error{Path: path, Sheet: sheet, Cause: table.ErrSheetNotFound, Detail: "the sheets are " + xlsx.SheetList(p.Sheets)}
	}
	return readSpec(p, sheet)
}

// readSpec finds the spec row of a sheet: the marker in column A, the
// JSON in the cells to its right.
func readSpec(p *xlsx.Package, sheet string) ([]byte, error) {
	part, ok := p.Parts[sheet]
	if !ok {
		return nil, nil
	}
	s, err := xlsx.NewSheetStream(p, part)
	if err != nil {
		return nil, err
	}
	defer s.Body.Close()
	for {
		_, cells, err := s.Next()
		if err == io.EOF {
			return nil, nil
		}
		if err != nil {
			return nil, err
		}
		if len(cells) == 0 || cells[0].Col != 0 || cells[0].Type != table.CellText || cells[0].Text != draw.SpecMarker {
			continue
		}
		var b strings.Builder
		for _, c := range cells[1:] {
			if c.Type == table.CellText {
				b.WriteString(c.Text)
			}
		}
		return []byte(b.String()), nil
	}
}
