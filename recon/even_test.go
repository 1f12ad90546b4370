package recon

import (
	"context"
	"math"
	"strings"
	"testing"

	"spotloom/sampledata"
)

// TestEvenWithoutSpeedAssumesOnePitchPerLine: a capture with neither a
// position channel nor a known head speed still forms an image, one row per
// line, and says that its cross-scan scale is assumed. Closed form: speed =
// pitch × line rate, and the line rate of a wheel is apertures × rev/min /
// 60 (the rig's 6 apertures at 420 rev/min give 42 lines/s).
func TestEvenWithoutSpeedAssumesOnePitchPerLine(t *testing.T) {
	rig := sampledata.DemoRig()
	rig.DurationS = 4
	rig.Motion.Kind = sampledata.MotionMotor
	rig.Motion.StartRestS = 0
	rig.Motion.StrokeS = 4
	rig.Motion.TravelMM = 100
	rig.Motion.PauseCount = 0
	rig.Position.Kind = sampledata.SensorNone
	if err := rig.Validate(); err != nil {
		t.Fatal(err)
	}
	rec, _, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	r := rig.Recipe()
	r.Rows.SpeedMMS = nil
	r.Image.PitchMM = 0.5
	res, err := NewSession(rec).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	wantLineRate := float64(rig.Wheel.ApertureCount) * rig.Wheel.RevPerMin / 60
	got := res.Recipe.Rows.SpeedMMS
	if got == nil {
		t.Fatal("speed_mm_s was not resolved")
	}
	// The wheel wobbles a little around its nominal speed: 1 %.
	if want := 0.5 * wantLineRate; math.Abs(*got-want) > 0.01*want {
		t.Errorf("assumed speed %.3f mm/s, want pitch × line rate = 0.5 × %.1f = %.2f", *got, wantLineRate, want)
	}
	warned := false
	for _, w := range res.Report.Warnings {
		warned = warned || strings.Contains(w, "speed_mm_s is null")
	}
	if !warned {
		t.Errorf("no warning that the speed was assumed: %q", res.Report.Warnings)
	}
	// One row per line: the frame is about as many rows tall as there are
	// lines (give or take the edge rows of the grid).
	if h := res.Frames[0].Height; math.Abs(float64(h-res.Report.Lines)) > 3 {
		t.Errorf("frame has %d rows for %d lines", h, res.Report.Lines)
	}
}
