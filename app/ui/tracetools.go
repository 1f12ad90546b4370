package ui

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// traceTools are the strip's buttons: zoom in time, the whole line again,
// clear the cursors and save a picture of the strip.
func (ws *Workstation) traceTools() fyne.CanvasObject {
	zoom := func(f float64) func() {
		return func() {
			from, to := ws.strip.Window()
			ws.strip.ZoomTime(f, (from+to)/2)
		}
	}
	return container.NewHBox(
		widget.NewButtonWithIcon("", theme.ZoomOutIcon(), zoom(1/1.5)),
		widget.NewButtonWithIcon("", theme.ZoomInIcon(), zoom(1.5)),
		widget.NewButton("Whole line", ws.strip.ResetTime),
		widget.NewButton("Clear cursors", ws.strip.ClearCursors),
		widget.NewButtonWithIcon("", theme.DocumentSaveIcon(), ws.ChooseTracePicture),
	)
}

// tracePictureScale is the pixels per unit of a saved picture of the
// strip, so it prints sharper than the screen shows it.
const tracePictureScale = 2

// SaveTracePicture writes the strip as shown to a PNG at path; an existing
// file is replaced only when replace is true.
func (ws *Workstation) SaveTracePicture(path string, replace bool) error {
	if !strings.EqualFold(filepath.Ext(path), ".png") {
		return fmt.Errorf("%s: a picture of the traces is saved as .png", filepath.Base(path))
	}
	if !replace && fileExists(path) {
		return fmt.Errorf("%s already exists", path)
	}
	size := ws.strip.Size()
	width, height := max(size.Width, 900), max(size.Height, 300)
	return WritePNG(path, ws.strip.Picture(width, height, tracePictureScale))
}

// ChooseTracePicture asks where to save a picture of the strip.
func (ws *Workstation) ChooseTracePicture() {
	d := dialog.NewFileSave(func(wc fyne.URIWriteCloser, err error) {
		if err != nil || wc == nil {
			return
		}
		path := wc.URI().Path()
		wc.Close()
		// The dialog has asked before replacing, and has made the file.
		if err := ws.SaveTracePicture(path, true); err != nil {
			ws.showProblem("Cannot save the traces", err.Error()+".", "choose a folder you can write to and a name ending in .png.")
			return
		}
		ws.stage.SetText("Saved the traces to " + filepath.Base(path))
	}, ws.win)
	name := "traces"
	if ws.sourcePath != "" {
		name = strings.TrimSuffix(filepath.Base(ws.sourcePath), filepath.Ext(ws.sourcePath)) + "-traces"
		if dir, err := storage.ListerForURI(storage.NewFileURI(filepath.Dir(ws.sourcePath))); err == nil {
			d.SetLocation(dir)
		}
	}
	d.SetFileName(name + ".png")
	d.SetFilter(storage.NewExtensionFileFilter([]string{".png"}))
	d.Resize(fyne.NewSize(820, 560))
	d.Show()
}

// fileExists says whether something lies at path.
func fileExists(path string) bool {
	_, err := os.Stat(path)
	return err == nil
}

// roleLabel names a channel role beside the swatch of its ink in the
// trace strip (0 detector, 1 index, 2 position).
func roleLabel(role int, name string) fyne.CanvasObject {
	return container.NewHBox(traceSwatch(traceColours[role]), widget.NewLabel(name))
}
