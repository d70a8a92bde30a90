// Command gen writes the demonstration workbook made by package demo:
//
//	go run ./internal/demo/gen assets/demo.xlsx
package main

import (
	"fmt"
	"os"

	"slopewise/internal/demo"
)

func main() {
	if len(os.Args) != 2 {
		fmt.Fprintln(os.Stderr, "usage: go run ./internal/demo/gen PATH.xlsx")
		os.Exit(2)
	}
	b, err := demo.Workbook()
	if err == nil {
		err = os.WriteFile(os.Args[1], b, 0o644)
	}
	if err != nil {
		fmt.Fprintln(os.Stderr, "gen:", err)
		os.Exit(1)
	}
}
