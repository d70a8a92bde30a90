package xlsx

import (
	"archive/zip"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"path"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"github.com/xuri/efp"
	"github.com/xuri/excelize/v2"

	"slopewise/internal/io/table"
)

// Formula cells whose result the file does not hold, or holds but marks
// as out of date, are never read as data. Programs that write workbooks
// without calculating them (openpyxl, xlsxwriter, exceljs, SheetJS) leave
// a formula's result empty, or write 0 and ask the spreadsheet program to
// recalculate on opening (calcPr fullCalcOnLoad). Slopewise calculates
// such a cell itself when its formula uses only what excelize's
// calculation engine (v2.11.1, CalcCellValue) has been checked to compute
// as LibreOffice does (TestCalcAgainstLibreOffice): numbers, text and
// TRUE/FALSE, references to cells and ranges of the same sheet, the
// arithmetic, comparison and text-joining operators, and the functions in
// calcFunctions; every cell it depends on must pass the same test. Any
// other cell stays missing with a reason, and pipeline refuses to use its
// column in a model.

// cellKey locates a cell: its 1-based row and 0-based column.
type cellKey struct{ row, col int32 }

func (k cellKey) ref() string { return table.ColumnLetter(int(k.col)) + strconv.Itoa(int(k.row)) }

// computedValue is a calculated result as a cell would store it: its
// type attribute and its <v>.
type computedValue struct{ typ, v string }

// maxCalcCells bounds the formula cells of one sheet that Slopewise
// calculates; past it, none is calculated and the cells stay missing.
const maxCalcCells = 200_000

// maxCalcRange bounds the cells of one range a formula may use.
const maxCalcRange = 100_000

// maxCalcDepth bounds a chain of formulas that use one another.
const maxCalcDepth = 100

// maxCalcSheet bounds the unpacked size of a sheet whose formulas are
// calculated: excelize holds the whole sheet in memory to calculate.
const maxCalcSheet = 64 << 20

// calcFunctions are the functions Slopewise lets excelize calculate;
// each is compared with LibreOffice in TestCalcAgainstLibreOffice.
var calcFunctions = map[string]bool{
	"SUM": true, "AVERAGE": true, "MIN": true, "MAX": true, "COUNT": true,
	"PRODUCT": true, "ROUND": true, "ABS": true, "SQRT": true, "EXP": true,
	"LN": true, "LOG10": true, "INT": true, "MOD": true,
	"IF": true, "AND": true, "OR": true, "NOT": true, "NA": true,
}

// formulaLog lists the formula cells of the sheet being read that need
// a value calculated.
type formulaLog struct {
	need []cellKey
	over bool // more than maxCalcCells
}

func (p *Package) logFormula(k cellKey) {
	if p.computed != nil {
		return // the second reading: what is left was tried already
	}
	if len(p.formulas.need) >= maxCalcCells {
		p.formulas.over = true
		return
	}
	p.formulas.need = append(p.formulas.need, k)
}

// Package gives a worksheet reader's package, for read to find the
// formula cells it logged.
func (s *cellReader) Package() *Package { return s.pkg }

// Regions gives the filter that keeps the sheet's rows to the data
// region, and the notes on its tables, to the table builder.
func (s *cellReader) Regions() (*table.RegionFilter, []string) { return s.pkg.filter, s.pkg.tableNotes }

// formulaResults are the values calculated for one sheet, and why the
// others were not, by column.
type formulaResults struct {
	values map[cellKey]computedValue
	why    map[int32]string
}

// calculator checks formulas and calculates the ones it trusts.
type calculator struct {
	f     *excelize.File
	sheet string
	memo  map[cellKey]string // "" when trusted, else why not
}

var plainRef = regexp.MustCompile(`^\$?([A-Za-z]{1,3})\$?([0-9]{1,7})(?::\$?([A-Za-z]{1,3})\$?([0-9]{1,7}))?$`)

