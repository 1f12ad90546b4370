package ui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"
)

// SafetyCaution is shown in the About text. Spotloom only reads and
// records signals, but the people who record them work with X-ray sources.
const SafetyCaution = "X-rays are ionising radiation. Use only registered and shielded sources, " +
	"and wear dosimetry. Never image people or animals without the authorisation " +
	"local law requires. Local regulations and licensed radiation-safety practice " +
	"take precedence over anything in this program. Spotloom controls no source " +
	"and makes no dose claims."

const aboutText = "Spotloom turns the recorded signals of a flying-spot scanner — the detector, " +
	"the index pulse of the wheel or mirror and the cross-scan position — into a " +
	"calibrated image on a millimetre grid, and lets you re-align the delay and the " +
	"apertures while watching the image form."

// ShowAbout shows what Spotloom is, its version and the libraries it was
// built with, and the radiation-safety caution.
func (ws *Workstation) ShowAbout() {
	text := widget.NewLabel(aboutText)
	text.Wrapping = fyne.TextWrapWord
	caution := widget.NewLabel(SafetyCaution)
	caution.Wrapping = fyne.TextWrapWord
	caution.Importance = widget.WarningImportance
	var head fyne.CanvasObject = widget.NewLabelWithStyle("Spotloom", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	if ws.opts.Icon != nil {
		img := canvas.NewImageFromResource(ws.opts.Icon)
		img.FillMode = canvas.ImageFillContain
		img.SetMinSize(fyne.NewSize(56, 56))
		head = container.NewHBox(img, head)
	}
	version := widget.NewLabel(BuildVersion().String())
	version.Wrapping = fyne.TextWrapWord
	version.Importance = widget.LowImportance
	body := container.NewVBox(head, version, text,
		widget.NewLabelWithStyle("Radiation safety", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		caution)
	ws.showDialog(dialog.NewCustom("About Spotloom", "Close", container.New(&minWidth{w: 480}, body), ws.win))
}
