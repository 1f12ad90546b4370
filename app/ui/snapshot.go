package ui

import (
	"fmt"
	"image"
	"image/png"
	"os"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"spotloom/recon/recipe"
)

// SnapshotSize is the size, in Fyne units, of the window the snapshot
// renders.
var SnapshotSize = fyne.NewSize(1440, 900)

// Snapshot renders the workstation headless with the software painter,
// on the capture at path (the demo when path is "") with recipe r (nil for
// the automatic choice), and returns the image. It also reports a problem
// the window would have shown in a dialog.
func Snapshot(path string, r *recipe.Recipe, opts Options) (image.Image, error) {
	// The test driver runs fyne.Do at once unless it is called from the
	// program's main goroutine, where it would defer the call; render on
	// a goroutine of our own so every update lands before the capture.
	type outcome struct {
		img image.Image
		err error
	}
	done := make(chan outcome, 1)
	go func() {
		img, err := snapshot(path, r, opts)
		done <- outcome{img, err}
	}()
	o := <-done
	return o.img, o.err
}

func snapshot(path string, r *recipe.Recipe, opts Options) (image.Image, error) {
	a := test.NewApp()
	defer test.NewApp() // leave a fresh app behind, not ours
	a.Settings().SetTheme(snapshotTheme())
	w := a.NewWindow("Spotloom")
	ws := New(a, w, opts)
	w.SetPadded(false) // the status bar then reaches the bottom edge
	w.Resize(SnapshotSize)
	if path == "" {
		ws.OpenDemoWithRecipe(r)
		ws.Wait()
	} else {
		ws.OpenFileWith(path, opts.Capture, r)
		ws.Wait()
	}
	if ws.result == nil {
		return nil, fmt.Errorf("no image was formed: %s", ws.Problem())
	}
	if ws.Problem() != "" {
		return nil, fmt.Errorf("%s", ws.Problem())
	}
	w.Resize(SnapshotSize)
	return w.Canvas().Capture(), nil
}

// WritePNG writes img to path.
func WritePNG(path string, img image.Image) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := png.Encode(f, img); err != nil {
		f.Close()
		os.Remove(path)
		return fmt.Errorf("write %s: %w", path, err)
	}
	return f.Close()
}
