package workbook_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"slopewise/internal/io/workbook"
	"slopewise/internal/report"
)

// Reading a small export with a hand-typed marker and an error value, and
// listing each missing cell by its reference.
func ExampleRead() {
	dir, _ := os.MkdirTemp("", "example")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "visits.csv")
	os.WriteFile(path, []byte("Person;Arm;Score\n1;treated;12,5\n2;control;N/A\n3;treated;#DIV/0!\n4;control;9\n"), 0o644)

	t, err := workbook.Read(context.Background(), path, workbook.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range t.Columns {
		fmt.Printf("%s: %v\n", c.Name, c.Kind)
	}
	for _, p := range t.Problems() {
		fmt.Println(t.Describe(p))
	}
	// Output:
	// Person: number
	// Arm: yes/no
	// Score: number
	// cell C3: missing marker
	// cell C4: error value
}

// Writing a results sheet beside a CSV file: the CSV stays as it is.
func ExampleWriteResults() {
	dir, _ := os.MkdirTemp("", "example")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "visits.csv")
	os.WriteFile(path, []byte("Person,Score\n1,12.5\n2,9\n"), 0o644)

	sheet := &report.Sheet{
		Blocks: []report.Block{{Title: "Effect", Rows: [][]report.Cell{
			{report.HeadingCell("Estimate"), report.HeadingCell("p")},
			{report.NumberCell(1.234, "0.00"), report.PValueCell(0.03)},
		}}},
		Spec: []byte(`{"outcome":"Score"}`),
	}
	w, err := workbook.WriteResults(path, sheet, workbook.WriteOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	spec, _ := workbook.ReadSpec(w.Path, w.Sheet)
	fmt.Println(filepath.Base(w.Path), "/", w.Sheet, "/", string(spec))
	// Output:
	// visits results.xlsx / Slopewise results / {"outcome":"Score"}
}
