package table

import (
	"math"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"
)

// cellType is what a source cell holds before the column's kind is known.
type cellType uint8

const (
	CellText    cellType = iota // text, possibly a number stored as text
	CellNumber                  // a stored number in Num
	CellBool                    // TRUE/FALSE; Num is 1 or 0
	CellError                   // a spreadsheet error value in Text
	CellNoValue                 // a formula whose result was never saved
)

// RawCell is one non-empty source cell as a RowSource delivers it.
type RawCell struct {
	Col  int // 0-based
	Type cellType
	Text string
	Num  float64
	// Date marks a number displayed with a date or time format; Num is
	// then a 1900-system serial.
	Date bool
	// Formula says whether the cell holds a formula and where its value
	// came from.
	Formula formulaState
	// Line is the line of a text file the cell starts on (0 in workbooks).
	Line int
}

// formulaState says where a formula cell's value came from.
type formulaState uint8

const (
	noFormula         formulaState = iota
	FormulaSaved                   // the result saved in the file
	FormulaComputed                // calculated by Slopewise (formulas.go)
	FormulaRecomputed              // likewise, in place of a saved result marked out of date
	FormulaMissing                 // no saved result, not calculated
	FormulaStale                   // a saved result the workbook says is out of date, not calculated
)

// RowSource delivers a sheet's non-empty rows in order. It is the seam
// between the file formats and the column builder: a faster workbook
// reader only needs to implement it.
type RowSource interface {
	// Next returns the next row that has at least one cell, its 1-based
	// row number, and its cells in column order. The slice is reused by
	// the next call. At the end it returns io.EOF.
	Next() (row int, cells []RawCell, err error)
	Close() error
}

// ErrorValues are the spreadsheet error values (ECMA-376 Part 1, section
// 18.17.2.2 for the first seven; the rest are newer error values that
// current spreadsheet programs write, from memory).
var ErrorValues = map[string]bool{
	"#N/A": true, "#DIV/0!": true, "#VALUE!": true, "#REF!": true,
	"#NAME?": true, "#NUM!": true, "#NULL!": true,
	"#GETTING_DATA": true, "#SPILL!": true, "#CALC!": true, "#FIELD!": true,
	"#BLOCKED!": true, "#CONNECT!": true, "#BUSY!": true, "#UNKNOWN!": true,
}

// missingMarkers are values that people type by hand to mean "no value"
// (common practice in survey and monitoring data), compared without case.
var missingMarkers = map[string]bool{
	"na": true, "n/a": true, "n.a.": true, ".": true, "-": true, "--": true,
	"missing": true, "nan": true,
}

// TrimSpace trims ASCII and Unicode spaces, including the no-break spaces
// that copied numbers often carry.
func TrimSpace(s string) string {
	if s != "" && s[0] > ' ' && s[0] < 0x80 && s[len(s)-1] > ' ' && s[len(s)-1] < 0x80 {
		return s
	}
	return strings.TrimFunc(s, func(r rune) bool {
		return r == ' ' || r == '\t' || r == '\r' || r == '\n' || r == '\u00a0' || r == '\u202f' || r == '\u2007'
	})
}

// classify returns why a text value is missing, or Present.
func ClassifyText(s string) Reason {
	if s == "" {
		return Blank
	}
	if c := s[0]; c >= '0' && c <= '9' {
		return Present // no error value or marker starts with a digit
	}
	if s[0] == '#' && len(s) <= 16 && ErrorValues[strings.ToUpper(s)] {
		return ErrorValue
	}
	if len(s) <= 7 && missingMarkers[strings.ToLower(s)] {
		return Marker
	}
	return Present
}

