// Package assets holds the files built into the Slopewise program.
package assets

import _ "embed"

// DemoWorkbook is the demonstration workbook, an invented scenario with
// known true effects (see README.md beside it). It is made by package
// internal/demo; after changing that package, write it again with
//
//	go run ./internal/demo/gen assets/demo.xlsx assets/demo-rollout.xlsx
//
//go:embed demo.xlsx
var DemoWorkbook []byte

// DemoRolloutWorkbook is the second demonstration workbook: the coaching
// roll-out, earnings before and after in two arms (see README.md beside
// it), made by package internal/demo (RolloutWorkbook).
//
//go:embed demo-rollout.xlsx
var DemoRolloutWorkbook []byte

// Icon is the program's icon, 512 pixels square, rendered from icon.svg
// by icons/render.sh.
//
//go:embed icon.png
var Icon []byte
