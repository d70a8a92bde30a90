package gui

import (
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/theme"
)

// readableTheme is Fyne's default theme with the colors of text a person
// must read, and of the outlines of boxes and radio buttons, changed to
// reach the contrast WCAG 2.1 asks (1.4.3: 4.5:1 for text; 1.4.11: 3:1
// for the parts of a control) in both variants. Fyne 2.7's defaults fall
// short: light text of low importance (#e3e3e3 on white, 1.3:1), the
// blue of headings and of the main buttons (#2979ff: 4.0:1 with white),
// the error and warning colors on white (3.7:1, 2.2:1), and the outlines
// of unchecked boxes (#e3e3e3 on white). TestThemeContrast measures
// every pair. The focus is a shade over the control (dark on light, light
// on dark), so a focused blue button changes visibly.
type readableTheme struct{ fyne.Theme }

func newReadableTheme() fyne.Theme { return readableTheme{theme.DefaultTheme()} }

func hex(v uint32) color.NRGBA {
	return color.NRGBA{R: uint8(v >> 16), G: uint8(v >> 8), B: uint8(v), A: 0xff}
}

// readableColors are the colors changed, by variant.
var readableColors = map[fyne.ThemeVariant]map[fyne.ThemeColorName]color.Color{
	theme.VariantLight: {
		theme.ColorNameDisabled:            hex(0x6e6e6e),
		theme.ColorNamePlaceHolder:         hex(0x6b6b6b),
		theme.ColorNamePrimary:             hex(0x1a5bbf),
		theme.ColorNameForegroundOnPrimary: hex(0xffffff),
		theme.ColorNameInputBorder:         hex(0x8a8a8a),
		theme.ColorNameError:               hex(0xc62828),
		theme.ColorNameWarning:             hex(0xa35c00),
		theme.ColorNameSuccess:             hex(0x2e7d32),
		theme.ColorNameFocus:               color.NRGBA{A: 0x40},
		theme.ColorNameHyperlink:           hex(0x1a5bbf),
	},
	theme.VariantDark: {
		theme.ColorNameDisabled:            hex(0x9a9a9a),
		theme.ColorNamePrimary:             hex(0x5c9dff),
		theme.ColorNameForegroundOnPrimary: hex(0x171718),
		theme.ColorNameInputBorder:         hex(0x7a7a7a),
		theme.ColorNameFocus:               color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0x40},
		theme.ColorNameHyperlink:           hex(0x5c9dff),
	},
}

func (t readableTheme) Color(n fyne.ThemeColorName, v fyne.ThemeVariant) color.Color {
	if c, ok := readableColors[v][n]; ok {
		return c
	}
	return t.Theme.Color(n, v)
}

// Theme is the window's theme (readableTheme), which the program sets on
// the app; the tests keep Fyne's test theme.
func Theme() fyne.Theme { return newReadableTheme() }
