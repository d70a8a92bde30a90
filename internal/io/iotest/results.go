package iotest

import (
	"bytes"
	"image"
	"image/color"
	"image/png"
	"strings"
	"testing"

	"slopewise/internal/report"
)

func PNG(t testing.TB, w, h int) []byte {
	t.Helper()
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	for x := 0; x < w; x++ {
		for y := 0; y < h; y++ {
			img.Set(x, y, color.RGBA{uint8(x * 5), uint8(y * 7), 120, 255})
		}
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// resultsGrid uses every kind of cell.
func ResultsGrid(t testing.TB) *report.Sheet {
	return &report.Sheet{
		Name: "Slopewise results",
		Blocks: []report.Block{
			{Title: "Effect of the programme by group", Rows: [][]report.Cell{
				{report.HeadingCell("Group"), report.HeadingCell("Effect"), report.HeadingCell("Share"), report.HeadingCell("p")},
				{report.TextCell("North"), report.NumberCell(0.12345678901234567, "0.00"), report.PercentCell(0.4567, 1), report.PValueCell(0.000123456789)},
				{report.TextCell("South"), report.NumberCell(-1234567.890123, "#,##0.0"), report.PercentCell(0.5, 0), report.PValueCell(0.04321)},
			}},
			{Rows: [][]report.Cell{{report.ParagraphCell("The programme raised scores in the North more than in the South. "+strings.Repeat("This sentence makes the note long enough to wrap. ", 4), 4)}}},
			{Title: "Chart", Image: &report.Image{Title: "Effects with confidence intervals", PNG: PNG(t, 120, 80), Width: 120, Height: 80}},
		},
		Settings: []report.Setting{{Label: "Sheet", Value: "Visits"}, {Label: "Header row", Value: "1"}},
		Spec:     []byte(`{"sheet":"Visits","header_row":1,"outcome":"Score"}`),
	}
}
