package recon

import (
	"context"
	"math"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// With sweep.delay_deg and sweep.aperture_offsets_deg both null, a build
// places every aperture's field where the simulator's truth has it
// (delay_deg + aperture_offsets_deg[k], a geometric quantity from the
// rig's numbers) within 0.05°, and rebuilds the dot grid as well as with
// the true values given. The rigs: the demo rig, and the hand rig with
// aperture errors of up to 0.3°.
func TestAutomaticAlignmentAgainstTruth(t *testing.T) {
	ctx := context.Background()
	demo := sampledata.DemoRig()
	demo.DurationS = 10
	onePulse := handRig()
	onePulse.Index.PulsesPerRev = 1
	for _, c := range []struct {
		name string
		rig  sampledata.Rig
	}{{"demo", demo}, {"hand", handRig()}, {"one pulse per revolution", onePulse}} {
		rec, truth, err := sampledata.Simulate(ctx, c.rig, "dot-grid", sampledata.SimOptions{Seed: 7})
		if err != nil {
			t.Fatal(err)
		}
		s := NewSession(rec)
		r := c.rig.Recipe()
		r.Sweep.DelayDeg = nil
		r.Sweep.ApertureOffsetsDeg = nil
		auto, err := s.Build(ctx, r, nil)
		if err != nil {
			t.Fatal(err)
		}
		sw := auto.Recipe.Sweep
		if len(sw.ApertureOffsetsDeg) != sw.Apertures {
			t.Fatalf("%s: resolved offsets %v for %d apertures", c.name, sw.ApertureOffsetsDeg, sw.Apertures)
		}
		worst := 0.0
		for k, o := range sw.ApertureOffsetsDeg {
			got := *sw.DelayDeg + o
			want := truth.DelayDeg + truth.ApertureOffsetsDeg[k]
			worst = math.Max(worst, math.Abs(got-want))
			if math.Abs(got-want) > 0.05 {
				t.Errorf("%s: aperture %d field starts %.3f° after its edge, truth %.3f°", c.name, k, got, want)
			}
		}
		given := c.rig.Recipe()
		given.Sweep.DelayDeg = recipe.Float(truth.DelayDeg)
		given.Sweep.ApertureOffsetsDeg = truth.ApertureOffsetsDeg
		known, err := s.Build(ctx, given, nil)
		if err != nil {
			t.Fatal(err)
		}
		rmsAuto, _, _, _ := truthDotFit(t, auto.Frames[0], truth.Dots, truth.DotDiameterMM)
		rmsKnown, _, _, _ := truthDotFit(t, known.Frames[0], truth.Dots, truth.DotDiameterMM)
		t.Logf("%s: worst field start error %.4f°; dot centres %.3f mm RMS automatic, %.3f mm with the truth given; warnings %q",
			c.name, worst, rmsAuto, rmsKnown, auto.Report.Warnings)
		// "As well as": within a tenth of the RMS, or 0.02 mm (a
		// fiftieth of the 1 mm pitch), whichever is larger.
		if rmsAuto > rmsKnown+math.Max(0.1*rmsKnown, 0.02) {
			t.Errorf("%s: dot centres %.3f mm RMS with automatic alignment, %.3f mm with the true values", c.name, rmsAuto, rmsKnown)
		}
	}
}
