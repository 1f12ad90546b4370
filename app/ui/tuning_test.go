package ui

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
)

// viewState reads the view's zoom (units per mm) and centre (mm).
func viewState(v *ImageView) (zoom float32, cx, cy float64) {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	return v.zoom, v.centreX, v.centreY
}

// TestZoomKeptAcrossRebuild: a zoomed and panned view stays where the
// user put it when the delay changes, and a new pitch (a frame of another
// size) keeps the same millimetre point under the pointer. The check is on
// the view's own mm grid: the mm under a screen position must not move.
func TestZoomKeptAcrossRebuild(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	ws.view.ZoomBy(2)
	ws.view.Dragged(&fyne.DragEvent{Dragged: fyne.Delta{DX: 30, DY: -20}})
	z0, x0, y0 := viewState(ws.view)

	ws.controls.delay.typed(fmt.Sprintf("%.3f", ws.result.Report.DelayDeg+0.5))
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatal(p)
	}
	if z, x, y := viewState(ws.view); z != z0 || x != x0 || y != y0 {
		t.Errorf("after a delay change the view is zoom %g centre (%g, %g), was %g (%g, %g)", z, x, y, z0, x0, y0)
	}

	at := fyne.NewPos(ws.view.Size().Width/3, ws.view.Size().Height/3)
	ws.view.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: at}})
	before, _ := ws.view.Hover()
	w0 := ws.result.Frames[0].Width
	ws.controls.pitch.typed(fmt.Sprintf("%.3f", ws.result.Report.PitchMM*2))
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatal(p)
	}
	if ws.result.Frames[0].Width == w0 {
		t.Fatal("doubling the pitch kept the frame size")
	}
	after, _ := ws.view.Hover()
	if math.Abs(after.XMM-before.XMM) > 1e-9 || math.Abs(after.YMM-before.YMM) > 1e-9 {
		t.Errorf("under the pointer: (%g, %g) mm before the new pitch, (%g, %g) after", before.XMM, before.YMM, after.XMM, after.YMM)
	}
	// The value under the still pointer is read from the new frame.
	want := fmt.Sprintf("px %d,%d", after.Col, after.Row)
	if !strings.Contains(ws.readout.Text, want) {
		t.Errorf("read-out %q after the rebuild, want it to name %s", ws.readout.Text, want)
	}
}

func TestMessagesUseControlNames(t *testing.T) {
	got := windowWords("timing.threshold 5 is outside the index channel 1, which stays between -0.05 and 0.84: no pulses; set threshold to null to find it automatically")
	for _, bad := range []string{"timing.", "null"} {
		if strings.Contains(got, bad) {
			t.Errorf("%q still says %q", got, bad)
		}
	}
	if !strings.HasPrefix(got, "Index threshold 5") || !strings.Contains(got, "Find automatically") {
		t.Errorf("got %q", got)
	}
	if got := windowWords(`recipe key "sweep.field_deg" is 0: expected an angle above 0° and below 360°`); got != "Field of view is 0: expected an angle above 0° and below 360°" {
		t.Errorf("got %q", got)
	}
}

// TestDismissedErrorLeavesStatusLine: the status line names a problem
// while its message is up and not after it is closed.
func TestDismissedErrorLeavesStatusLine(t *testing.T) {
	ws, w := newTestWorkstation(t)
	before := ws.stage.Text
	ws.controls.field.typed("100")
	ws.Wait()
	if ws.Problem() == "" || len(ws.dialogs) != 1 {
		t.Fatalf("a field of 100° (wider than the aperture spacing) was not refused with a message (%q)", ws.Problem())
	}
	if strings.Contains(ws.problem, "sweep.") {
		t.Errorf("the message speaks in recipe keys: %q", ws.problem)
	}
	if ws.stage.Text == before {
		t.Error("the status line does not name the problem")
	}
	ws.escape()
	if w.Canvas().Overlays().Top() != nil {
		t.Fatal("Esc did not close the message")
	}
	if ws.stage.Text != before {
		t.Errorf("after the message was closed the status line says %q, want %q", ws.stage.Text, before)
	}
}
