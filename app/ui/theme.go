package ui

import (
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/theme"
)

// darkTheme is Fyne's default theme held in its dark variant: images are
// judged best on a dark surround, and the window then looks the same on
// every desktop and in the snapshot. Disabled texts are lighter than
// Fyne's own, so a control that is off (a "Found automatically" button
// while the value is already automatic, Undo with nothing to undo) still
// reads; it stays well below the ordinary text, so it still looks off.
type darkTheme struct{ fyne.Theme }

// disabledInk is the text and icon colour of disabled controls.
var disabledInk = color.NRGBA{R: 0x9a, G: 0x9b, B: 0xa0, A: 0xff}

func (t darkTheme) Color(name fyne.ThemeColorName, _ fyne.ThemeVariant) color.Color {
	if name == theme.ColorNameDisabled {
		return disabledInk
	}
	return t.Theme.Color(name, theme.VariantDark)
}

// Theme returns the theme the workstation is designed for.
func Theme() fyne.Theme { return darkTheme{theme.DefaultTheme()} }

func snapshotTheme() fyne.Theme { return Theme() }
