package recon

import (
	"context"
	"math"
	"testing"

	"spotloom/sampledata"
)

// TestResonantMirrorAgainstTruth scans the dot grid with the simulated
// resonant mirror (sampledata.MirrorRig: θ = (field/2)·sin φ, a line each
// way per period) and builds it with the sine law: the delay found is the
// truth's lead (the phase from the index edge to the swing's centre), the
// line count is two per period, and the dots of forward and backward lines
// together land on the truth's centres (the truth's grid is the scene's
// closed form; the fit is cross-checked with gonum in truthDotFit).
func TestResonantMirrorAgainstTruth(t *testing.T) {
	ctx := context.Background()
	rig := sampledata.MirrorRig()
	rig.Position.NonlinearityPct = 0
	rec, truth, err := sampledata.Simulate(ctx, rig, "dot-grid", sampledata.SimOptions{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	r := rig.Recipe()
	res, err := NewSession(rec).Build(ctx, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	rep := res.Report
	if math.Abs(rep.DelayDeg-truth.DelayDeg) > 0.5 {
		t.Errorf("delay %.3f°, truth %.3f°", rep.DelayDeg, truth.DelayDeg)
	}
	if d := rep.Lines - len(truth.Lines); d < -2 || d > 2 {
		t.Errorf("%d lines, truth %d", rep.Lines, len(truth.Lines))
	}
	// Closed form: two lines per period at the mirror's frequency.
	if want := 2 * rig.Wheel.RevPerMin / 60; math.Abs(rep.LineRateHz-want) > 0.002*want {
		t.Errorf("line rate %.3f/s, 2 × frequency = %.3f/s", rep.LineRateHz, want)
	}
	rms, sx, sy, n := truthDotFit(t, res.Frames[0], truth.Dots, truth.DotDiameterMM)
	t.Logf("%d dots: rms %.3f mm, scale x %.5f y %.5f; delay %.3f (truth %.3f); lines %d (truth %d); warnings %q",
		n, rms, sx, sy, rep.DelayDeg, truth.DelayDeg, rep.Lines, len(truth.Lines), rep.Warnings)
	if rms > 0.5 {
		t.Errorf("dot centres %.3f mm RMS from the truth, want ≤ 0.5 mm", rms)
	}
	if math.Abs(sx-1) > 0.005 || math.Abs(sy-1) > 0.005 {
		t.Errorf("scale x %.5f y %.5f, want 1 within 0.5 %%", sx, sy)
	}
}
