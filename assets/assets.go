// Package assets holds the files built into the Slopewise program.
package assets

import _ "embed"

// DemoWorkbook is the demonstration workbook, an invented scenario with
// known true effects (see README.md beside it). It is made by package
// internal/demo; after changing that package, write it again with
//
//	go run ./internal/demo/gen assets/demo.xlsx
//
//go:embed demo.xlsx
var DemoWorkbook []byte

// Icon is the program's icon, 512 pixels square, rendered from icon.svg
// by icons/render.sh.
//
//go:embed icon.png
var Icon []byte
