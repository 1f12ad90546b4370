package ui

import (
	"bytes"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2/test"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
)

func expectedText(t *testing.T, f *recon.Frame, req measure.Request) string {
	t.Helper()
	res, err := measure.Run(f, req)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	measure.WriteText(&b, res)
	return strings.TrimSpace(b.String())
}

func TestMeasurePanelFollowsTheFrame(t *testing.T) {
	// The panel's numbers are measure.Run's on the frame shown, equal to
	// those of the frame exported as a float TIFF and read back (what
	// "spotloom measure" reads), and they are taken again when the delay
	// changes.
	ws, _ := newTestWorkstation(t)
	f := ws.view.Frame()
	cx := f.OriginXMM + float64(f.Width/2)*f.PitchXMM
	cy := f.OriginYMM - float64(f.Height/2)*f.PitchYMM
	rect := fmt.Sprintf("%g,%g,%g,%g", cx-30, cy-30, cx+30, cy+30)
	p := ws.measures
	p.kind.SetSelected(measureRegion)
	test.Type(p.where, rect)
	p.measure()
	req := measure.Request{ROI: &measure.Rect{X0: cx - 30, Y0: cy - 30, X1: cx + 30, Y1: cy + 30}}
	if want := expectedText(t, f, req); p.result.Text != want || !strings.Contains(want, "roi: mean") {
		t.Fatalf("panel %q, measure.Run %q", p.result.Text, want)
	}
	path := filepath.Join(t.TempDir(), "shown.tiff")
	if err := export.Write(path, []*recon.Frame{f}, export.Options{Raw: true}); err != nil {
		t.Fatal(err)
	}
	l, err := export.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if want := expectedText(t, l.Frames[0], req); p.result.Text != want {
		t.Errorf("panel %q, the exported frame %q", p.result.Text, want)
	}

	before := p.result.Text
	ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.4f", ws.result.Report.DelayDeg+2))
	ws.Wait()
	after := ws.view.Frame()
	if after == f {
		t.Fatal("the delay change made no new frame")
	}
	if want := expectedText(t, after, req); p.result.Text != want || p.result.Text == before {
		t.Errorf("after the delay change the panel says %q, the new frame gives %q (before %q)", p.result.Text, want, before)
	}

	// A profile brings its plot; a bad rectangle a message, not a crash.
	p.kind.SetSelected(measureProfile)
	p.where.SetText(fmt.Sprintf("%g,%g,%g,%g", cx-40, cy, cx+40, cy))
	p.measure()
	if !p.plot.Visible() || p.plot.Image == nil {
		t.Error("no plot for a profile")
	}
	p.kind.SetSelected(measureRegion)
	p.where.SetText("1,2,3")
	p.measure()
	if !strings.Contains(p.result.Text, "X0,Y0,X1,Y1") {
		t.Errorf("bad rectangle: %q", p.result.Text)
	}
}
