package recon

import (
	"context"
	"math"
	"testing"

	"spotloom/sampledata"
)

// TestStereoRigAgainstTruth scans the dot grid with the sound-card rig on
// three inputs (sampledata.SoundCardRig) and on two (StereoSoundCardRig:
// the position tone added to the index pulses on one input), builds both
// with the rig's recipe and compares them with the simulator's truth: the
// index edges found are the truth's edges (one per line, each within a
// few microseconds), and the dot centres land on the truth's (the scene's
// closed form; the fit cross-checked with gonum in truthDotFit) as closely
// on two inputs as on three.
func TestStereoRigAgainstTruth(t *testing.T) {
	ctx := context.Background()
	type outcome struct {
		rms, sx, sy, edgeRMSus float64
		lines                  int
	}
	build := func(name string, rig sampledata.Rig) outcome {
		rig.Position.NonlinearityPct = 0 // the two-point calibration cannot know a bow
		rec, truth, err := sampledata.Simulate(ctx, rig, "dot-grid", sampledata.SimOptions{Seed: 7})
		if err != nil {
			t.Fatal(err)
		}
		res, err := NewSession(rec).Build(ctx, rig.Recipe(), nil)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		var o outcome
		o.lines = res.Report.Lines
		if d := len(res.Lines) - len(truth.IndexEdgesS); d != 0 {
			t.Errorf("%s: %d lines, the truth has %d index edges", name, len(res.Lines), len(truth.IndexEdgesS))
		}
		var ss float64
		n := min(len(res.Lines), len(truth.IndexEdgesS))
		for i := 0; i < n; i++ {
			d := res.Lines[i].EdgeS - truth.IndexEdgesS[i]
			ss += d * d
		}
		o.edgeRMSus = 1e6 * math.Sqrt(ss/float64(max(n, 1)))
		o.rms, o.sx, o.sy, _ = truthDotFit(t, res.Frames[0], truth.Dots, truth.DotDiameterMM)
		t.Logf("%s: %d channels, %d lines, edges %.2f µs RMS from the truth, dots %.3f mm RMS, scale %.5f × %.5f; warnings %q",
			name, len(rec.Channels), o.lines, o.edgeRMSus, o.rms, o.sx, o.sy, res.Report.Warnings)
		return o
	}
	three := build("three inputs", sampledata.SoundCardRig())
	two := build("two inputs", sampledata.StereoSoundCardRig())
	if two.edgeRMSus > 3*three.edgeRMSus+1 {
		t.Errorf("index edges %.2f µs RMS from the truth on two inputs, %.2f µs on three", two.edgeRMSus, three.edgeRMSus)
	}
	if two.rms > three.rms*1.1+0.02 || two.rms > 0.5 {
		t.Errorf("dot centres %.3f mm RMS on two inputs, %.3f mm on three", two.rms, three.rms)
	}
	if math.Abs(two.sx-1) > 0.005 || math.Abs(two.sy-1) > 0.005 {
		t.Errorf("two inputs: scale x %.5f y %.5f, want 1 within 0.5 %%", two.sx, two.sy)
	}
}
