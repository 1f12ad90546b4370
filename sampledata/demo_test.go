package sampledata

import (
	"context"
	"testing"
)

func BenchmarkDemo(b *testing.B) {
	rig := DemoRig()
	b.SetBytes(int64(rig.DurationS * rig.SampleRateHz * 3 * 4))
	for b.Loop() {
		rec, err := Demo()
		if err != nil {
			b.Fatal(err)
		}
		if rec.Frames() != int(rig.DurationS*rig.SampleRateHz) {
			b.Fatalf("%d frames", rec.Frames())
		}
	}
}

func TestDemoSmoke(t *testing.T) {
	rec, truth, err := Simulate(context.Background(), DemoRig(), "parcel", SimOptions{Seed: DemoSeed, TruthPitchMM: 1})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("frames %d lines %d delay %g offsets %v first %d rpm %g", rec.Frames(), len(truth.Lines), truth.DelayDeg, truth.ApertureOffsetsDeg, truth.FirstWheelAperture, truth.RevPerMinMean)
	for _, l := range truth.Lines[:3] {
		t.Logf("%+v", l)
	}
	for ci, c := range rec.Channels {
		lo, hi := c.Samples[0], c.Samples[0]
		for _, v := range c.Samples {
			lo, hi = min(lo, v), max(hi, v)
		}
		t.Logf("ch %d %s %g..%g", ci, c.Name, lo, hi)
	}
}
