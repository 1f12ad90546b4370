package ui

import (
	"fmt"
	"image"
	"image/png"
	"os"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"spotloom/recon/recipe"
)

// SnapshotSize is the size, in Fyne units, of the window the snapshot
// renders unless told another.
var SnapshotSize = fyne.NewSize(1440, 900)

// ParseSize reads a window size written WxH (e.g. 1366x768).
func ParseSize(text string) (fyne.Size, error) {
	ws, hs, ok := strings.Cut(strings.ToLower(strings.TrimSpace(text)), "x")
	w, errW := strconv.Atoi(strings.TrimSpace(ws))
	h, errH := strconv.Atoi(strings.TrimSpace(hs))
	if !ok || errW != nil || errH != nil || w < 640 || h < 480 || w > 8192 || h > 8192 {
		return fyne.Size{}, fmt.Errorf("size %q: give the window's width and height in units as WxH, from 640x480 to 8192x8192, e.g. 1366x768", text)
	}
	return fyne.NewSize(float32(w), float32(h)), nil
}

// Snapshot renders the workstation headless with the software painter,
// on the capture at path (the demo when path is "") with recipe r (nil for
// the automatic choice), and returns the image. It also reports a problem
// the window would have shown in a dialog.
func Snapshot(path string, r *recipe.Recipe, opts Options) (image.Image, error) {
	return SnapshotAt(SnapshotSize, path, r, opts)
}

// SnapshotAt is Snapshot with a window of the given size.
func SnapshotAt(size fyne.Size, path string, r *recipe.Recipe, opts Options) (image.Image, error) {
	ws, err := snapshotWindow(size, path, r, opts)
	if err != nil {
		return nil, err
	}
	return ws.win.Canvas().Capture(), nil
}

// snapshotWindow renders the workstation headless at size and returns it
// once the first image is built (for the snapshot and the layout tests).
func snapshotWindow(size fyne.Size, path string, r *recipe.Recipe, opts Options) (*Workstation, error) {
	// The test driver runs fyne.Do at once unless it is called from the
	// program's main goroutine, where it would defer the call; render on
	// a goroutine of our own so every update lands before the capture.
	type outcome struct {
		ws  *Workstation
		err error
	}
	done := make(chan outcome, 1)
	go func() {
		ws, err := snapshot(size, path, r, opts)
		done <- outcome{ws, err}
	}()
	o := <-done
	return o.ws, o.err
}

func snapshot(size fyne.Size, path string, r *recipe.Recipe, opts Options) (*Workstation, error) {
	a := test.NewApp()
	a.Settings().SetTheme(snapshotTheme())
	w := a.NewWindow("Spotloom")
	ws := New(a, w, opts)
	w.SetPadded(false) // the status bar then reaches the bottom edge
	w.Resize(size)
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
	w.Resize(size)
	return ws, nil
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
