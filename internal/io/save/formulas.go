package save

import (
	"archive/zip"
	"fmt"
	"regexp"

	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// strFormula matches the start of a formula cell that excelize marked as
// holding text (t="str"), in a worksheet part it wrote.
var strFormula = regexp.MustCompile(`(<c r="[A-Z]+[0-9]+"(?: s="[0-9]+")?) t="str"(>\s*<f>)`)

// numberFormulas makes the formula cells of the results sheet in the
// saved file at tmp hold their results as numbers: excelize's
// SetCellFormula marks a cell's value as text (excelize v2.11.1 source,
// cell.go), which a program that does not recalculate would show as text.
// The results sheet holds no other formulas, and its text is stored as
// inline strings, so every t="str" before a formula in it is one of ours.
// A failure is worded for target, the file being written.
func numberFormulas(tmp, target, sheet string, hasFormulas bool) error {
	if !hasFormulas {
		return nil
	}
	if err := rewriteFormulas(tmp, sheet); err != nil {
		return &table.Error{Path: target, Cause: table.ErrVerifyFailed, Detail: "the results sheet's formulas could not be finished", Underlying: err}
	}
	return nil
}

// rewriteFormulas drops t="str" before the formulas of sheet in tmp.
func rewriteFormulas(tmp, sheet string) error {
	zr, err := zip.OpenReader(tmp)
	if err != nil {
		return err
	}
	defer zr.Close()
	pkg := &xlsx.Package{Path: tmp, Zip: &zr.Reader, Parts: map[string]string{}, Limit: 1 << 30, LimitXML: 1 << 30}
	if err := pkg.ReadWorkbook(); err != nil {
		return err
	}
	part := pkg.File(pkg.Parts[sheet])
	if part == nil {
		return fmt.Errorf("the new file has no part for sheet %q", sheet)
	}
	body, err := readLimited(part, 1<<30)
	if err != nil {
		return err
	}
	return rewritePart(tmp, zr, &zr.Reader, part, strFormula.ReplaceAll(body, []byte("$1$2")))
}
