package recon

import (
	"context"
	"math"
	"strings"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// TestUndoHighPassStep: the step response of a single-pole high-pass is
// y(t) = exp(−ωc·t) (closed form). Undoing it with the leaky integral
// I' = ωc·y − λ·I (λ = ωc/1000) gives x = y + I with the closed form
// I(t) = ωc/(ωc−λ)·(exp(−λt) − exp(−ωc·t)): a unit step that sags by λt.
func TestUndoHighPassStep(t *testing.T) {
	const rate, corner = 48000.0, 20.0
	wc := 2 * math.Pi * corner
	lambda := wc / 1000
	y := make([]float32, 24000) // 0.5 s, 63 time constants
	for i := range y {
		y[i] = float32(math.Exp(-wc * float64(i) / rate))
	}
	x := undoHighPass(y, corner, rate)
	worst, worstStep := 0.0, 0.0
	for i, v := range x {
		tSec := float64(i) / rate
		want := math.Exp(-wc*tSec) + wc/(wc-lambda)*(math.Exp(-lambda*tSec)-math.Exp(-wc*tSec))
		worst = math.Max(worst, math.Abs(float64(v)-want))
		if tSec <= 10/wc {
			worstStep = math.Max(worstStep, math.Abs(float64(v)-1))
		}
	}
	if worst > 1e-3 {
		t.Errorf("undone step differs from the closed form by %.2g", worst)
	}
	// Over the first ten time constants the step is back within 1 %.
	if worstStep > 0.01 {
		t.Errorf("undone step differs from 1 by %.2g within ten time constants", worstStep)
	}
}

// TestParcelACCoupledAboveLineRate: a detector recorded through a
// high-pass well above the line rate (a sound card with a 40 Hz input
// corner against 42 lines/s) loses the shape of every line; with
// signal.ac_corner_hz set the engine undoes it, and the image correlates
// with the truth raster, and the automatic delay matches the truth, as a
// DC-coupled capture does.
func TestParcelACCoupledAboveLineRate(t *testing.T) {
	rig := sampledata.DemoRig()
	rig.Detector.ACCouplingCornerHz = 40
	rig.Detector.OffsetV = 0
	raw, _, _ := parcelCorrelationWith(t, rig, func(r *recipe.Recipe) { r.Signal.ACCornerHz = 0 })
	c, res, truth := parcelCorrelationWith(t, rig, func(r *recipe.Recipe) { r.Signal.ACCornerHz = 40 })
	if c < 0.9 {
		t.Errorf("with the coupling undone: correlation %.3f, want ≥ 0.9 (%.3f without)", c, raw)
	}
	if raw > c-0.1 {
		t.Errorf("undoing the coupling should matter here: %.3f without, %.3f with", raw, c)
	}
	if d := res.Report.DelayDeg - truth.DelayDeg; math.Abs(d) > 0.3 {
		t.Errorf("delay %.3f°, truth %.3f°", res.Report.DelayDeg, truth.DelayDeg)
	}
}

// TestClippingSeenThroughACCorrection: clipping is a property of the
// recording, so it is still found on the recorded samples when the engine
// works on a copy with the AC coupling undone.
func TestClippingSeenThroughACCorrection(t *testing.T) {
	rig := sampledata.DemoRig()
	rig.DurationS = 8
	rig.Detector.ACCouplingCornerHz = 20
	rig.Detector.OffsetV = 0
	rig.Detector.GainVPerMCPS *= 4 // drives the bright parts past the ADC's full scale
	rec, _, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 6})
	if err != nil {
		t.Fatal(err)
	}
	res, err := NewSession(rec).Build(context.Background(), rig.Recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Recipe.Signal.ACCornerHz != 20 {
		t.Fatalf("recipe corner %g Hz, want the rig's 20", res.Recipe.Signal.ACCornerHz)
	}
	found := false
	for _, w := range res.Report.Warnings {
		found = found || strings.Contains(w, "clipped")
	}
	if !found {
		t.Errorf("no clipping warning: %q", res.Report.Warnings)
	}
}
