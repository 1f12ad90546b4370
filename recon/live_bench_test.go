package recon

import (
	"context"
	"fmt"
	"runtime"
	"sync"
	"testing"
	"time"

	"spotloom/capture"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// The live path's budget (issue 13, §5) at 192 kHz × 4 channels: the
// demo rig's wheel at its 420 rev/min (42 lines/s, so the first thousand
// lines, over which the edge response is measured, take 24 s: 5 s and
// 10 s of history are before them, 30 s and 60 s after) and a head pushed
// back and forth by hand, with a fourth channel the recipe does not read,
// as a four-input card records it.
const (
	benchRate     = 192000
	benchSeconds  = 75
	benchChannels = 4
	benchBlock    = benchRate / 100 // 10 ms, as a sound card delivers
)

var benchLive struct {
	once sync.Once
	in   []float32 // interleaved
	r    recipe.Recipe
	err  error
}

// liveBenchInput simulates the capture once and resolves its recipe from
// the first 3 s.
func liveBenchInput(b *testing.B) ([]float32, recipe.Recipe) {
	benchLive.once.Do(func() {
		rig := sampledata.DemoRig()
		rig.Motion.StartRestS = 1
		rig.Motion.StrokeCount = 6
		rig.Motion.StrokeS = 12
		rig.Motion.PauseCount = 0
		rec, _, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 3, DurationS: benchSeconds, SampleRateHz: benchRate})
		if err != nil {
			benchLive.err = err
			return
		}
		first := &capture.Recording{SampleRateHz: rec.SampleRateHz}
		for _, c := range rec.Channels {
			first.Channels = append(first.Channels, capture.Channel{Name: c.Name, Unit: c.Unit, Samples: c.Samples[:3*benchRate]})
		}
		if benchLive.r, err = ResolveLive(context.Background(), first, rig.Recipe()); err != nil {
			benchLive.err = err
			return
		}
		n := rec.Frames()
		in := make([]float32, n*benchChannels)
		for i := 0; i < n; i++ {
			for c := range rec.Channels {
				in[i*benchChannels+c] = rec.Channels[c].Samples[i]
			}
			in[i*benchChannels+3] = rec.Channels[0].Samples[n-1-i] // something to carry
		}
		benchLive.in = in
	})
	if benchLive.err != nil {
		b.Fatal(benchLive.err)
	}
	return benchLive.in, benchLive.r
}

func benchLayout() LiveLayout {
	l := LiveLayout{SampleRateHz: benchRate}
	for _, name := range []string{"detector", "index", "position", "spare"} {
		l.Channels = append(l.Channels, capture.Channel{Name: name, Unit: capture.UnitFullScale})
	}
	return l
}

// feed appends seconds [from, to) of in in 10 ms blocks.
func feed(b *testing.B, l *Live, in []float32, from, to int) {
	for at := from * benchRate; at < to*benchRate; at += benchBlock {
		if err := l.Append(in[at*benchChannels : (at+benchBlock)*benchChannels]); err != nil {
			b.Fatal(err)
		}
	}
}

// liveAt is a Live that has taken the first seconds of in.
func liveAt(b *testing.B, in []float32, r recipe.Recipe, seconds int) *Live {
	l, err := NewLive(r, benchLayout())
	if err != nil {
		b.Fatal(err)
	}
	feed(b, l, in, 0, seconds)
	return l
}

// benchHistories are the seconds of capture the benchmarks start from:
// two within the first thousand lines, two after.
var benchHistories = []int{5, 10, 30, 60}

// BenchmarkLiveAppend is the steady-state cost of Live.Append for one
// second of capture (192 kHz × 4 channels in 10 ms blocks) after 5 s to
// 60 s of history: "core-%" is the share of one core it takes, the same
// for all when the cost per second does not grow with the recording.
// Target (with the ring, the WAV writer and the image update): under 10 %.
func BenchmarkLiveAppend(b *testing.B) {
	in, r := liveBenchInput(b)
	for _, history := range benchHistories {
		b.Run(fmt.Sprintf("history=%ds", history), func(b *testing.B) {
			l := liveAt(b, in, r, history)
			at := history
			b.SetBytes(benchRate * benchChannels * 4)
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				if at+1 > benchSeconds || at >= history+5 {
					// Stay near the history: start again from it.
					b.StopTimer()
					l, at = liveAt(b, in, r, history), history
					b.StartTimer()
				}
				feed(b, l, in, at, at+1)
				at++
			}
			b.ReportMetric(100*b.Elapsed().Seconds()/float64(b.N), "core-%")
		})
	}
}