// calculate tries every logged cell of the sheet.
func calculate(path, sheet, part string, log formulaLog, opts table.Options) (res *formulaResults) {
	res = &formulaResults{values: map[cellKey]computedValue{}, why: map[int32]string{}}
	whyAll := func(why string) {
		for _, k := range log.need {
			if _, ok := res.why[k.col]; !ok {
				res.why[k.col] = why
			}
		}
	}
	if log.over {
		whyAll(fmt.Sprintf("the sheet has more than %d such formulas, more than Slopewise calculates", maxCalcCells))
		return res
	}
	defer func() {
		if r := recover(); r != nil {
			res.values = map[cellKey]computedValue{}
			whyAll(fmt.Sprint("the calculation stopped: ", r))
		}
	}()
	limit, limitXML := SizeLimits(opts.UnzipSizeLimit, opts.UnzipXMLSizeLimit)
	outline, err := calcOutline(path, part, opts)
	var big sheetTooBig
	if errors.As(err, &big) {
		whyAll(fmt.Sprintf("the sheet unpacks to %s, more than Slopewise calculates formulas in (%s)", ByteSize(int64(big)), ByteSize(maxCalcSheet)))
		return res
	}
	if err != nil {
		whyAll("the workbook could not be opened to calculate them: " + err.Error())
		return res
	}
	f, err := excelize.OpenReader(bytes.NewReader(outline), excelize.Options{RawCellValue: true, UnzipSizeLimit: limit, UnzipXMLSizeLimit: limitXML})
	if err != nil {
		whyAll("the workbook could not be opened to calculate them: " + err.Error())
		return res
	}
	defer f.Close()
	c := &calculator{f: f, sheet: sheet, memo: map[cellKey]string{}}
	need := append([]cellKey(nil), log.need...)
	sort.Slice(need, func(i, j int) bool {
		if need[i].row != need[j].row {
			return need[i].row < need[j].row
		}
		return need[i].col < need[j].col
	})
	for _, k := range need {
		why := c.trusted(k, 0)
		if why == "" {
			v, ok := c.value(k)
			if ok {
				res.values[k] = v
				continue
			}
			why = "gives an empty result, which spreadsheet programs read differently"
		}
		if _, ok := res.why[k.col]; !ok {
			res.why[k.col] = fmt.Sprintf("the formula in %s %s", k.ref(), why)
		}
	}
	return res
}

