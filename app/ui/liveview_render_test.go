package ui

import (
	"math"
	"path/filepath"
	"testing"
	"time"

	"spotloom/capture/live"
)

// recordOverCapture opens the live test capture in a headless window and
// starts recording the bench replay of it, at its real rate, into name in
// a new folder.
func recordOverCapture(t *testing.T, name string) (ws *Workstation, out string) {
	t.Helper()
	src, srcPath, r := liveCapture(t)
	ws = newLiveWorkstation(t, src, 1)
	ws.OpenFile(srcPath, &r)
	ws.Wait()
	out = filepath.Join(t.TempDir(), name)
	uiDo(func() {
		s, _ := ws.openDeviceFunc()("bench replay", live.Format{})
		ws.RecordFrom(s, out, "int16")
	})
	return ws, out
}

// TestLiveUpdatesGoThroughRender: a live view's image reaches the view
// only through the window's state and its render step: at every update
// the view shows the state's frame, a zoom set while the image forms
// stays through the updates, and stays when the recording is stopped and
// opened as an ordinary capture (the state's place, put back by render).
func TestLiveUpdatesGoThroughRender(t *testing.T) {
	ws, out := recordOverCapture(t, "zoomed.wav")
	// Wait for the first live image, then zoom in on it.
	deadline := time.Now().Add(30 * time.Second)
	shown := false
	for !shown && time.Now().Before(deadline) {
		uiDo(func() { shown = ws.Live() && ws.result != nil })
		time.Sleep(20 * time.Millisecond)
	}
	if !shown {
		t.Fatalf("no live image: %s", ws.Problem())
	}
	var zoom float32
	uiDo(func() {
		ws.view.ZoomBy(2)
		zoom = ws.view.Zoom()
	})
	seen := map[*Result]bool{}
	for end := time.Now().Add(1500 * time.Millisecond); time.Now().Before(end); time.Sleep(15 * time.Millisecond) {
		uiDo(func() {
			if !ws.Live() || ws.result == nil {
				return
			}
			seen[ws.result] = true
			if ws.view.Frame() != ws.shownFrame() {
				t.Errorf("the view shows another frame than the state's")
			}
			if z := ws.view.Zoom(); math.Abs(float64(z-zoom)) > 1e-6*float64(zoom) {
				t.Errorf("a live update moved the zoom from %g to %g", zoom, z)
			}
		})
	}
	if len(seen) < 3 {
		t.Errorf("saw %d live images in 1.5 s, want several (15 a second)", len(seen))
	}
	uiDo(ws.StopLive)
	endOfLive(t, ws)
	uiDo(func() {
		if ws.Live() || ws.sourcePath != out {
			t.Errorf("after Stop the window shows %q (live %v), want %s as a capture", ws.sourcePath, ws.Live(), out)
		}
		if ws.view.Frame() == nil || ws.view.Frame() != ws.shownFrame() {
			t.Error("after Stop the view does not show the state's frame")
		}
		if z := ws.view.Zoom(); math.Abs(float64(z-zoom)) > 1e-6*float64(zoom) {
			t.Errorf("opening the recording as a capture moved the zoom from %g to %g", zoom, z)
		}
	})
}
