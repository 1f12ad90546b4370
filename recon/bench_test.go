package recon

import (
	"context"
	"runtime"
	"runtime/metrics"
	"sync"
	"testing"
	"time"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// BenchmarkBuildFull is a whole build (timing, rows, delay, placement,
// baseline, gridding, and the frame's automatic tone) of a 60 s, 192 kHz,
// three-channel capture already in memory, in a fresh session each time.
// Targets (issue 10): 130 ms or less a build (266 M samples/s, counting
// all three channels), and the heap at its fullest during a build no more
// than 1.3 times the capture's float32 samples, the samples included
// (peak-heap/samples; see heapPeak).
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
	b.StopTimer()
	peak := heapPeak(func() {
		res, err := NewSession(rec).Build(context.Background(), rig.Recipe(), nil)
		if err != nil {
			b.Fatal(err)
		}
		_ = AutoTone(res.Frames[0])
	})
	b.ReportMetric(float64(peak)/float64(samples*4), "peak-heap/samples")
}

// heapPeak runs f once, after a collection, and returns the most heap
// its objects held meanwhile (runtime/metrics'
// /memory/classes/heap/objects:bytes, read every 100 µs): live objects
// and those dead but not yet swept, so an upper bound of what f needs
// beside what was live before it (which it includes).
func heapPeak(f func()) uint64 {
	runtime.GC()
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	read := func() uint64 {
		metrics.Read(sample)
		return sample[0].Value.Uint64()
	}
	peak := read()
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		tick := time.NewTicker(100 * time.Microsecond)
		defer tick.Stop()
		for {
			select {
			case <-stop:
				return
			case <-tick.C:
				peak = max(peak, read())
			}
		}
	}()
	f()
	close(stop)
	wg.Wait()
	return max(peak, read())
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
