// Command gen writes the demonstration workbooks made by package demo:
// the pilot, and, given a second path, the roll-out (before and after, two
// arms):
//
//	go run ./internal/demo/gen assets/demo.xlsx assets/demo-rollout.xlsx
package main

import (
	"fmt"
	"os"

	"slopewise/internal/demo"
)

func main() {
	if len(os.Args) < 2 || len(os.Args) > 3 {
		fmt.Fprintln(os.Stderr, "usage: go run ./internal/demo/gen PILOT.xlsx [ROLLOUT.xlsx]")
		os.Exit(2)
	}
	makers := []func() ([]byte, error){demo.Workbook, demo.RolloutWorkbook}
	for i, path := range os.Args[1:] {
		b, err := makers[i]()
		if err == nil {
			err = os.WriteFile(path, b, 0o644)
		}
		if err != nil {
			fmt.Fprintln(os.Stderr, "gen:", err)
			os.Exit(1)
		}
	}
}
