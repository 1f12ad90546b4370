package recon

import (
	"context"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// BenchmarkBuildFull is a whole build (timing, rows, delay, placement,
// baseline, gridding, and the frame's automatic tone) of a 60 s, 192 kHz,
// three-channel capture already in memory, in a fresh session each time.
// Target: 150 M samples/s or more, counting all three channels.
func BenchmarkBuildFull(b *testing.B) {
	rig := sampledata.DemoRig()
	rec, _, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 1, DurationS: 60, SampleRateHz: 192000})
	if err != nil {
		b.Fatal(err)
	}
	samples := rec.Frames() * len(rec.Channels)
	b.SetBytes(int64(samples) * 4)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		res, err := NewSession(rec).Build(context.Background(), rig.Recipe(), nil)
		if err != nil {
			b.Fatal(err)
		}
		_ = AutoTone(res.Frames[0])
	}
	b.ReportMetric(float64(samples)*float64(b.N)/b.Elapsed().Seconds()/1e6, "Msamples/s")
}

// BenchmarkDelayChange re-places and re-grids the demo capture after a
// delay change, as the workstation does while a control moves; timing and
// rows come from the session's cache. Target: 15 ms or less per change.
func BenchmarkDelayChange(b *testing.B) {
	rec, err := sampledata.Demo()
	if err != nil {
		b.Fatal(err)
	}
	s := NewSession(rec)
	r, err := s.Resolve(context.Background(), sampledata.DemoRecipe())
	if err != nil {
		b.Fatal(err)
	}
	base := *r.Sweep.DelayDeg
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		// A new delay every time, so no placement is reused from the
		// session's memo.
		r.Sweep.DelayDeg = recipe.Float(base + 0.001*float64(i+1))
		if _, err := s.Build(context.Background(), r, nil); err != nil {
			b.Fatal(err)
		}
	}
}