// ParseNumber reads a number written as text: an optional sign, digits
// with an optional thousands separator in groups of three, a decimal
// separator ('.' or, with decimalComma, ','), an exponent, and an optional
// trailing percent sign (divided by 100). Spaces and no-break spaces may
// also group thousands. It accepts nothing else, so "inf", "0x10" and
// "1_000" stay text.
func ParseNumber(s string, decimalComma bool) (float64, bool) {
	if s == "" || len(s) > 64 {
		return 0, false
	}
	if v, ok := PlainDecimal(s, decimalComma); ok {
		return v, true
	}
	dec, thou := byte('.'), byte(',')
	if decimalComma {
		dec, thou = ',', '.'
	}
	percent := false
	if strings.HasSuffix(s, "%") {
		percent = true
		s = TrimSpace(s[:len(s)-1])
	}
	var b [64]byte
	out := b[:0]
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		out = append(out, s[i])
		i++
	}
	// Integer part with optional grouping.
	intStart := i
	group := -1 // digits since the last separator; -1: no separator yet
	var sep byte
	for i < len(s) {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			out = append(out, c)
			if group >= 0 {
				group++
			}
			i++
			continue
		case c == thou || c == ' ' || strings.HasPrefix(s[i:], "\u00a0") || strings.HasPrefix(s[i:], "\u202f"):
			if i == intStart || group >= 0 && group != 3 {
				return 0, false
			}
			if group < 0 && i-intStart > 3 {
				return 0, false
			}
			if sep != 0 && sep != c {
				return 0, false
			}
			sep = c
			group = 0
			_, w := utf8.DecodeRuneInString(s[i:])
			i += w
			continue
		}
		break
	}
	digits := len(out) > 0 && out[len(out)-1] >= '0' && out[len(out)-1] <= '9'
	if group >= 0 && group != 3 {
		return 0, false
	}
	if i < len(s) && s[i] == dec {
		out = append(out, '.')
		i++
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			out = append(out, s[i])
			digits = true
			i++
		}
	}
	if !digits {
		return 0, false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		out = append(out, 'e')
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			out = append(out, s[i])
			i++
		}
		expStart := i
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			out = append(out, s[i])
			i++
		}
		if i == expStart {
			return 0, false
		}
	}
	if i != len(s) {
		return 0, false
	}
	v, err := strconv.ParseFloat(string(out), 64)
	if err != nil || math.IsInf(v, 0) {
		return 0, false
	}
	if percent {
		v /= 100
	}
	return v, true
}

// pow10 are the powers of ten that float64 holds exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// PlainDecimal reads the commonest numbers, an optional minus sign and at
// most 15 digits with an optional decimal point ("-12.5", "1000"), without
// copying: the digits make an integer m < 10¹⁵ and the value is m / 10ᵉ,
// both exact in float64, so the one division is correctly rounded — the
// value strconv.ParseFloat returns (its exact fast path; Clinger 1990,
// "How to read floating point numbers accurately"). ok is false for
// anything else, which parseNumber then reads in full.
func PlainDecimal(s string, decimalComma bool) (float64, bool) {
	dec := byte('.')
	if decimalComma {
		dec = ','
	}
	i, neg := 0, false
	if s[0] == '-' {
		i, neg = 1, true
	}
	var m uint64
	digits, frac, point := 0, 0, false
	for ; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			m = m*10 + uint64(c-'0')
			digits++
			if point {
				frac++
			}
		case c == dec && !point:
			point = true
		default:
			return 0, false
		}
	}
	if digits == 0 || digits > 15 || point && frac == 0 {
		return 0, false
	}
	v := float64(m) / pow10[frac]
	if neg {
		v = -v
	}
	return v, true
}

// dateLayouts are the date and time forms read from text: ISO 8601 only,
// since "03/04/2024" means different days in different countries.
var dateLayouts = []string{
	"2006-01-02",
	"2006-01-02 15:04",
	"2006-01-02 15:04:05",
	"2006-01-02T15:04",
	"2006-01-02T15:04:05",
	"2006-01-02T15:04:05Z07:00",
	"2006-01-02T15:04:05.999999999",
	"2006-01-02T15:04:05.999999999Z07:00",
	"2006/01/02",
}

// ParseDate reads an ISO 8601 date or date-time written as text into a
// 1900-system serial.
func ParseDate(s string) (float64, bool) {
	if len(s) < 10 || len(s) > 40 || s[0] < '0' || s[0] > '9' {
		return 0, false
	}
	for _, layout := range dateLayouts {
		if t, err := time.Parse(layout, s); err == nil {
			if t.Year() < 1900 || t.Year() > 9999 {
				return 0, false
			}
			return TimeToSerial(t.UTC()), true
		}
	}
	return 0, false
}
