package ui

import (
	"image/color"
	"math"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/theme"
)

// relativeLuminance is the relative luminance of c as WCAG 2.1 defines it
// (Understanding SC 1.4.3, "relative luminance": sRGB channels linearised
// with the 0.03928 knee, weighted 0.2126, 0.7152, 0.0722).
func relativeLuminance(c color.Color) float64 {
	r, g, b, _ := color.NRGBAModel.Convert(c).RGBA()
	lin := func(v uint32) float64 {
		s := float64(v) / 0xffff
		if s <= 0.03928 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	return 0.2126*lin(r) + 0.7152*lin(g) + 0.0722*lin(b)
}

// contrastRatio is (L1 + 0.05) / (L2 + 0.05) with L1 the lighter (WCAG 2.1,
// "contrast ratio").
func contrastRatio(a, b color.Color) float64 {
	la, lb := relativeLuminance(a), relativeLuminance(b)
	return (math.Max(la, lb) + 0.05) / (math.Min(la, lb) + 0.05)
}

// TestDisabledTextReads: the text of a disabled control stands out from
// the grounds it is drawn on by at least 4.5:1, WCAG 2.1 SC 1.4.3's level
// for normal text (the criterion exempts inactive controls; we hold them to
// it so they read), and stays dimmer than the ordinary text by at least
// 1.5:1, so it still looks off (the 1.5 is common practice, no published
// source).
func TestDisabledTextReads(t *testing.T) {
	// WCAG 2.1's own worked values: white on black is 21:1, and #777777
	// on white is just under 4.5:1 (4.48; both values from memory of the
	// guideline's examples).
	if r := contrastRatio(color.White, color.Black); math.Abs(r-21) > 1e-9 {
		t.Fatalf("white on black %.3f, want 21", r)
	}
	if r := contrastRatio(color.NRGBA{0x77, 0x77, 0x77, 0xff}, color.White); math.Abs(r-4.48) > 0.01 {
		t.Fatalf("#777 on white %.3f, want 4.48", r)
	}
	th := Theme()
	v := theme.VariantDark
	ink := th.Color(theme.ColorNameDisabled, v)
	for _, ground := range []fyne.ThemeColorName{theme.ColorNameDisabledButton, theme.ColorNameBackground, theme.ColorNameInputBackground, theme.ColorNameButton} {
		if r := contrastRatio(ink, th.Color(ground, v)); r < 4.5 {
			t.Errorf("disabled text on %s: contrast %.2f:1, want at least 4.5:1", ground, r)
		}
	}
	if r := contrastRatio(th.Color(theme.ColorNameForeground, v), ink); r < 1.5 {
		t.Errorf("disabled text against the ordinary text: %.2f:1, want at least 1.5:1 so it looks off", r)
	}
	// The light variant asked for still gives the dark theme.
	if th.Color(theme.ColorNameBackground, theme.VariantLight) != th.Color(theme.ColorNameBackground, v) {
		t.Error("the theme follows the desktop's light variant")
	}
}
