package sampledata

import (
	"math"
	"testing"
)

// BenchmarkDemo measures the built-in demo capture: 20 s at 96 kHz on
// three channels must take under a second so the workstation opens at once.
func BenchmarkDemo(b *testing.B) {
	rig := DemoRig()
	samples := rig.DurationS * rig.SampleRateHz
	b.SetBytes(int64(samples * 3 * 4))
	for b.Loop() {
		rec, err := Demo()
		if err != nil {
			b.Fatal(err)
		}
		if rec.Frames() != int(samples) {
			b.Fatalf("%d frames", rec.Frames())
		}
	}
	b.ReportMetric(samples*float64(b.N)/b.Elapsed().Seconds(), "frames/s")
}

// TestDemo checks the demo capture's shape: 20 s at 96 kHz, the three
// channels the demo recipe names, the detector inside the ADC's range and
// seldom clipped, and as many lines as 420 rev/min × 6 apertures give
// (42 lines/s).
func TestDemo(t *testing.T) {
	rec, err := Demo()
	if err != nil {
		t.Fatal(err)
	}
	if err := rec.Validate(); err != nil {
		t.Fatal(err)
	}
	if rec.SampleRateHz != 96000 || rec.Frames() != 20*96000 {
		t.Fatalf("%g Hz, %d frames", rec.SampleRateHz, rec.Frames())
	}
	names := []string{"detector", "index", "position"}
	if len(rec.Channels) != len(names) {
		t.Fatalf("%d channels", len(rec.Channels))
	}
	for i, c := range rec.Channels {
		if c.Name != names[i] || c.Unit != "V" {
			t.Errorf("channel %d is %s (%s), want %s (V)", i, c.Name, c.Unit, names[i])
		}
	}
	clipped := 0
	lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
	for _, v := range rec.Channels[0].Samples {
		lo, hi = min(lo, v), max(hi, v)
		if v <= -1 || v >= 1-2.0/65536 {
			clipped++
		}
	}
	if clipped > rec.Frames()/10000 || hi-lo < 0.5 {
		t.Errorf("detector from %g to %g V, %d samples clipped", lo, hi, clipped)
	}
	r := DemoRig()
	_, truth, err := Simulate(t.Context(), r, "parcel", SimOptions{Seed: DemoSeed})
	if err != nil {
		t.Fatal(err)
	}
	if want := r.LineRateHz() * r.DurationS; math.Abs(float64(len(truth.Lines))-want) > 6 {
		t.Errorf("%d lines, want about %g", len(truth.Lines), want)
	}
	if truth.YRangeMM != [2]float64{0, 400} {
		t.Errorf("y range %v", truth.YRangeMM)
	}
}
