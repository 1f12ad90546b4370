// Package assets holds the files Spotloom embeds: the application icon,
// drawn for this project (a collimator wheel with four apertures and the
// fan of its swept beam).
package assets

import (
	_ "embed"

	"fyne.io/fyne/v2"
)

//go:embed icon.svg
var iconSVG []byte

// Icon is the application and window icon.
var Icon fyne.Resource = fyne.NewStaticResource("spotloom.svg", iconSVG)
