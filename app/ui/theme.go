package ui

import (
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/theme"
)

// darkTheme is Fyne's default theme held in its dark variant: images are
// judged best on a dark surround, and the window then looks the same on
// every desktop and in the snapshot.
type darkTheme struct{ fyne.Theme }

func (t darkTheme) Color(name fyne.ThemeColorName, _ fyne.ThemeVariant) color.Color {
	return t.Theme.Color(name, theme.VariantDark)
}

// Theme returns the theme the workstation is designed for.
func Theme() fyne.Theme { return darkTheme{theme.DefaultTheme()} }

func snapshotTheme() fyne.Theme { return Theme() }
