package recon

import (
	"context"
	"sync"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// LiveLayout is what a Live needs to know of the interleaved blocks it is
// given, the header of a capture.Recording: the sample rate and, in
// interleaved order, each channel's name and unit (Samples is ignored;
// samples from a capture/live Source are ±1.0 full scale, unit "FS").
type LiveLayout struct {
	SampleRateHz float64
	Channels     []capture.Channel
}

// LayoutOf returns the layout of rec (its rate and channel names/units).
func LayoutOf(rec *capture.Recording) LiveLayout {
	l := LiveLayout{SampleRateHz: rec.SampleRateHz}
	for _, c := range rec.Channels {
		l.Channels = append(l.Channels, capture.Channel{Name: c.Name, Unit: c.Unit})
	}
	return l
}

// ResolveLive returns r with every automatic value (null) filled in from
// first, the first seconds of a recording (through Session.Resolve):
// channels, threshold, hysteresis, delay, aperture offsets, sine period,
// carrier, the levels of index pulses sharing the tone's input
// (rows.pulse_rest, rows.pulse_away), afterglow, speed, pitch and
// max_gap_mm and, with rows.strokes split or first, the reversal
// hysteresis (rows.strokes_hysteresis_mm).
func ResolveLive(ctx context.Context, first *capture.Recording, r recipe.Recipe) (recipe.Recipe, error) {
	return NewSession(first).Resolve(ctx, r)
}

// byStroke reports whether r grids the lines stroke by stroke: with
// rows.strokes split or first and a source that reads the position from a
// sensor, whose reversals cut the strokes (the others make one stroke).
func byStroke(r recipe.Recipe) bool {
	src, err := sourceOf(r.Rows.Source)
	return err == nil && cutsStrokes(r.Rows.Strokes) && src.needs() == "position"
}

// cutsStrokes reports whether rows.strokes mode makes frames of single
// strokes (split, first) rather than of all of them (merge).
func cutsStrokes(mode string) bool { return mode == "split" || mode == "first" }

// unresolved names the first automatic (null) key of r that a Live needs
// resolved, or "".
func unresolved(r recipe.Recipe) string {
	src, _ := sourceOf(r.Rows.Source)
	sourceKey, lawKey := "", ""
	if src != nil {
		sourceKey = src.liveNull(r)
	}
	if law, err := lawOf(r.Sweep.Law); err == nil {
		lawKey = law.liveNull(r.Sweep)
	}
	for _, k := range []struct {
		key     string
		missing bool
	}{
		{"channels.detector", !r.Channels.Detector.IsSet()},
		{"channels.index", !r.Channels.Index.IsSet()},
		{"channels.position", src != nil && src.needs() == "position" && !r.Channels.Position.IsSet()},
		{"rows.strokes_hysteresis_mm", byStroke(r) && r.Rows.StrokesHysteresisMM == nil},
		{"timing.threshold", r.Timing.Threshold == nil},
		{"timing.hysteresis", r.Timing.Hysteresis == nil},
		{"sweep.delay_deg", r.Sweep.DelayDeg == nil},
		{"sweep.aperture_offsets_deg", r.Sweep.ApertureOffsetsDeg == nil},
		{lawKey, lawKey != ""},
		{sourceKey, sourceKey != ""},
		{"signal.afterglow_us", r.Signal.AfterglowUS == nil},
		{"image.pitch_mm", r.Image.PitchMM == 0},
		{"image.max_gap_mm", r.Image.MaxGapMM == nil},
	} {
		if k.missing {
			return k.key
		}
	}
	return ""
}

// Live builds the image of a recording while it is recorded: each block
// of samples extends the timing (new index edges), the rows, and places
// and grids only the lines it completes, so the cost per second of capture
// stays the same however long the recording runs. After the last sample
// its Result equals Session.Build of the saved recording with the same
// recipe, to float rounding (docs/pipeline.md, "Live"). Every method may
// be called from any goroutine: Append on a consumer goroutine (never an
// audio callback), Result and Retune on another.
type Live struct {
	mu sync.Mutex
	// appending is held through an Append, so that the store is moved to
	// new memory outside mu with no other Append between.
	appending sync.Mutex
	layout    LiveLayout
	core      *liveCore
	failed    error
}

// NewLive starts an incremental build with a resolved recipe (ResolveLive):
// one with a null left is refused with a one-line error saying what to do.
func NewLive(r recipe.Recipe, layout LiveLayout) (*Live, error) {
	c, err := newLiveCore(r, layout)
	if err != nil {
		return nil, err
	}
	return &Live{layout: layout, core: c}, nil
}

// Append adds whole interleaved frames (len a multiple of the channel
// count). Call it from a consumer goroutine, never from an audio callback.
// Its cost per second of capture is constant however long the recording
// runs. An error is one line; the Live then refuses further blocks.
func (l *Live) Append(interleaved []float32) error {
	l.appending.Lock()
	defer l.appending.Unlock()
	l.moveStore(interleaved)
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.failed != nil {
		return l.failed
	}
	if err := l.core.append(interleaved); err != nil {
		l.failed = err
		return err
	}
	return nil
}

// moveStore moves the store's slices that the block would make grow to
// new memory before Append takes the lock, so that a Result or a window's
// read never waits for tens of megabytes to be copied. Only Append writes
// the store, and only past its samples, so the samples so far can be read
// while the lock is free; the copies are taken only if the core is still
// the one they came from (a Retune in between makes a new one) and the
// slices are as they were.
func (l *Live) moveStore(interleaved []float32) {
	l.mu.Lock()
	core := l.core
	var mv []storeMove
	if l.failed == nil && core.nch > 0 {
		mv = core.moves(len(interleaved) / core.nch)
	}
	l.mu.Unlock()
	if len(mv) == 0 {
		return
	}
	k := len(interleaved) / core.nch
	for i := range mv {
		mv[i].new = moved(mv[i].old, k)
	}
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.core != core {
		return
	}
	for _, m := range mv {
		if s := *m.dst; len(s) == len(m.old) && cap(s) == cap(m.old) {
			*m.dst = m.new
		}
	}
}

// Result is the image so far: one merged frame and its report, the shape
// Session.Build gives, with Result.Lines the newest LiveRecentLines lines
// as Session.Build lists them but for their stroke, -1 (the report's
// Lines counts them all). It is nil until the first line is placed. The value is the
// caller's own. Its cost grows with the frame's pixels, not with the
// length of the recording.
func (l *Live) Result() *Result {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.core.result()
}

// Retune changes the recipe (delay, aperture offsets, tone, pitch, any
// key that NewLive accepts): what was recorded so far is rebuilt with the
// new recipe, and later Appends continue with it. r must be resolved as
// for NewLive; on error the Live keeps its old recipe.
func (l *Live) Retune(ctx context.Context, r recipe.Recipe) error {
	l.mu.Lock()
	defer l.mu.Unlock()
	c, err := newLiveCore(r, l.layout)
	if err != nil {
		return err
	}
	if err := c.replay(ctx, l.core); err != nil {
		return err
	}
	l.core, l.failed = c, nil
	return nil
}

// Recipe returns the recipe the Live builds with.
func (l *Live) Recipe() recipe.Recipe {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.core.r.Clone()
}

// Channels is every channel's samples appended so far, in layout order:
// the Live's own store, shared with the caller (who must not change it)
// so that a window showing the capture keeps no second copy. Later
// Appends and Retunes never change what it returns.
func (l *Live) Channels() [][]float32 {
	l.mu.Lock()
	defer l.mu.Unlock()
	out := make([][]float32, len(l.core.raw))
	for ch, s := range l.core.raw {
		out[ch] = s[:l.core.n:l.core.n]
	}
	return out
}

// Samples is the number of frames appended so far.
func (l *Live) Samples() int64 {
	l.mu.Lock()
	defer l.mu.Unlock()
	return int64(l.core.n)
}
