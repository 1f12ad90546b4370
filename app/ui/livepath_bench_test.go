//go:build linux

package ui

import (
	"context"
	"path/filepath"
	"runtime"
	"syscall"
	"testing"
	"time"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/sampledata"
)

// cpuTime is the process's user and system time so far (getrusage(2)).
func cpuTime(b *testing.B) time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		b.Fatal(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkLivePath runs the whole live path at the budget rate,
// 192 kHz × 4 channels, in a headless window: a replay at its real rate
// through live.Record (ring buffer, int24 WAV writer, the tap) into the
// incremental engine, and the window's updates at liveRate. Once the first
// image is up, it takes the process's CPU time over the steady state
// (getrusage, so every goroutine counts, the replay source's too) as
// "core-%" of one core, and how long frames waited from their arrival in
// the feed to their image in the window ("ms-wait-max", "ms-wait-mean";
// the ring adds up to its 20 ms tick before that), and the heap the
// steady state keeps per second of capture ("kept-B/s", after a GC at
// each end, and "kept/raw", its ratio to the samples as float32, 4 B per
// sample and channel; the GCs are outside the CPU time). The headless driver
// does not paint, which a display adds. One iteration is one 8 s capture.
func BenchmarkLivePath(b *testing.B) {
	rig := liveRig()
	rig.SampleRateHz, rig.DurationS, rig.Motion.StrokeS = 192000, 8, 7.5
	rec, _, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 3})
	if err != nil {
		b.Fatal(err)
	}
	fourth := append([]float32(nil), rec.Channels[0].Samples...)
	rec.Channels = append(rec.Channels, capture.Channel{Name: "ch3", Unit: capture.UnitFullScale, Samples: fourth})
	r := rig.Recipe()
	var core, waitMax, waitMean, kept float64
	for b.Loop() {
		ws := newLiveWorkstation(b, rec, 1)
		src, err := ws.openDeviceFunc()("bench replay", live.Format{})
		if err != nil {
			b.Fatal(err)
		}
		var run *liveRun
		uiDo(func() {
			run = ws.newLiveRun(src, filepath.Join(b.TempDir(), "bench.wav"), "int24", r)
			ws.beginLive(run, "Recording bench.wav")
		})
		look := func() (shown bool, frames int64) {
			uiDo(func() { shown = ws.result != nil })
			run.feed.mu.Lock()
			frames = run.feed.frames
			run.feed.mu.Unlock()
			return shown, frames
		}
		for shown, _ := look(); !shown; shown, _ = look() {
			time.Sleep(20 * time.Millisecond)
		}
		uiDo(func() { run.latMax, run.latSum, run.latN = 0, 0, 0 })
		heap0 := heapInUse()
		_, frames0 := look()
		t0, cpu0 := time.Now(), cpuTime(b)
		for _, frames := look(); frames < int64(rec.Frames())-rate(rec)/2; _, frames = look() {
			time.Sleep(20 * time.Millisecond)
		}
		wall, cpu := time.Since(t0), cpuTime(b)-cpu0
		heap1 := heapInUse()
		_, frames1 := look()
		kept = float64(heap1-heap0) / (float64(frames1-frames0) / rec.SampleRateHz)
		uiDo(func() {
			core = 100 * cpu.Seconds() / wall.Seconds()
			waitMax = float64(run.latMax.Microseconds()) / 1000
			waitMean = float64(run.latSum.Microseconds()) / 1000 / float64(max(run.latN, 1))
		})
		if wall < time.Second {
			b.Fatalf("only %v of steady state", wall)
		}
		<-run.ended
		ws.Wait()
	}
	b.ReportMetric(core, "core-%")
	b.ReportMetric(waitMax, "ms-wait-max")
	b.ReportMetric(waitMean, "ms-wait-mean")
	b.ReportMetric(kept, "kept-B/s")
	b.ReportMetric(kept/(rec.SampleRateHz*float64(len(rec.Channels))*4), "kept/raw")
}

func rate(rec *capture.Recording) int64 { return int64(rec.SampleRateHz) }

// heapInUse is the live heap after a collection, bytes.
func heapInUse() int64 {
	runtime.GC()
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return int64(m.HeapAlloc)
}
