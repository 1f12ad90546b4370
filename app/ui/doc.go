// Package ui is the Spotloom workstation window, built with Fyne: a source
// panel (capture, channel roles, recipe), the image view (zoom, pan, mm
// read-out, scale bar, no-data hatching, frames of each pass), the trace
// strip (the detector, index and position signals of one line with its
// index edge, field window and baseline interval drawn over them), the
// alignment, geometry, cross-scan and tone controls, the facts of the last
// build, export, undo and redo.
//
// Builds run on one worker goroutine, never on the UI goroutine, and hand
// their results back with fyne.Do. They are coalesced: a newer control
// change cancels the running build through its context, so dragging a
// slider costs one build per pause, not a backlog. Tone changes only
// re-map the pixels already built.
//
// The package imports no Fyne driver: the command starts it with the
// desktop driver, and the tests drive it headless with fyne.io/fyne/v2/test.
// The image view paints through canvas.Raster at screen resolution with
// nearest-neighbour sampling; the trace strip draws each screen column as
// the min–max envelope of the samples it covers, so no pulse is lost at
// any zoom.
package ui
