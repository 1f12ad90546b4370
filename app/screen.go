package main

import (
	"fyne.io/fyne/v2"
	"github.com/go-gl/glfw/v3.3/glfw"
)

// fitScreen shrinks the window's starting size to the primary monitor's
// work area (the screen less panels and docks), so a 1366×768 or
// 1024×700 screen shows the whole window, toolbars and warnings
// included, even where no window manager would clamp it. It must run on
// the main thread after the toolkit has made its window (which starts
// GLFW); when no monitor can be asked, the size is kept.
func fitScreen(w fyne.Window, want fyne.Size) fyne.Size {
	m := glfw.GetPrimaryMonitor()
	if m == nil {
		return want
	}
	_, _, widthPx, heightPx := m.GetWorkarea()
	if widthPx <= 0 || heightPx <= 0 {
		if mode := m.GetVideoMode(); mode != nil {
			widthPx, heightPx = mode.Width, mode.Height
		}
	}
	return fitSize(want, widthPx, heightPx, w.Canvas().Scale())
}

// fitSize is want, in units, made no larger than a work area of the given
// pixels at scale pixels per unit.
func fitSize(want fyne.Size, widthPx, heightPx int, scale float32) fyne.Size {
	if widthPx <= 0 || heightPx <= 0 {
		return want
	}
	if !(scale > 0) {
		scale = 1
	}
	return fyne.NewSize(min(want.Width, float32(widthPx)/scale), min(want.Height, float32(heightPx)/scale))
}
