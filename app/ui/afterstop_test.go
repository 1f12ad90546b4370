package ui

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"golang.org/x/image/tiff"

	"spotloom/recon/measure"
)

// After Stop the recording is an ordinary capture in the window: a
// region drawn on its image is measured (the same numbers measure.Run
// gives on the frame shown), a new delay builds it again and the region is
// measured again on the new frame, and Export… writes a TIFF that the
// independent x/image/tiff reader decodes at the frame's size, with the
// measurement in the sidecar beside it (read back by measure.LoadList).
func TestAfterStopTheRecordingIsAnOrdinaryCapture(t *testing.T) {
	ws, out := recordOverCapture(t, "take.wav")
	time.Sleep(1500 * time.Millisecond)
	uiDo(ws.StopLive)
	endOfLive(t, ws)
	var problem string
	var running bool
	uiDo(func() { problem, running = ws.Problem(), ws.Live() })
	if problem != "" || running || ws.sourcePath != out || ws.view.Frame() == nil {
		t.Fatalf("after Stop: problem %q, live %v, source %q, frame %v", problem, running, ws.sourcePath, ws.view.Frame() != nil)
	}

	checkTaken := func(when string) {
		t.Helper()
		var shapes []measure.Shape
		var taken []measure.Taken
		uiDo(func() { shapes, taken = measure.CloneList(ws.cur.Measurements), append(taken, ws.measures.taken...) })
		if len(shapes) != 1 || len(taken) != 1 {
			t.Fatalf("%s: %d shapes, %d measured; want the one region", when, len(shapes), len(taken))
		}
		q, err := shapes[0].Request(shapes)
		if err != nil {
			t.Fatal(err)
		}
		want := expected(t, ws.view.Frame(), q)
		if taken[0].Err != nil || !sameNumbers(taken[0].Results, want) {
			t.Errorf("%s: the region gives %+v (%v), measure.Run on the frame shown %+v", when, taken[0].Results, taken[0].Err, want)
		}
		if want.ROI == nil || want.ROI.Pixels == 0 || math.IsNaN(want.ROI.Mean) {
			t.Errorf("%s: the region holds no covered pixels: %+v", when, want.ROI)
		}
	}
	uiDo(func() { drawOn(ws, measure.KindRegion, frameCentre(ws, -30, -20), frameCentre(ws, 30, 20)) })
	checkTaken("on the stopped recording")

	before := ws.view.Frame()
	var d0 float64
	uiDo(func() {
		d0 = ws.result.Report.DelayDeg
		ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.3f", d0+0.5))
	})
	ws.Wait()
	uiDo(func() { problem = ws.Problem() })
	if problem != "" || ws.view.Frame() == before {
		t.Fatalf("a new delay: problem %q, new frame %v", problem, ws.view.Frame() != before)
	}
	if got := ws.result.Report.DelayDeg; math.Abs(got-(d0+0.5)) > 1e-3 {
		t.Errorf("built with delay %g°, want the %g° typed", got, d0+0.5)
	}
	checkTaken("after a new delay")

	dir := t.TempDir()
	uiDo(func() {
		form := ws.newExportForm()
		form.folder.SetText(dir)
		form.name.SetText("take.tiff")
		form.export()
	})
	ws.Wait()
	uiDo(func() { problem = ws.Problem() })
	if problem != "" {
		t.Fatalf("export: %s", problem)
	}
	data, err := os.ReadFile(filepath.Join(dir, "take.tiff"))
	if err != nil {
		t.Fatal(err)
	}
	img, err := tiff.Decode(bytes.NewReader(data))
	if err != nil {
		t.Fatalf("x/image/tiff cannot read the export: %v", err)
	}
	f := ws.view.Frame()
	if b := img.Bounds(); b.Dx() != f.Width || b.Dy() != f.Height {
		t.Errorf("export is %v, the frame %d×%d", b, f.Width, f.Height)
	}
	side, err := measure.LoadList(filepath.Join(dir, "take.recipe.json"))
	if err != nil || len(side) != 1 || side[0].Kind != measure.KindRegion {
		t.Errorf("the sidecar's measurements: %+v (%v), want the region", side, err)
	}
}