// BenchmarkLiveResult is the cost of Live.Result (the frame so far,
// normalised, and its report) at a screen rate of 10 updates a second,
// after 5 s to 60 s of capture: each iteration appends 0.1 s (not timed)
// and takes one Result, so the lines new since the last one are in its
// cost. "core-%@10Hz" is the share of one core, the same for all when it
// does not grow with the recording (the first thousand lines included).
func BenchmarkLiveResult(b *testing.B) {
	in, r := liveBenchInput(b)
	const step = benchRate / 10
	for _, history := range benchHistories {
		b.Run(fmt.Sprintf("history=%ds", history), func(b *testing.B) {
			l := liveAt(b, in, r, history)
			l.Result()
			at := history * benchRate
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				b.StopTimer()
				if at+step > (history+5)*benchRate {
					// Stay near the history: start again from it.
					l, at = liveAt(b, in, r, history), history*benchRate
					l.Result()
				}
				for end := at + step; at < end; at += benchBlock {
					if err := l.Append(in[at*benchChannels : (at+benchBlock)*benchChannels]); err != nil {
						b.Fatal(err)
					}
				}
				b.StartTimer()
				if l.Result() == nil {
					b.Fatal("no result")
				}
			}
			b.ReportMetric(10*100*b.Elapsed().Seconds()/float64(b.N), "core-%@10Hz")
		})
	}
}

// BenchmarkLiveMemory is the memory a Live keeps per second of capture
// between 10 s and 60 s (the samples of every channel, 3 MB/s at this
// rate, and what the stages keep beside them), in "kept-B/s".
func BenchmarkLiveMemory(b *testing.B) {
	in, r := liveBenchInput(b)
	for i := 0; i < b.N; i++ {
		l := liveAt(b, in, r, 10)
		before := heapInUse()
		feed(b, l, in, 10, 60)
		after := heapInUse()
		runtime.KeepAlive(l)
		b.ReportMetric(float64(after-before)/50, "kept-B/s")
	}
}

func heapInUse() int64 {
	runtime.GC()
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return int64(m.HeapAlloc)
}

// BenchmarkLiveShared is the steady-state cost of the two-input sound
// card (the position tone on the index input: the notch run as the samples
// come and the tone fitted around the pulses) beside the same rig on
// three inputs, at 192 kHz after 10 s of capture: "append-core-%" is the
// share of one core Live.Append takes, "result-core-%@10Hz" that of ten
// Results a second (each after 0.1 s more), both for one second of capture.
func BenchmarkLiveShared(b *testing.B) {
	const seconds, history, step = 16, 10, benchRate / 10
	for _, tc := range []struct {
		name string
		rig  sampledata.Rig
	}{{"inputs=2", sampledata.StereoSoundCardRig()}, {"inputs=3", sampledata.SoundCardRig()}} {
		b.Run(tc.name, func(b *testing.B) {
			rec, _, err := sampledata.Simulate(context.Background(), tc.rig, "dot-grid", sampledata.SimOptions{Seed: 3, DurationS: seconds, SampleRateHz: benchRate})
			if err != nil {
				b.Fatal(err)
			}
			first := &capture.Recording{SampleRateHz: rec.SampleRateHz}
			for _, c := range rec.Channels {
				first.Channels = append(first.Channels, capture.Channel{Name: c.Name, Unit: c.Unit, Samples: c.Samples[:3*benchRate]})
			}
			r, err := ResolveLive(context.Background(), first, tc.rig.Recipe())
			if err != nil {
				b.Fatal(err)
			}
			nch := len(rec.Channels)
			in := make([]float32, rec.Frames()*nch)
			for i := range rec.Frames() {
				for c := range rec.Channels {
					in[i*nch+c] = rec.Channels[c].Samples[i]
				}
			}
			appendTo := func(l *Live, from, to int) {
				for at := from; at < to; at += benchBlock {
					if err := l.Append(in[at*nch : (at+benchBlock)*nch]); err != nil {
						b.Fatal(err)
					}
				}
			}
			start := func() *Live {
				l, err := NewLive(r, LayoutOf(rec))
				if err != nil {
					b.Fatal(err)
				}
				appendTo(l, 0, history*benchRate)
				l.Result()
				return l
			}
			var appendS, resultS float64
			for b.Loop() {
				b.StopTimer()
				l := start()
				b.StartTimer()
				for at := history * benchRate; at < (history+1)*benchRate; at += step {
					t0 := time.Now()
					appendTo(l, at, at+step)
					t1 := time.Now()
					if l.Result() == nil {
						b.Fatal("no result")
					}
					appendS += t1.Sub(t0).Seconds()
					resultS += time.Since(t1).Seconds()
				}
			}
			b.ReportMetric(100*appendS/float64(b.N), "append-core-%")
			b.ReportMetric(100*resultS/float64(b.N), "result-core-%@10Hz")
		})
	}
}
