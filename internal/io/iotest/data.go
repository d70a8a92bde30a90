package iotest

import (
	"bufio"
	"fmt"
	"math/rand"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/xuri/excelize/v2"
	"slopewise/internal/io/table"
)

// The read benchmark's sheet: 1,000,000 rows of 12 columns, the size of a
// large monitoring export. The files are made once and kept in the
// temporary folder, so that a run under /usr/bin/time -v measures the
// read alone:
//
//	go test -c -o /tmp/wb.test ./internal/io/workbook
//	/tmp/wb.test -test.run '^$' -test.bench 'BenchmarkRead1M/csv' -test.benchtime 1x   # makes the files
//	/usr/bin/time -v /tmp/wb.test -test.run '^$' -test.bench 'BenchmarkRead1M/xlsx' -test.benchtime 1x
const (
	BenchRows = 1_000_000
	BenchCols = 12
)

var benchHeader = []string{"Person", "Arm", "Site", "Score", "Age", "Income", "Visit date", "Sessions", "Note", "X1", "X2", "X3"}

// benchRow returns row i's values: numbers, a 0/1 arm, a category, a
// date serial and a short text.
func benchRow(rng *rand.Rand, i int) []any {
	return []any{
		i + 1, i % 2, []string{"North", "South", "East", "West", "Centre"}[rng.Intn(5)],
		rng.NormFloat64()*10 + 50, 18 + rng.Intn(60), float64(rng.Intn(9_000_000)) / 100,
		float64(44000 + rng.Intn(2000)), rng.Intn(12), "n" + strconv.Itoa(rng.Intn(1000)),
		rng.Float64(), rng.NormFloat64(), rng.ExpFloat64(),
	}
}

func BenchFile(b *testing.B, ext string) string {
	b.Helper()
	path := filepath.Join(os.TempDir(), fmt.Sprintf("slopewise-bench-%dx%d.%s", BenchRows, BenchCols, ext))
	if _, err := os.Stat(path); err == nil {
		return path
	}
	rng := rand.New(rand.NewSource(1))
	tmp := path + ".part." + ext
	switch ext {
	case "csv":
		f, err := os.Create(tmp)
		if err != nil {
			b.Fatal(err)
		}
		w := bufio.NewWriterSize(f, 1<<20)
		for j, h := range benchHeader {
			if j > 0 {
				w.WriteByte(',')
			}
			w.WriteString(h)
		}
		w.WriteByte('\n')
		for i := 0; i < BenchRows; i++ {
			for j, v := range benchRow(rng, i) {
				if j > 0 {
					w.WriteByte(',')
				}
				switch v := v.(type) {
				case float64:
					if j == 6 {
						w.WriteString(table.SerialToTime(v).Format("2006-01-02"))
					} else {
						w.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
					}
				default:
					fmt.Fprint(w, v)
				}
			}
			w.WriteByte('\n')
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
		if err := f.Close(); err != nil {
			b.Fatal(err)
		}
	case "xlsx":
		f := excelize.NewFile()
		sw, err := f.NewStreamWriter("Sheet1")
		if err != nil {
			b.Fatal(err)
		}
		date, err := f.NewStyle(&excelize.Style{NumFmt: 14})
		if err != nil {
			b.Fatal(err)
		}
		header := make([]any, len(benchHeader))
		for j, h := range benchHeader {
			header[j] = h
		}
		if err := sw.SetRow("A1", header); err != nil {
			b.Fatal(err)
		}
		for i := 0; i < BenchRows; i++ {
			values := benchRow(rng, i)
			values[6] = excelize.Cell{StyleID: date, Value: values[6]}
			if err := sw.SetRow("A"+strconv.Itoa(i+2), values); err != nil {
				b.Fatal(err)
			}
		}
		if err := sw.Flush(); err != nil {
			b.Fatal(err)
		}
		if err := f.SaveAs(tmp); err != nil {
			b.Fatal(err)
		}
		f.Close()
	}
	if err := os.Rename(tmp, path); err != nil {
		b.Fatal(err)
	}
	return path
}
