package ui

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"sync"
	"sync/atomic"
	"time"

	"fyne.io/fyne/v2"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/recon"
	"spotloom/recon/recipe"
)

// liveRate is how often a live view's image and meters are updated: the
// screen rate of a live picture, and the bound of how long a sample waits
// for its pixel.
const liveRate = 15

// liveResolveS is how much of a live capture is taken, at first, to find
// the automatic settings; when that is too little (no head movement yet,
// too few lines) it is tried again with half as much again, and at least
// a second more, while the capture goes on.
const liveResolveS = 2.0

// liveRun is one live view: frames from a source go to disk through
// live.Record (or, for a file replayed, straight on) and, from the same
// frames as the file keeps them, into the incremental engine on a
// goroutine of its own; the window sees the image and the meters at
// liveRate through fyne.Do.
type liveRun struct {
	ws         *Workstation
	src        live.Source
	format     live.Format
	out        string             // the WAV written; "" when a file is replayed
	sampleType string             // its stored type
	replayed   *capture.Recording // the file replayed, when replaying
	path       string             // the file that becomes the capture at the end
	name       string
	start      recipe.Recipe // the settings to resolve from the first seconds
	feed       *liveFeed
	cancel     context.CancelFunc
	ctx        context.Context
	stopping   atomic.Bool   // Stop was asked
	dropped    atomic.Bool   // another capture replaced the live view: open nothing at the end
	inFlight   atomic.Bool   // an update is on its way to the UI goroutine
	captured   chan struct{} // closed when the capture has ended (the file is closed)
	ended      chan struct{} // closed when the window has taken the end (for tests)

	// Written by the recorder's goroutine.
	overruns      atomic.Int64
	overrunFrames atomic.Int64
	committed     atomic.Int64
	recErr        error // set before the feed closes
	recorded      bool  // the WAV was made (set before the feed closes)

	mu      sync.Mutex // guards what follows: the engine goroutine and the window's worker share it
	rec     *capture.Recording
	builder liveBuilder
	noImage string       // why no image is formed yet
	ranges  [][2]float64 // each channel's smallest and largest sample so far, for the trace strip
	tryAt   float64      // seconds of capture at which to try to start the engine next
	first   int          // frames the settings were resolved from
	final   *Result      // the last image, once the capture has ended
	store   *float32     // where the samples delivered last are stored

	// On the UI goroutine: how long frames waited for their image.
	latMax, latSum time.Duration
	latN           int
}

// liveStatus is what the live bar shows.
type liveStatus struct {
	frames, committed     int64
	total                 int64 // frames of a file replayed (0 when recording)
	rateHz                int
	peak                  []float32
	overruns              int64
	overrunFrames         int64
	noImage               string
	ranges                [][2]float64 // each channel's range so far
	writing, replay, done bool
	arrived               time.Time // when the oldest frame new in this update arrived
	moved                 bool      // the samples are in a new store (the engine's grew): drop the old one
}

// newLiveRun prepares a live view of src; out is the WAV to write ("" to
// write none), start the settings.
func (ws *Workstation) newLiveRun(src live.Source, out, sampleType string, start recipe.Recipe) *liveRun {
	f := src.Format()
	ctx, cancel := context.WithCancel(context.Background())
	rec := &capture.Recording{SampleRateHz: float64(f.RateHz), Source: capture.Source{Format: "live"}}
	for c := 0; c < f.Channels; c++ {
		rec.Channels = append(rec.Channels, capture.Channel{Name: fmt.Sprintf("ch%d", c), Unit: capture.UnitFullScale})
	}
	return &liveRun{ws: ws, src: src, format: f, out: out, sampleType: sampleType, path: out, name: filepath.Base(out),
		start: cloneRecipe(start), feed: newLiveFeed(f.Channels), ctx: ctx, cancel: cancel,
		captured: make(chan struct{}), ended: make(chan struct{}), rec: rec, tryAt: liveResolveS}
}

// run starts the capture and the engine goroutines.
func (r *liveRun) run() {
	go r.capture()
	go r.engineLoop()
}

