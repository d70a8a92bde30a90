package gui

import (
	"image/color"
	"math"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/theme"
)

// contrast is the contrast ratio of two opaque colors (WCAG 2.1,
// "contrast ratio" and "relative luminance" definitions).
func contrast(a, b color.Color) float64 {
	lum := func(c color.Color) float64 {
		r, g, bl, _ := c.RGBA()
		ch := func(v uint32) float64 {
			x := float64(v) / 0xffff
			if x <= 0.03928 {
				return x / 12.92
			}
			return math.Pow((x+0.055)/1.055, 2.4)
		}
		return 0.2126*ch(r) + 0.7152*ch(g) + 0.0722*ch(bl)
	}
	la, lb := lum(a), lum(b)
	return (math.Max(la, lb) + 0.05) / (math.Min(la, lb) + 0.05)
}

// TestThemeContrast: every pair of text and background a person must read
// in the window reaches 4.5:1, and the outlines of boxes and radio buttons
// 3:1 against the page (WCAG 2.1, 1.4.3 and 1.4.11), in both variants.
func TestThemeContrast(t *testing.T) {
	th := newReadableTheme()
	type pair struct {
		what   string
		fg, bg fyne.ThemeColorName
		least  float64
	}
	pairs := []pair{
		{"text", theme.ColorNameForeground, theme.ColorNameBackground, 4.5},
		{"text of low importance (the tagline, the column-kind line, notes)", theme.ColorNameDisabled, theme.ColorNameBackground, 4.5},
		{"text of low importance on a button", theme.ColorNameDisabled, theme.ColorNameButton, 4.5},
		{"a field's placeholder", theme.ColorNamePlaceHolder, theme.ColorNameInputBackground, 4.5},
		{"headings in the main color", theme.ColorNamePrimary, theme.ColorNameBackground, 4.5},
		{"text on the main buttons", theme.ColorNameForegroundOnPrimary, theme.ColorNamePrimary, 4.5},
		{"text on buttons", theme.ColorNameForeground, theme.ColorNameButton, 4.5},
		{"checks that block the run", theme.ColorNameError, theme.ColorNameBackground, 4.5},
		{"warnings", theme.ColorNameWarning, theme.ColorNameBackground, 4.5},
		{"the outline of a box or a radio button", theme.ColorNameInputBorder, theme.ColorNameBackground, 3},
		{"menu text", theme.ColorNameForeground, theme.ColorNameMenuBackground, 4.5},
	}
	for _, v := range []fyne.ThemeVariant{theme.VariantLight, theme.VariantDark} {
		for _, p := range pairs {
			c := contrast(th.Color(p.fg, v), th.Color(p.bg, v))
			if c < p.least {
				t.Errorf("variant %d, %s: %.2f:1, want at least %.1f:1", v, p.what, c, p.least)
			}
		}
	}
	// Fyne's own defaults, for the record: the light theme's low
	// importance text is what made the tagline nearly invisible.
	if c := contrast(theme.DefaultTheme().Color(theme.ColorNameDisabled, theme.VariantLight), theme.DefaultTheme().Color(theme.ColorNameBackground, theme.VariantLight)); c >= 4.5 {
		t.Logf("Fyne's light disabled color now reaches %.2f:1; readableTheme may no longer be needed for it", c)
	}
}
