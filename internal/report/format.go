package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Numbers in sentences are rounded for reading — three significant digits,
// thousands separated — while the tables keep every digit.

// readable writes x with three significant digits.
func readable(x float64) string {
	return sigDigits(x, 3)
}

func sigDigits(x float64, digits int) string {
	switch {
	case x == 0:
		return "0"
	case math.IsNaN(x) || math.IsInf(x, 0):
		return "not available"
	}
	mag := int(math.Floor(math.Log10(math.Abs(x))))
	if mag < -4 || mag > 12 {
		return strconv.FormatFloat(x, 'g', digits, 64)
	}
	decimals := digits - 1 - mag
	if decimals < 0 {
		p := math.Pow(10, float64(-decimals))
		x = math.Round(x/p) * p
		decimals = 0
	}
	s := strconv.FormatFloat(x, 'f', decimals, 64)
	if s == "-0" || strings.Trim(s, "-0.") == "" {
		return "0"
	}
	return groupThousands(s)
}

// groupThousands puts commas between groups of three digits of the integer
// part.
func groupThousands(s string) string {
	sign := ""
	if strings.HasPrefix(s, "-") {
		sign, s = "-", s[1:]
	}
	intPart, frac := s, ""
	if i := strings.IndexByte(s, '.'); i >= 0 {
		intPart, frac = s[:i], s[i:]
	}
	if len(intPart) <= 4 {
		return sign + intPart + frac
	}
	var b strings.Builder
	for i, c := range intPart {
		if i > 0 && (len(intPart)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	return sign + b.String() + frac
}

// pText writes a p-value for a sentence.
func pText(p float64) string {
	if p < 0.001 {
		return "p < 0.001"
	}
	return "p = " + sigDigits(p, 2)
}

// level is the confidence level in percent, "95%".
func level(alpha float64) string {
	return strconv.FormatFloat(100*(1-alpha), 'f', -1, 64) + "%"
}

// units says how effects on the outcome are expressed: percentage points
// for a 0/1 outcome, the outcome's own units otherwise.
type units struct {
	scale  float64
	suffix string
}

func unitsFor(binaryOutcome bool) units {
	if binaryOutcome {
		return units{scale: 100, suffix: " percentage points"}
	}
	return units{scale: 1}
}

func (u units) amount(x float64) string { return readable(u.scale*x) + u.suffix }

// interval writes "95% CI 1.2 to 3.4".
func (u units) interval(alpha, lo, hi float64) string {
	return fmt.Sprintf("%s CI %s to %s", level(alpha), readable(u.scale*lo), readable(u.scale*hi))
}
