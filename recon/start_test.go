package recon

import (
	"context"
	"math"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// TestStartFromNothing: the default recipe (4 apertures, a 0.5–4.5 V
// calibration) on a capture of the demo rig (6 apertures, a ±0.8 V
// position) is set right by one trial build: the wheel's count, and a
// calibration spanning the levels seen. The rev/min then matches the
// rig's own 420 (within the 0.2 % of the engine's accuracy target), and a
// recipe that already fits is left alone.
func TestStartFromNothing(t *testing.T) {
	rig := sampledata.DemoRig()
	rig.DurationS = 8
	rec, truth, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 12})
	if err != nil {
		t.Fatal(err)
	}
	s := NewSession(rec)
	r := recipe.Default()
	first, err := s.Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	started, notes := Start(r, first.Report)
	if started.Sweep.Apertures != rig.Wheel.ApertureCount || len(notes) != 2 {
		t.Fatalf("apertures %d, notes %q; want %d and two notes", started.Sweep.Apertures, notes, rig.Wheel.ApertureCount)
	}
	again, err := s.Build(context.Background(), started, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := again.Report.RPMMean, truth.RevPerMinMean; math.Abs(got-want) > 0.002*want {
		t.Errorf("rev/min %.2f, truth %.2f", got, want)
	}
	if _, notes := Start(again.Recipe, again.Report); len(notes) != 0 {
		t.Errorf("a fitting recipe was changed again: %q", notes)
	}
}