// capture moves frames from the source to the file (and the feed) until
// Stop, the end of the source or a write error.
func (r *liveRun) capture() {
	defer close(r.captured)
	defer r.feed.close()
	if r.out == "" {
		if err := r.src.Start(r.feed.push); err != nil {
			r.recErr = fmt.Errorf("%s: %v", r.src.Name(), err)
			return
		}
		select {
		case <-r.ctx.Done():
		case <-r.src.Done():
		}
		r.src.Stop()
		return
	}
	res, err := live.Record(r.ctx, r.src, live.Options{Path: r.out, SampleType: r.sampleType, Tap: r.feed.push, Create: r.ws.opts.CreateWAV,
		Status: func(s live.Status) {
			r.committed.Store(s.Committed)
			r.overruns.Store(int64(s.Overruns))
			r.overrunFrames.Store(s.OverrunFrames)
		}})
	r.src.Stop() // Record stops a source it started; this one may not have started
	r.recErr, r.recorded = err, res != nil
}

// engineLoop feeds the engine what arrived, at most liveRate times a
// second, and hands the image to the window.
func (r *liveRun) engineLoop() {
	period := time.Second / liveRate
	for {
		<-r.feed.wake
		started := time.Now()
		block, frames, closed, since := r.feed.takeSince()
		peak := r.consume(block, closed)
		r.deliver(peak, frames, closed, since)
		if closed {
			return
		}
		time.Sleep(period - time.Since(started))
	}
}

// consume adds frames to the capture so far and to the engine; the engine
// starts once the first seconds resolve the settings. It returns each
// channel's peak |sample| in block, for the meters.
func (r *liveRun) consume(block []float32, closed bool) []float32 {
	r.mu.Lock()
	defer r.mu.Unlock()
	peak := make([]float32, len(r.rec.Channels))
	r.ranges = widenRanges(r.ranges, block, len(r.rec.Channels), peak)
	if r.builder != nil {
		if len(block) > 0 {
			if err := r.builder.Append(block); err != nil {
				r.noImage = windowWords(err.Error())
				r.builder = nil
				r.tryAt = -1
				appendInterleaved(r.rec, block) // the capture goes on without the engine
				return peak
			}
		}
		r.shareSamples()
		return peak
	}
	appendInterleaved(r.rec, block)
	secs := r.rec.DurationS()
	if r.tryAt < 0 || (secs < r.tryAt && !closed) || secs == 0 {
		return peak
	}
	b, err := startBuilder(r.ctx, r.rec, r.start)
	if err == nil {
		err = b.Append(interleave(r.rec))
	}
	if err != nil {
		r.noImage = fmt.Sprintf("no image from the first %.1f s yet: %s", secs, windowWords(err.Error()))
		r.tryAt = secs + max(1, secs/2)
		return peak
	}
	r.builder, r.noImage, r.first = b, "", r.rec.Frames()
	r.shareSamples()
	return peak
}

// shareSamples makes the capture so far the engine's samples, so that the
// window keeps one copy of them (the engine's): the capture's own copy of
// the first seconds is dropped. Call with mu held.
func (r *liveRun) shareSamples() {
	for c, s := range r.builder.Channels() {
		r.rec.Channels[c].Samples = s
	}
}

// deliver hands the image and the meters to the window, unless the last
// update is still on its way (the next one will be newer); the last one
// always goes.
func (r *liveRun) deliver(peak []float32, frames int64, closed bool, since time.Time) {
	if !closed && !r.inFlight.CompareAndSwap(false, true) {
		return
	}
	r.mu.Lock()
	var res *Result
	if r.builder != nil {
		if rr := r.builder.Result(); rr != nil {
			res = fromRecon(rr)
		}
	}
	if closed {
		r.final = res
	}
	rec := snapshotRecording(r.rec)
	moved := false
	if len(rec.Channels) > 0 && len(rec.Channels[0].Samples) > 0 {
		s := rec.Channels[0].Samples
		moved, r.store = r.store != nil && r.store != &s[0], &s[0]
	}
	st := liveStatus{moved: moved, frames: frames, committed: r.committed.Load(), rateHz: r.format.RateHz, peak: peak,
		overruns: r.overruns.Load(), overrunFrames: r.overrunFrames.Load(), noImage: r.noImage, ranges: slices.Clone(r.ranges),
		writing: r.out != "", replay: r.replayed != nil, done: closed, arrived: since}
	if r.replayed != nil {
		st.total = int64(r.replayed.Frames())
	}
	r.mu.Unlock()
	uiDo(func() {
		r.inFlight.Store(false)
		r.ws.showLive(r, rec, res, st)
	})
}

// Stop ends the capture; the window then opens what was captured as an
// ordinary capture.
func (r *liveRun) stop() {
	r.stopping.Store(true)
	r.cancel()
}

