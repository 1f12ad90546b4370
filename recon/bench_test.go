package recon

import (
	"context"
	"testing"
	"time"

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
	cpu := startCPU(b)
	for i := 0; i < b.N; i++ {
		res, err := NewSession(rec).Build(context.Background(), rig.Recipe(), nil)
		if err != nil {
			b.Fatal(err)
		}
		_ = AutoTone(res.Frames[0])
	}
	cpu.report()
	b.ReportMetric(float64(samples)*float64(b.N)/b.Elapsed().Seconds()/1e6, "Msamples/s")
}

// cpuMeter reports a benchmark's CPU time per operation (user and system
// time of the whole process, so the garbage collector's share counts) and
// its CPU use, CPU time over wall time: 2 means both cores busy
// throughout. On a loaded machine the CPU time moves less than the wall
// time.
type cpuMeter struct {
	b     *testing.B
	cpu0  float64
	wall0 time.Time
	ok    bool
}

// startCPU resets the benchmark's timer and starts the meter.
func startCPU(b *testing.B) cpuMeter {
	b.ResetTimer()
	c, ok := processCPU()
	return cpuMeter{b: b, cpu0: c, wall0: time.Now(), ok: ok}
}

func (m cpuMeter) report() {
	c, ok := processCPU()
	if !ok || !m.ok || m.b.N == 0 {
		return
	}
	cpu, wall := c-m.cpu0, time.Since(m.wall0).Seconds()
	m.b.ReportMetric(1000*cpu/float64(m.b.N), "cpu-ms/op")
	if wall > 0 {
		m.b.ReportMetric(cpu/wall, "cores")
	}
}

// BenchmarkDelayChange re-places and re-grids the demo capture after a
// delay change, as the workstation does while a control moves; timing and
// rows come from the session's cache. Target: 10 ms or less per change
// (issue 10).
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
	// One build at the automatic delay first, as the window makes before
	// any control moves.
	if _, err := s.Build(context.Background(), r, nil); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	cpu := startCPU(b)
	for i := 0; i < b.N; i++ {
		// A new delay every time, so no placement is reused from the
		// session's memo; the steps of a slider drag, within ±0.1°.
		r.Sweep.DelayDeg = recipe.Float(base + 0.0005 + 0.001*float64(i%200-100))
		if _, err := s.Build(context.Background(), r, nil); err != nil {
			b.Fatal(err)
		}
	}
	cpu.report()
}
