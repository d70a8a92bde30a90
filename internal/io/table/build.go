package table

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"
)

// colBuilder gathers one column's cells before its kind is decided.
type colBuilder struct {
	index int
	nums  []float64 // the value of number, bool and date cells, else NaN
	texts []string  // text of text cells; allocated at the first one
	miss  []Reason  // Blank, ErrorValue, Marker, NoCachedValue or Present

	numbers, converted, dates, dateTexts, bools int
	distinctNums                                map[float64]struct{}
	formulas                                    FormulaCount
}

func newColBuilder(index int) *colBuilder {
	return &colBuilder{index: index, distinctNums: map[float64]struct{}{}}
}

// pad adds blank cells up to n rows.
func (b *colBuilder) pad(n int) {
	for len(b.miss) < n {
		b.add1(nil, false)
	}
}

// Add implements colAdder.
func (b *colBuilder) Add(row int, c *RawCell, decimalComma bool) {
	if row < len(b.miss) {
		return
	}
	b.pad(row)
	b.add1(c, decimalComma)
}

// add1 appends one row's cell (nil for a blank cell).
func (b *colBuilder) add1(c *RawCell, decimalComma bool) {
	row := len(b.miss)
	b.nums = append(grow(b.nums), math.NaN())
	b.miss = append(grow(b.miss), Present)
	if b.texts != nil {
		b.texts = append(grow(b.texts), "")
	}
	if c == nil {
		b.miss[row] = Blank
		return
	}
	if c.Formula != noFormula {
		b.countFormula(c.Formula)
	}
	switch c.Type {
	case CellNoValue:
		b.miss[row] = NoCachedValue
	case CellError:
		b.miss[row] = ErrorValue
	case CellBool:
		b.nums[row] = c.Num
		b.bools++
		b.setText(row, c.Text)
	case CellNumber:
		b.nums[row] = c.Num
		if c.Date {
			b.dates++
		} else {
			b.numbers++
			b.noteNum(c.Num)
		}
	case CellText:
		s := TrimSpace(c.Text)
		if r := ClassifyText(s); r != Present {
			b.miss[row] = r
			return
		}
		if v, ok := ParseNumber(s, decimalComma); ok {
			b.nums[row] = v
			b.converted++
			b.noteNum(v)
			// Keep the written form only where it is not the plain one
			// ("007", "1,5"): for a column that turns out to be text.
			var buf [32]byte
			if string(strconv.AppendFloat(buf[:0], v, 'g', -1, 64)) != s {
				b.setText(row, s)
			}
			return
		}
		if _, ok := ParseDate(s); ok {
			b.dateTexts++
			b.setText(row, s)
			return
		}
		b.setText(row, s)
	}
}

func (b *colBuilder) countFormula(s formulaState) {
	switch s {
	case FormulaSaved:
		b.formulas.Saved++
	case FormulaComputed, FormulaRecomputed:
		b.formulas.Computed++
	default:
		b.formulas.Missing++
	}
	if s == FormulaStale || s == FormulaRecomputed {
		b.formulas.Stale++
	}
}

// grow doubles a full slice's capacity: append alone grows a long slice
// by a quarter, copying a million-row column a dozen times over.
func grow[T any](s []T) []T {
	if len(s) < cap(s) || len(s) < 1024 {
		return s
	}
	return append(make([]T, 0, 2*cap(s)), s...)
}

func (b *colBuilder) noteNum(v float64) {
	if len(b.distinctNums) <= 2 {
		b.distinctNums[v] = struct{}{}
	}
}

func (b *colBuilder) setText(row int, s string) {
	if b.texts == nil {
		b.texts = make([]string, len(b.miss), cap(b.miss))
	}
	b.texts[row] = s
}

// MaxLevels is the most distinct values a text column may have and still
// be a category.
const MaxLevels = 50

// finish decides the column's kind and fills col.
func (b *colBuilder) finish(col *Column) {
	col.Missing = b.miss
	col.Formulas = b.formulas
	present := 0
	for _, r := range b.miss {
		if r == Present {
			present++
		}
	}
	numeric := b.numbers + b.converted
	switch {
	case present == 0:
		col.Kind = Empty
	case b.dates+b.dateTexts > present/2:
		col.Kind = Date
		col.Numbers = b.nums
		for i, r := range b.miss {
			if r != Present {
				continue
			}
			if b.texts != nil && b.texts[i] != "" {
				v, ok := ParseDate(b.texts[i])
				if !ok {
					v, b.miss[i] = math.NaN(), BadDate
				}
				col.Numbers[i] = v
			} else if math.IsNaN(col.Numbers[i]) {
				b.miss[i] = BadDate
			}
		}
	case numeric > present/2:
		if numeric > 0 && b.bools == 0 && isZeroOne(b.distinctNums) {
			b.finishYesNoNumbers(col)
			break
		}
		col.Kind = Number
		col.Numbers = b.nums
		col.Converted = b.converted
		for i, r := range b.miss {
			if r == Present && math.IsNaN(col.Numbers[i]) {
				b.miss[i] = TextInNumbers
			}
		}
	default:
		b.finishText(col, present)
	}
	col.Texts = nilIfKind(col.Kind, b.texts)
	if col.Kind == Number || col.Kind == Date {
		for _, v := range col.Numbers {
			if !math.IsNaN(v) && !slices.Contains(col.Distinct, v) {
				if col.Distinct = append(col.Distinct, v); len(col.Distinct) == 3 {
					break
				}
			}
		}
	}
	for _, r := range b.miss {
		col.MissingCount[r]++
	}
	col.MissingCount[Present] = 0
}