// uiMu serialises what is handed to the UI goroutine. With a display
// fyne.Do already runs everything on that one goroutine and the lock is
// never contended; the test driver runs each call at once on the caller's
// goroutine, and the lock keeps two from touching the window together.
var uiMu sync.Mutex

// uiDo runs f on the UI goroutine, one call at a time.
func uiDo(f func()) {
	fyne.Do(func() {
		uiMu.Lock()
		defer uiMu.Unlock()
		f()
	})
}

// appendInterleaved adds interleaved frames to rec's channels.
func appendInterleaved(rec *capture.Recording, block []float32) {
	n := len(rec.Channels)
	for c := range rec.Channels {
		s := rec.Channels[c].Samples
		for i := c; i < len(block); i += n {
			s = append(s, block[i])
		}
		rec.Channels[c].Samples = s
	}
}

// widenRanges widens each channel's [smallest, largest] sample by the
// interleaved frames of block (nch channels): the trace strip's lane scales
// at a cost per frame, not per update. peak (nch long) gets each channel's
// largest |sample| in block (0 for none), the meters' level, from the same
// pass.
func widenRanges(ranges [][2]float64, block []float32, nch int, peak []float32) [][2]float64 {
	for len(ranges) < nch {
		ranges = append(ranges, [2]float64{math.Inf(1), math.Inf(-1)})
	}
	// Comparisons rather than min and max, which must look for NaN at
	// every step: a sample kept from a file is never NaN, and a NaN here
	// would only leave a range as it was.
	for c := range nch {
		lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
		for i := c; i < len(block); i += nch {
			v := block[i]
			if v < lo {
				lo = v
			}
			if v > hi {
				hi = v
			}
		}
		r := &ranges[c]
		r[0], r[1] = math.Min(r[0], float64(lo)), math.Max(r[1], float64(hi))
		peak[c] = max(0, -lo, hi)
	}
	return ranges
}

// interleave is rec's frames, interleaved.
func interleave(rec *capture.Recording) []float32 {
	n, frames := len(rec.Channels), rec.Frames()
	out := make([]float32, n*frames)
	for c, ch := range rec.Channels {
		for i, v := range ch.Samples {
			out[i*n+c] = v
		}
	}
	return out
}

// snapshotRecording is rec as it is now: later appends go past its ends,
// so the window may read it while the capture grows.
func snapshotRecording(rec *capture.Recording) *capture.Recording {
	out := *rec
	out.Channels = append([]capture.Channel(nil), rec.Channels...)
	for c := range out.Channels {
		s := out.Channels[c].Samples
		out.Channels[c].Samples = s[:len(s):len(s)]
	}
	return &out
}

// firstFrames is the first n frames of rec.
func firstFrames(rec *capture.Recording, n int) *capture.Recording {
	out := snapshotRecording(rec)
	for c := range out.Channels {
		out.Channels[c].Samples = out.Channels[c].Samples[:n:n]
	}
	return out
}

// liveEngine is the window's Engine while a live view runs: a rebuild
// with new settings retunes the incremental engine, which re-grids what was
// captured so far and goes on with the new settings.
type liveEngine struct{ r *liveRun }

func (e liveEngine) Recording() *capture.Recording {
	e.r.mu.Lock()
	defer e.r.mu.Unlock()
	return snapshotRecording(e.r.rec)
}

func (e liveEngine) Build(ctx context.Context, rcp recipe.Recipe, progress func(string, float64)) (*Result, error) {
	r := e.r
	r.mu.Lock()
	b, first := r.builder, firstFrames(r.rec, r.first)
	r.mu.Unlock()
	if b == nil {
		return nil, errors.New("no live image is formed yet")
	}
	if progress != nil {
		progress("re-gridding what was captured so far", 0)
	}
	// A control set back to automatic is found from the same first
	// seconds as at the start.
	resolved, err := resolveLive(ctx, first, rcp)
	if err != nil {
		return nil, err
	}
	if err := b.Retune(ctx, resolved); err != nil {
		return nil, err
	}
	res := b.Result()
	if res == nil {
		return nil, errors.New("no line is placed with these settings yet")
	}
	return fromRecon(res), nil
}

func (e liveEngine) FirstLook(context.Context, recipe.Recipe, recon.Known, func(string, float64)) (*Look, error) {
	return nil, errors.New("a first look needs the whole capture: stop the live view first")
}

func (e liveEngine) EstimateApertureOffsets(ctx context.Context, rcp recipe.Recipe) ([]float64, error) {
	return recon.EstimateApertureOffsets(ctx, recon.NewSession(e.Recording()), rcp)
}
