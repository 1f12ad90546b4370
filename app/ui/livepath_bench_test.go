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
// incremental engine, and the window's updates at liveRate. It measures two
// phases of one 48 s capture (simulated before any measuring starts):
// start-up, from the first image until the engine has fixed its edge
// response (the image reports more than liveWarmLines lines, the first
// 1000 lines a batch build measures it from, recon's measureLines, plus a
// few revolutions' margin), and the steady state after it, to the end of
// the capture but its last half second. For each it takes the process's
// CPU time (getrusage, so every goroutine counts, the replay source's too)
// as "core-%" of one core, how long frames waited from their arrival in
// the feed to their image in the window ("ms-wait-max", "ms-wait-mean";
// the ring adds up to its 20 ms tick before that), and the heap the phase
// keeps per second of capture ("kept-B/s", after a GC at each end, and
// "kept/raw", its ratio to the samples as float32, 4 B per sample and
// channel; the GCs are outside the CPU time). The start-up figures carry
// the prefix "start-". The headless driver does not paint, which a
// display adds. One iteration is one capture.
func BenchmarkLivePath(b *testing.B) {
	rig := liveRig()
	rig.SampleRateHz, rig.DurationS, rig.Motion.StrokeS = 192000, 48, 47.5
	rec, _, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 3})
	if err != nil {
		b.Fatal(err)
	}
	fourth := append([]float32(nil), rec.Channels[0].Samples...)
	rec.Channels = append(rec.Channels, capture.Channel{Name: "ch3", Unit: capture.UnitFullScale, Samples: fourth})
	r := rig.Recipe()
	var start, steady livePhase
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
		look := func() (lines int, frames int64) {
			uiDo(func() {
				lines = -1
				if ws.result != nil {
					lines = ws.result.Report.Lines
				}
			})
			run.feed.mu.Lock()
			frames = run.feed.frames
			run.feed.mu.Unlock()
			return lines, frames
		}
		end := int64(rec.Frames()) - rate(rec)/2
		start = measurePhase(b, run, rec, look, func(lines int, frames int64) bool { return lines > liveWarmLines || frames >= end })
		if l, _ := look(); l <= liveWarmLines {
			b.Fatalf("the capture ended at %d lines, before the start-up's %d", l, liveWarmLines)
		}
		steady = measurePhase(b, run, rec, look, func(_ int, frames int64) bool { return frames >= end })
		if steady.wall < 10*time.Second {
			b.Fatalf("only %v of steady state", steady.wall)
		}
		<-run.ended
		ws.Wait()
	}
	raw := rec.SampleRateHz * float64(len(rec.Channels)) * 4
	for _, p := range []struct {
		prefix string
		ph     livePhase
	}{{"", steady}, {"start-", start}} {
		b.ReportMetric(p.ph.core, p.prefix+"core-%")
		b.ReportMetric(p.ph.waitMax, p.prefix+"ms-wait-max")
		b.ReportMetric(p.ph.waitMean, p.prefix+"ms-wait-mean")
		b.ReportMetric(p.ph.kept, p.prefix+"kept-B/s")
		b.ReportMetric(p.ph.kept/raw, p.prefix+"kept/raw")
	}
}

// liveWarmLines is how many lines the image reports once the engine has
// fixed its edge response: recon's measureLines (1000) and the line
// after, a little later for the rows' last blocks and the next edges.
const liveWarmLines = 1100

// livePhase is what BenchmarkLivePath measures over one phase.
type livePhase struct {
	wall                          time.Duration
	core, waitMax, waitMean, kept float64
}

// measurePhase measures the live path from the first image (or now, if
// later) until done reports true of the image's line count and the
// frames in the feed.
func measurePhase(b *testing.B, run *liveRun, rec *capture.Recording, look func() (int, int64), done func(int, int64) bool) livePhase {
	for lines, _ := look(); lines < 0; lines, _ = look() {
		time.Sleep(20 * time.Millisecond)
	}
	uiDo(func() { run.latMax, run.latSum, run.latN = 0, 0, 0 })
	heap0 := heapInUse()
	_, frames0 := look()
	t0, cpu0 := time.Now(), cpuTime(b)
	for lines, frames := look(); !done(lines, frames); lines, frames = look() {
		time.Sleep(20 * time.Millisecond)
	}
	var p livePhase
	p.wall = time.Since(t0)
	cpu := cpuTime(b) - cpu0
	uiDo(func() {
		p.waitMax = float64(run.latMax.Microseconds()) / 1000
		p.waitMean = float64(run.latSum.Microseconds()) / 1000 / float64(max(run.latN, 1))
	})
	heap1 := heapInUse()
	_, frames1 := look()
	p.core = 100 * cpu.Seconds() / p.wall.Seconds()
	p.kept = float64(heap1-heap0) / (float64(frames1-frames0) / rec.SampleRateHz)
	return p
}

func rate(rec *capture.Recording) int64 { return int64(rec.SampleRateHz) }

// heapInUse is the live heap after a collection, bytes.
func heapInUse() int64 {
	runtime.GC()
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return int64(m.HeapAlloc)
}
