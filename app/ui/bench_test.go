package ui

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"testing"
	"time"

	"fyne.io/fyne/v2"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// BenchmarkDelayChange times a delay change on the demo through the
// engine path the window uses (sessionEngine.Build on a warm session, as
// after the first image): the stages before placement come from the
// session's cache.
func BenchmarkDelayChange(b *testing.B) {
	rec, err := sampledata.Demo()
	if err != nil {
		b.Fatal(err)
	}
	eng := NewSessionEngine(rec)
	r := sampledata.DemoRecipe()
	res, err := eng.Build(context.Background(), r, nil)
	if err != nil {
		b.Fatal(err)
	}
	d0 := res.Report.DelayDeg
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		r.Sweep.DelayDeg = recipe.Float(d0 + 0.25*float64(i%2+1))
		if _, err := eng.Build(context.Background(), r, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Milliseconds())/float64(b.N), "ms/change")
}

// timedEngine counts the builds of the engine it wraps and sums their
// time, so a benchmark can tell the window's own share of a change.
type timedEngine struct {
	Engine
	builds int
	inside time.Duration
}

func (e *timedEngine) Build(ctx context.Context, r recipe.Recipe, progress func(string, float64)) (*Result, error) {
	start := time.Now()
	res, err := e.Engine.Build(ctx, r, progress)
	e.builds++
	e.inside += time.Since(start)
	return res, err
}

// benchChange times the whole way from a change typed into a control to
// the new image in the view, headless: the change, the build off the UI
// goroutine, the hand-back and render (image, trace strip, facts,
// controls). It reports the time per change, the build's share, the
// window's (the rest, waits between goroutines included), the time on the
// UI goroutine alone, and the builds per change, which must be one.
func benchChange(b *testing.B, change func(ws *Workstation, i int)) {
	timed := &timedEngine{}
	ws := demoWithEngine(b, fyne.NewSize(1366, 768), func(e Engine) Engine { timed.Engine = e; return timed })
	// The time spent on the UI goroutine: the change itself and the
	// hand-over of its build (render).
	var ui time.Duration
	deliver := ws.work.deliver
	ws.work.deliver = func(f func()) {
		deliver(func() {
			start := time.Now()
			f()
			ui += time.Since(start)
		})
	}
	builds, inside := timed.builds, timed.inside
	shown := ws.view.Frame()
	for i := 0; b.Loop(); i++ {
		start := time.Now()
		change(ws, i)
		ui += time.Since(start)
		ws.Wait()
		if ws.Problem() != "" {
			b.Fatal(ws.Problem())
		}
		if f := ws.view.Frame(); f == shown {
			b.Fatal("the view still shows the frame from before the change")
		} else {
			shown = f
		}
	}
	n := float64(b.N)
	total := float64(b.Elapsed().Microseconds()) / 1000 / n
	build := float64((timed.inside - inside).Microseconds()) / 1000 / n
	b.ReportMetric(total, "ms/change")
	b.ReportMetric(build, "ms-build/change")
	b.ReportMetric(total-build, "ms-window/change")
	b.ReportMetric(float64(ui.Microseconds())/1000/n, "ms-ui/change")
	b.ReportMetric(float64(timed.builds-builds)/n, "builds/change")
}

// BenchmarkDelayChangeInWindow: a delay typed into its box, a new value
// each time (steps of 0.004°, as a slow drag gives), so no remembered
// build can answer.
func BenchmarkDelayChangeInWindow(b *testing.B) {
	var d0 float64
	benchChange(b, func(ws *Workstation, i int) {
		if i == 0 {
			d0 = ws.result.Report.DelayDeg
		}
		ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.3f", d0+0.004*float64(i%250+1)))
	})
}

// BenchmarkOffsetChangeInWindow: an aperture offset typed into its box,
// a new value each time.
func BenchmarkOffsetChangeInWindow(b *testing.B) {
	benchChange(b, func(ws *Workstation, i int) {
		ws.controls.offsets[1].typed(fmt.Sprintf("%.3f", 0.001*float64(i%250+1)))
	})
}

