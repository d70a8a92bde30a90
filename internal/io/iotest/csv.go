package iotest

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"strings"
)

// messyCSV writes a text file whose columns each lean to one kind of
// content (numbers, 0/1, dates, groups, free text, two labels, blanks)
// with the odd cell of another kind, markers, error values, numbers
// written with separators or leading zeros, quoted fields with
// delimiters and line breaks, blank lines and CRLF line ends.
func MessyCSV(rng *rand.Rand, rows int, delim string) []byte {
	pools := [][]string{
		{"12", "3.5", "-0.25", "1e3", " 42 ", "1000000", "0.1"},
		{"0", "1"},
		{"2024-01-05", "2023-12-31", "2024-02-29 10:30", "2024/03/01"},
		{"north", "south", "east", "west"},
		{"free text", "more words", "x", "another one", "yet more"},
		{"yes", "no"},
		{"3", "3"},
	}
	odd := []string{"", "", "", "NA", "-", "#N/A", "#DIV/0!", "n/a", "007", "1,5", "12%", "text", "2024-13-01",
		`"quoted, with comma"`, "\"line\nbreak\"", `"say ""hi"""`, " ", "1 000", "TRUE"}
	cols := 3 + rng.IntN(6)
	lean := make([]int, cols)
	header := make([]string, cols)
	for j := range lean {
		lean[j] = rng.IntN(len(pools))
		header[j] = fmt.Sprintf("col %c", 'A'+j)
		if rng.IntN(8) == 0 {
			header[j] = ""
		}
	}
	var b bytes.Buffer
	eol := "\n"
	if rng.IntN(3) == 0 {
		eol = "\r\n"
	}
	b.WriteString(strings.Join(header, delim) + eol)
	for i := 0; i < rows; i++ {
		if rng.IntN(40) == 0 {
			b.WriteString(eol)
		}
		width := cols
		if rng.IntN(20) == 0 {
			width = rng.IntN(cols) + 1
		}
		cells := make([]string, width)
		for j := range cells {
			pool := pools[lean[j]]
			cells[j] = pool[rng.IntN(len(pool))]
			if lean[j] == 4 && rng.IntN(2) == 0 {
				cells[j] = fmt.Sprintf("note %d", rng.IntN(5000))
			}
			if rng.IntN(6) == 0 {
				cells[j] = odd[rng.IntN(len(odd))]
			}
			if delim != "," {
				cells[j] = strings.ReplaceAll(cells[j], ",", ";")
			}
		}
		b.WriteString(strings.Join(cells, delim) + eol)
	}
	return b.Bytes()
}