func nilIfKind(k Kind, texts []string) []string {
	if k == Number || k == Date || k == Empty {
		return nil
	}
	return texts
}

func isZeroOne(set map[float64]struct{}) bool {
	if len(set) != 2 {
		return false
	}
	_, zero := set[0]
	_, one := set[1]
	return zero && one
}

// finishYesNoNumbers makes a 0/1 column a yes/no column.
func (b *colBuilder) finishYesNoNumbers(col *Column) {
	col.Kind = YesNo
	col.Levels = []string{"0", "1"}
	col.Numbers = b.nums
	col.Converted = b.converted
	col.Texts = make([]string, len(b.nums))
	for i, v := range b.nums {
		switch {
		case b.miss[i] != Present:
		case v == 0:
			col.Texts[i] = col.Levels[0]
		case v == 1:
			col.Texts[i] = col.Levels[1]
		default:
			b.miss[i] = TextInNumbers
			col.Numbers[i] = math.NaN()
		}
	}
	b.texts = col.Texts
}

// finishText makes a yes/no, category or text column from a column that
// is mostly text; numbers in it are kept as their text.
func (b *colBuilder) finishText(col *Column, present int) {
	if b.texts == nil {
		b.texts = make([]string, len(b.miss))
	}
	distinct := map[string]bool{}
	for i, r := range b.miss {
		if r != Present {
			continue
		}
		if b.texts[i] == "" {
			b.texts[i] = formatNumber(b.nums[i])
		}
		if len(distinct) <= MaxLevels {
			distinct[b.texts[i]] = true
		}
	}
	n := len(distinct)
	switch {
	case n == 2:
		col.Kind = YesNo
	case n <= MaxLevels && n*2 <= present:
		col.Kind = Category
	default:
		col.Kind = Text
		return
	}
	col.Levels = make([]string, 0, n)
	for s := range distinct {
		col.Levels = append(col.Levels, s)
	}
	if col.Kind == YesNo {
		OrderYesNo(col.Levels)
	} else {
		sort.Strings(col.Levels)
	}
	code := make(map[string]float64, n)
	for i, s := range col.Levels {
		code[s] = float64(i)
	}
	col.Numbers = b.nums
	for i, r := range b.miss {
		if r == Present {
			col.Numbers[i] = code[b.texts[i]]
		} else {
			col.Numbers[i] = math.NaN()
		}
	}
}

// negativeWords are labels that come first (coded 0) in a yes/no column.
var negativeWords = map[string]bool{
	"no": true, "n": true, "false": true, "0": true, "control": true,
	"untreated": true, "off": true, "absent": true, "non": true, "none": true,
}

// OrderYesNo puts the negative-sounding label first, else sorts.
func OrderYesNo(levels []string) {
	sort.Strings(levels)
	if negativeWords[strings.ToLower(levels[1])] && !negativeWords[strings.ToLower(levels[0])] {
		levels[0], levels[1] = levels[1], levels[0]
	}
}

func formatNumber(v float64) string {
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// NameColumns turns header texts into unique column names, reporting
// blanks and duplicates as notes.
func NameColumns(header []string, indexes []int, sheet string, headerRow int) ([]string, []Note) {
	names := make([]string, len(header))
	var notes []Note
	seen := map[string]int{}
	next := map[string]int{} // the next number to try for a base name, so that renaming stays linear
	for i, h := range header {
		h = strings.Join(strings.Fields(h), " ")
		letter := ColumnLetter(indexes[i])
		if h == "" {
			h = "Column " + letter
			if headerRow > 0 {
				notes = append(notes, Note{Sheet: sheet, Cell: fmt.Sprintf("%s%d", letter, headerRow), Column: h,
					Text: "the header cell is blank, so the column is named after its letter"})
			}
		}
		base := h
		lb := strings.ToLower(base)
		for k := max(2, next[lb]); seen[strings.ToLower(h)] > 0; k++ {
			h = fmt.Sprintf("%s (%d)", base, k)
			next[lb] = k + 1
		}
		if h != base {
			notes = append(notes, Note{Sheet: sheet, Cell: fmt.Sprintf("%s%d", letter, headerRow), Column: h,
				Text: fmt.Sprintf("another column is already named %q, so this one is called %q", base, h)})
		}
		seen[strings.ToLower(h)]++
		names[i] = h
	}
	return names, notes
}