// BenchmarkMeasureListOnNewFrame times what every rebuilt frame costs the
// list beside the image, on the UI goroutine: a 60 mm square region, a
// 120 mm profile and a 100 × 80 mm noise spectrum on the demo frame, their
// numbers and the two plots.
func BenchmarkMeasureListOnNewFrame(b *testing.B) {
	ws, _ := newTestWorkstation(b)
	f := ws.view.Frame()
	cx, cy := centreMM(f)
	for _, s := range []measure.Shape{
		{Kind: measure.KindRegion, Rect: &measure.Rect{X0: cx - 30, Y0: cy - 30, X1: cx + 30, Y1: cy + 30}},
		{Kind: measure.KindProfile, Line: &measure.Line{X0: cx - 60, Y0: cy, X1: cx + 60, Y1: cy}, BandMM: 2},
		{Kind: measure.KindNPS, Rect: &measure.Rect{X0: cx - 50, Y0: cy - 40, X1: cx + 50, Y1: cy + 40}},
	} {
		ws.AddMeasurement(s)
	}
	for b.Loop() {
		ws.measures.show(f)
	}
	for _, t := range ws.measures.taken {
		if t.Err != nil {
			b.Fatal(t.Err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Microseconds())/1000/float64(b.N), "ms/frame")
}

// BenchmarkLiveWindowUpdate times one update of a live view on the UI
// goroutine with an image of the demo's size: the meters, the automatic
// tone, the view's tone mapping, the trace strip, the facts and the
// controls, these once a second as in a live view. The window paints the view's raster afterwards, which the
// headless driver leaves out. "core-%" is the share of one core the
// updates take at the live rate (liveRate a second).
func BenchmarkLiveWindowUpdate(b *testing.B) {
	ws, _ := newTestWorkstation(b)
	res, rec := ws.result, ws.rec
	src, err := live.NewReplay(rec, 1) // never started: only its format is used
	if err != nil {
		b.Fatal(err)
	}
	run := ws.newLiveRun(src, "", "", ws.cur.Recipe)
	ws.lv.run, ws.lv.toneFollows = run, true
	ws.lv.bar.start("benchmark", len(rec.Channels))
	st := liveStatus{frames: int64(rec.Frames()), rateHz: int(rec.SampleRateHz), peak: []float32{0.5, 0.25, 0.1}}
	for i := 0; b.Loop(); i++ {
		if i%liveRate == 0 {
			ws.lv.fullAt = time.Time{} // a second has passed: every panel too
		}
		ws.showLive(run, rec, res, st)
	}
	b.ReportMetric(100*liveRate*b.Elapsed().Seconds()/float64(b.N), "core-%")
}

// BenchmarkLiveFeed is what a live view adds to the recording path per
// second at the budget rate, 192 kHz × 4 channels int24, before
// the engine: the tap's read-back of every frame as the file keeps it
// (10 ms blocks), the feed to the engine goroutine, and the frames kept for
// the trace strip, taken liveRate times a second. "core-%" is the share of
// one core that second of audio costs.
func BenchmarkLiveFeed(b *testing.B) {
	const rate, channels, block = 192000, 4, 1920
	stream, err := capture.CreateWAVStream(filepath.Join(b.TempDir(), "feed.wav"), capture.WAVStreamFormat{RateHz: rate, Channels: channels, SampleType: "int24"})
	if err != nil {
		b.Fatal(err)
	}
	defer stream.Close()
	in := make([]float32, block*channels)
	for i := range in {
		in[i] = float32(math.Sin(float64(i) * 0.001))
	}
	tapped := make([]float32, len(in))
	feed := newLiveFeed(channels)
	rec := &capture.Recording{SampleRateHz: rate, Channels: make([]capture.Channel, channels)}
	for n := 0; b.Loop(); n++ {
		for k := 0; k < rate/block; k++ {
			stream.ReadBack(tapped, in)
			feed.push(tapped)
			if k%(rate/block/liveRate) == 0 {
				got, _, _ := feed.take()
				appendInterleaved(rec, got)
			}
		}
		if n%8 == 7 { // keep the memory of a long run bounded
			for c := range rec.Channels {
				rec.Channels[c].Samples = rec.Channels[c].Samples[:0]
			}
		}
	}
	b.ReportMetric(100*b.Elapsed().Seconds()/float64(b.N), "core-%")
}