// calcOutline is the workbook with only what calculating one sheet's
// formulas needs: the package's and the workbook's parts and
// relationships, the sheet, the shared text and the styles. Other
// worksheets become empty ones (a formula that refers to them is refused
// anyway) and every other part is left out, since excelize holds every
// part of a package in memory once it opens it.
func calcOutline(file, part string, opts table.Options) ([]byte, error) {
	p, err := OpenPackage(file, opts)
	if err != nil {
		return nil, err
	}
	defer p.Close()
	if f := p.File(part); f != nil && f.UncompressedSize64 > maxCalcSheet {
		return nil, sheetTooBig(min(f.UncompressedSize64, 1<<62))
	}
	keep := map[string]bool{"[content_types].xml": true, "_rels/.rels": true}
	for _, n := range []string{p.WorkbookPart, path.Join(path.Dir(p.WorkbookPart), "_rels", path.Base(p.WorkbookPart)+".rels"), part, p.sstPart, p.StylesPart} {
		if n != "" {
			keep[strings.ToLower(n)] = true
		}
	}
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	for _, f := range p.Zip.File {
		name := strings.ToLower(strings.ReplaceAll(f.Name, "\\", "/"))
		switch {
		case keep[name]:
			if err := CopyRaw(zw, f); err != nil {
				return nil, err
			}
		case IsWorksheetPart(name):
			w, err := zw.Create(f.Name)
			if err != nil {
				return nil, err
			}
			io.WriteString(w, EmptyWorksheet)
		}
	}
	if err := zw.Close(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// sheetTooBig is calcOutline's refusal of a sheet past maxCalcSheet,
// with its unpacked size.
type sheetTooBig int64

func (s sheetTooBig) Error() string { return "the sheet unpacks to " + ByteSize(int64(s)) }

// trusted says why the formula of cell k, or of a cell it uses, cannot
// be calculated; "" when it can.
func (c *calculator) trusted(k cellKey, depth int) string {
	if why, ok := c.memo[k]; ok {
		return why
	}
	if depth > maxCalcDepth {
		return fmt.Sprintf("is at the end of a chain of more than %d formulas", maxCalcDepth)
	}
	c.memo[k] = "refers back to itself (a circular reference)"
	formula, err := c.f.GetCellFormula(c.sheet, k.ref())
	var why string
	switch {
	case err != nil:
		why = "cannot be read: " + err.Error()
	case strings.TrimSpace(formula) == "":
		why = "cannot be read"
	default:
		why = c.check(formula, depth)
	}
	c.memo[k] = why
	return why
}

// check applies the rules above to one formula's tokens. What excelize
// and LibreOffice were seen to do differently is refused: a reference to
// an empty cell outside a function that takes ranges (excelize gives an
// empty result or compares it unlike ""; spreadsheet programs take 0 or
// ""), TRUE/FALSE inside a range (LibreOffice adds them up, excelize does
// not), joining numbers into text with & (the programs write numbers as
// text differently), and a power whose exponent is not a number written
// in the formula (a result too small to hold is 0 in excelize, #NUM! in
// LibreOffice).
func (c *calculator) check(formula string, depth int) string {
	p := efp.ExcelParser()
	var calls []string // the functions open at this token
	tokens := p.Parse(formula)
	for i, t := range tokens {
		switch t.TType {
		case efp.TokenTypeWhitespace, efp.TokenTypeArgument, efp.TokenTypeOperatorPrefix:
		case efp.TokenTypeSubexpression:
			if t.TSubType == efp.TokenSubTypeStart {
				calls = append(calls, "")
			} else if len(calls) > 0 {
				calls = calls[:len(calls)-1]
			}
		case efp.TokenTypeOperatorPostfix:
			if t.TValue != "%" {
				return "uses " + t.TValue + ", which Slopewise does not calculate"
			}
		case efp.TokenTypeOperatorInfix:
			switch t.TSubType {
			case efp.TokenSubTypeMath, efp.TokenSubTypeLogical:
				if t.TValue == "^" && !literalExponent(tokens[i+1:]) {
					return "raises to a power that is not a number written in the formula, which spreadsheet programs calculate differently when the result is very small"
				}
			case efp.TokenSubTypeConcatenation:
				return "joins values into text with &, which spreadsheet programs do differently for some numbers"
			default:
				return fmt.Sprintf("joins ranges with %q, which Slopewise does not calculate", t.TValue)
			}
		case efp.TokenTypeFunction:
			name := strings.ToUpper(t.TValue)
			if t.TSubType == efp.TokenSubTypeStart {
				if !calcFunctions[name] {
					name = strings.TrimPrefix(name, "_XLFN.")
					if name == "ARRAY" || name == "ARRAYROW" {
						return "holds an array of values, which Slopewise does not calculate"
					}
					return "uses " + name + ", which Slopewise does not calculate"
				}
				calls = append(calls, name)
			} else if len(calls) > 0 {
				calls = calls[:len(calls)-1]
			}
		case efp.TokenTypeOperand:
			switch t.TSubType {
			case efp.TokenSubTypeNumber, efp.TokenSubTypeText, efp.TokenSubTypeLogical:
			case efp.TokenSubTypeRange:
				inRange := len(calls) > 0 && rangeFunctions[calls[len(calls)-1]]
				if why := c.checkRange(t.TValue, inRange, depth); why != "" {
					return why
				}
			default:
				return fmt.Sprintf("holds %s, which Slopewise does not calculate", t.TValue)
			}
		default:
			return fmt.Sprintf("holds %q, which Slopewise does not calculate", t.TValue)
		}
	}
	return ""
}

// literalExponent reports whether the tokens after ^ start with a
// number, with or without a sign, of at most 16 in size.
func literalExponent(rest []efp.Token) bool {
	for len(rest) > 0 && (rest[0].TType == efp.TokenTypeWhitespace || rest[0].TType == efp.TokenTypeOperatorPrefix) {
		rest = rest[1:]
	}
	if len(rest) == 0 || rest[0].TType != efp.TokenTypeOperand || rest[0].TSubType != efp.TokenSubTypeNumber {
		return false
	}
	n, err := strconv.ParseFloat(rest[0].TValue, 64)
	return err == nil && math.Abs(n) <= 16
}

// rangeFunctions take ranges and leave out the empty and text cells in
// them.
var rangeFunctions = map[string]bool{"SUM": true, "AVERAGE": true, "MIN": true, "MAX": true, "COUNT": true, "PRODUCT": true}

// checkRange allows a cell or range of the same sheet whose formula
// cells are all trusted: a range only as an argument of a function of
// rangeFunctions (inRange), and there without TRUE/FALSE cells; a single
// cell elsewhere only when it is not empty.
func (c *calculator) checkRange(ref string, inRange bool, depth int) string {
	m := plainRef.FindStringSubmatch(ref)
	if m == nil {
		if strings.Contains(ref, "!") {
			return "refers to another sheet (" + ref + ")"
		}
		return "uses " + ref + ", which is not a cell of this sheet"
	}
	if m[3] != "" && !inRange {
		return "uses the range " + ref + " outside SUM, AVERAGE, MIN, MAX, COUNT or PRODUCT"
	}
	c1, ok1 := RefColumn(m[1])
	r1, err1 := strconv.Atoi(m[2])
	c2, r2, ok2, err2 := c1, r1, true, error(nil)
	if m[3] != "" {
		c2, ok2 = RefColumn(m[3])
		r2, err2 = strconv.Atoi(m[4])
	}
	if !ok1 || !ok2 || err1 != nil || err2 != nil || r1 < 1 || r2 < 1 || r1 > 1048576 || r2 > 1048576 {
		return "refers to " + ref + ", which is not a cell of a sheet"
	}
	c1, c2 = min(c1, c2), max(c1, c2)
	r1, r2 = min(r1, r2), max(r1, r2)
	if (c2-c1+1)*(r2-r1+1) > maxCalcRange {
		return fmt.Sprintf("uses the range %s of more than %d cells", ref, maxCalcRange)
	}
	for r := r1; r <= r2; r++ {
		for col := c1; col <= c2; col++ {
			k := cellKey{row: int32(r), col: int32(col)}
			cell := k.ref()
			formula, _ := c.f.GetCellFormula(c.sheet, cell)
			if formula == "" {
				typ, _ := c.f.GetCellType(c.sheet, cell)
				if inRange && typ == excelize.CellTypeBool {
					return fmt.Sprintf("adds up TRUE/FALSE values (%s), which spreadsheet programs do differently", cell)
				}
				if !inRange {
					if v, _ := c.f.GetCellValue(c.sheet, cell, excelize.Options{RawCellValue: true}); v == "" {
						return fmt.Sprintf("uses the empty cell %s, which spreadsheet programs read as 0 or as empty text depending on the formula", cell)
					}
				}
				continue
			}
			if why := c.trusted(k, depth+1); why != "" {
				if strings.HasPrefix(why, "uses the value of ") {
					return why
				}
				return fmt.Sprintf("uses the value of %s, whose formula %s", cell, why)
			}
		}
	}
	return ""
}

// value calculates a trusted cell and types its result.
func (c *calculator) value(k cellKey) (computedValue, bool) {
	v, err := c.f.CalcCellValue(c.sheet, k.ref(), excelize.Options{RawCellValue: true})
	if table.ErrorValues[strings.ToUpper(strings.TrimSpace(v))] {
		return computedValue{typ: "e", v: strings.ToUpper(strings.TrimSpace(v))}, true
	}
	if err != nil {
		return computedValue{}, false
	}
	switch v {
	case "TRUE":
		return computedValue{typ: "b", v: "1"}, true
	case "FALSE":
		return computedValue{typ: "b", v: "0"}, true
	}
	if v == "" {
		return computedValue{}, false // an empty cell's value, or empty text: the programs differ
	}
	if n, err := strconv.ParseFloat(v, 64); err == nil {
		if math.IsInf(n, 0) || math.IsNaN(n) {
			// Overflow or a logarithm of 0: spreadsheet programs give
			// #NUM! (LibreOffice 7.4 in TestCalcAgainstLibreOffice).
			return computedValue{typ: "e", v: "#NUM!"}, true
		}
		return computedValue{typ: "n", v: v}, true
	}
	return computedValue{typ: "str", v: v}, true
}

// explainFormulas records why cells were not calculated and adds notes
// on the formula cells that had no usable saved result.
func explainFormulas(t *table.Table, res *formulaResults) {
	for _, col := range t.Columns {
		f := &col.Formulas
		if f.Missing > 0 {
			f.Why = res.why[int32(col.Index)]
		}
		add := func(format string, args ...any) {
			t.Notes = append(t.Notes, table.Note{Sheet: t.Sheet, Column: col.Name, Text: fmt.Sprintf(format, args...)})
		}
		if f.Computed > 0 {
			if f.Stale > f.Missing {
				add("%d formula cell(s) held results the workbook marks as out of date (it asks to be recalculated when opened); Slopewise calculated them", f.Computed)
			} else {
				add("%d formula cell(s) had no saved result; Slopewise calculated them", f.Computed)
			}
		}
		if f.Missing > 0 {
			add("%s", col.FormulaProblem(t, true))
		}
	}
}
