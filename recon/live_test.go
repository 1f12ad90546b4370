package recon_test

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/recon"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// liveRig is the demo rig turning faster (120 lines/s at 96 kHz) over a
// shorter hand stroke, so a dozen seconds hold more lines than the first
// thousand the edge response is measured over: the live build then grids
// most lines one at a time.
func liveRig() sampledata.Rig {
	rig := sampledata.DemoRig()
	rig.DurationS = 12
	rig.Wheel.RevPerMin = 1200
	rig.Motion.StrokeS = 8
	rig.Motion.StartRestS = 2
	rig.Motion.PauseCount = 0
	return rig
}

func simulate(t testing.TB, rig sampledata.Rig) *capture.Recording {
	t.Helper()
	rec, _, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	return rec
}

// head is the first seconds of rec.
func head(rec *capture.Recording, seconds float64) *capture.Recording {
	n := min(rec.Frames(), int(seconds*rec.SampleRateHz))
	out := &capture.Recording{SampleRateHz: rec.SampleRateHz, Source: rec.Source}
	for _, c := range rec.Channels {
		out.Channels = append(out.Channels, capture.Channel{Name: c.Name, Unit: c.Unit, Samples: c.Samples[:n]})
	}
	return out
}

// tee is a live.Source that hands every block its inner source delivers
// to the recorder and, copied, to a channel a consumer goroutine reads.
type tee struct {
	live.Source
	blocks chan []float32
}

func (s *tee) Start(deliver func([]float32)) error {
	return s.Source.Start(func(b []float32) {
		deliver(b)
		s.blocks <- append([]float32(nil), b...)
	})
}

// recordAndWatch replays rec through a Record (a float32 WAV in dir) and a
// Live with recipe r at the same time, and returns the Live and the path
// of the saved WAV. Before retuneAt samples (when > 0) the Live is retuned
// to r2 on the consumer goroutine.
func recordAndWatch(t *testing.T, rec *capture.Recording, r recipe.Recipe, retuneAt int64, r2 recipe.Recipe) (*recon.Live, string) {
	t.Helper()
	lv, err := recon.NewLive(r, recon.LayoutOf(rec))
	if err != nil {
		t.Fatal(err)
	}
	rp, err := live.NewReplay(rec, 40)
	if err != nil {
		t.Fatal(err)
	}
	// A channel deep enough for the whole replay: the deliver callback
	// must never block.
	src := &tee{Source: rp, blocks: make(chan []float32, rec.Frames()/max(int(rec.SampleRateHz)/100, 1)+2)}
	var wg sync.WaitGroup
	var appendErr error
	done := make(chan struct{})
	wg.Add(1)
	go func() {
		defer wg.Done()
		retuned := false
		for {
			select {
			case b := <-src.blocks:
				if retuneAt > 0 && !retuned && lv.Samples() >= retuneAt {
					if err := lv.Retune(context.Background(), r2); err != nil {
						appendErr = err
					}
					retuned = true
				}
				if err := lv.Append(b); err != nil && appendErr == nil {
					appendErr = err
				}
			case <-done:
				if len(src.blocks) == 0 {
					return
				}
			}
		}
	}()
	path := filepath.Join(t.TempDir(), "live.wav")
	_, err = live.Record(context.Background(), src, live.Options{Path: path, SampleType: "float32", RingSeconds: rec.DurationS() + 1})
	close(done)
	wg.Wait()
	if err != nil {
		t.Fatal(err)
	}
	if appendErr != nil {
		t.Fatal(appendErr)
	}
	if got := lv.Samples(); got != int64(rec.Frames()) {
		t.Fatalf("the live build took %d frames, the replay has %d", got, rec.Frames())
	}
	return lv, path
}

// batchOf builds the saved WAV with r, through capture.Open and
// Session.Build: the independent batch path the live one must equal.
func batchOf(t *testing.T, path string, r recipe.Recipe) *recon.Result {
	t.Helper()
	saved, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	res, err := recon.NewSession(saved).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// sameImage checks that the live frame equals the batch frame: the same
// size, origin and covered pixels, and values within 1e-5 of the frame's
// largest magnitude (float rounding: the two sum the same samples in a
// different order; a relative bound per pixel would fail where a value
// is near zero after the baseline is removed).
func sameImage(t *testing.T, got, want *recon.Result) {
	t.Helper()
	if got == nil {
		t.Fatal("the live build has no result")
	}
	if got.Report.Lines != want.Report.Lines {
		t.Errorf("live %d lines, batch %d", got.Report.Lines, want.Report.Lines)
	}
	if len(got.Frames) != len(want.Frames) || len(want.Frames) == 0 {
		t.Fatalf("live %d frames, batch %d", len(got.Frames), len(want.Frames))
	}
	for i := range want.Frames {
		sameFrame(t, fmt.Sprintf("frame %d: ", i), got.Frames[i], want.Frames[i])
	}
}

// sameFrame is sameImage's check of one frame, its stroke too.
func sameFrame(t *testing.T, what string, g, w *recon.Frame) {
	t.Helper()
	if g.Stroke != w.Stroke {
		t.Errorf("%slive stroke %d, batch %d", what, g.Stroke, w.Stroke)
	}
	if g.Width != w.Width || g.Height != w.Height || math.Abs(g.OriginXMM-w.OriginXMM) > 1e-9 || math.Abs(g.OriginYMM-w.OriginYMM) > 1e-9 {
		t.Fatalf("%slive frame %d × %d at (%g, %g) mm, batch %d × %d at (%g, %g) mm", what, g.Width, g.Height, g.OriginXMM, g.OriginYMM, w.Width, w.Height, w.OriginXMM, w.OriginYMM)
	}
	scale := 0.0
	for i, v := range w.Pix {
		if w.Covered[i] {
			scale = math.Max(scale, math.Abs(float64(v)))
		}
	}
	bad, worst := 0, 0.0
	for i := range w.Pix {
		if g.Covered[i] != w.Covered[i] {
			bad++
			continue
		}
		if !w.Covered[i] {
			continue
		}
		if d := math.Abs(float64(g.Pix[i]) - float64(w.Pix[i])); d > 1e-5*scale {
			bad++
			worst = math.Max(worst, d)
		}
	}
	if bad > 0 {
		t.Errorf("%s%d of %d pixels differ (largest difference %.3g, frame scale %.3g)", what, bad, len(w.Pix), worst, scale)
	}
}

// liveCases are rigs whose recipes take different stages: a DC position
// sensor on a wheel; a sound card (a tone for the position, an AC-coupled
// detector) with the afterglow, aperture offsets and pitch left automatic;
// a resonant mirror (the sine law, no beam-off baseline); a head moved at
// an even speed with no position sensor (rows.source even); a stepper's
// step pulses, their trigger resolved from the first seconds.
func liveCases() []struct {
	name string
	rig  sampledata.Rig
	auto bool
} {
	card := sampledata.SoundCardRig()
	card.Wheel.RevPerMin = 1200
	card.DurationS = 11
	mirror := sampledata.MirrorRig()
	mirror.DurationS = 11
	mirror.Motion.StartRestS = 0.5
	even := liveRig()
	even.Position.Kind, even.Motion.Kind = sampledata.SensorNone, sampledata.MotionMotor
	even.Motion.StartRestS = 0
	stepper := liveRig()
	stepper.Motion = sampledata.Motion{Kind: sampledata.MotionStepper, TravelMM: 300, StrokeS: 10, StrokeCount: 1, StartRestS: 1,
		MMPerStep: 0.5, StepPulseS: 0.002, StepLevelV: 0.7}
	stepper.Position = sampledata.PositionSensor{Kind: sampledata.SensorNone}
	return []struct {
		name string
		rig  sampledata.Rig
		auto bool
	}{{"dc position", liveRig(), false}, {"sound card", card, true}, {"mirror", mirror, false}, {"even motion", even, false}, {"steps", stepper, false}}
}

// TestLiveEqualsBatch: a replay recorded to a WAV and watched live at the
// same time; after the last sample the live image equals the batch build
// of the saved WAV with the same resolved recipe.
func TestLiveEqualsBatch(t *testing.T) {
	for _, tc := range liveCases() {
		t.Run(tc.name, func(t *testing.T) {
			rec := simulate(t, tc.rig)
			r := tc.rig.Recipe()
			if tc.auto {
				r.Signal.AfterglowUS, r.Sweep.ApertureOffsetsDeg, r.Image.PitchMM = nil, nil, 0
			}
			r, err := recon.ResolveLive(context.Background(), head(rec, 3), r)
			if err != nil {
				t.Fatal(err)
			}
			lv, path := recordAndWatch(t, rec, r, 0, recipe.Recipe{})
			want := batchOf(t, path, r)
			if want.Report.Lines <= 1000 {
				t.Fatalf("only %d lines: the test needs more than the first thousand, which are measured before any is gridded", want.Report.Lines)
			}
			got := lv.Result()
			sameImage(t, got, want)
			sameRecentLines(t, got, want)
		})
	}
}

// sameRecentLines checks that the live result lists the batch build's
// last recon.LiveRecentLines lines (the trace strip's), each with the same
// number, aperture, times and cross-scan position, to float rounding, and
// its stroke unknown (-1).
func sameRecentLines(t *testing.T, got, want *recon.Result) {
	t.Helper()
	k := min(recon.LiveRecentLines, len(want.Lines))
	if len(got.Lines) != k {
		t.Fatalf("the live result lists %d lines, want the last %d", len(got.Lines), k)
	}
	for i, g := range got.Lines {
		w := want.Lines[len(want.Lines)-k+i]
		if g.Number != w.Number || g.Aperture != w.Aperture || g.Repaired != w.Repaired || g.Stroke != -1 {
			t.Fatalf("recent line %d: live number %d aperture %d repaired %v stroke %d, batch %d %d %v (stroke -1 while recording)",
				i, g.Number, g.Aperture, g.Repaired, g.Stroke, w.Number, w.Aperture, w.Repaired)
		}
		for _, v := range [][3]float64{{g.EdgeS, w.EdgeS, 1e-9}, {g.FieldStartS, w.FieldStartS, 1e-9}, {g.FieldEndS, w.FieldEndS, 1e-9},
			{g.BaselineStartS, w.BaselineStartS, 1e-9}, {g.BaselineEndS, w.BaselineEndS, 1e-9}, {g.YMM, w.YMM, 1e-6}} {
			if math.Abs(v[0]-v[1]) > v[2] {
				t.Fatalf("recent line %d (number %d): live %+v, batch %+v", i, g.Number, g, w)
			}
		}
	}
}

// strokesRig is the live rig's hand going there and back twice (four
// strokes of 3 s, a rest of 0.2 s at each turn) in 14 s.
func strokesRig() sampledata.Rig {
	rig := liveRig()
	rig.DurationS = 14
	rig.Motion.StartRestS, rig.Motion.StrokeS, rig.Motion.StrokeCount, rig.Motion.TurnRestS = 1, 3, 4, 0.2
	return rig
}

// resolvedStrokes is rig's recipe with rows.strokes mode, resolved from
// the first 3 s of rec.
func resolvedStrokes(t *testing.T, rig sampledata.Rig, rec *capture.Recording, mode string) recipe.Recipe {
	t.Helper()
	r := rig.Recipe()
	r.Rows.Strokes = mode
	r, err := recon.ResolveLive(context.Background(), head(rec, 3), r)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// TestLiveStrokes: with rows.strokes split the live build makes one
// frame per pass of the head, with first the first pass's, cut at the
// reversals the hysteresis resolved from the first seconds finds; after
// the last sample they equal the batch build of the saved WAV with the
// same recipe, frame by frame. The rig's hand goes there and back twice
// (four strokes, a rest at each turn) and steps back once in each
// stroke by more than the hysteresis (a reversal within the stroke, so
// more frames than strokes of the rig, as the batch build cuts them).
func TestLiveStrokes(t *testing.T) {
	rig := strokesRig()
	rig.Motion.BackStepCount, rig.Motion.BackStepMM = 1, 20
	rec := simulate(t, rig)
	for _, mode := range []string{"split", "first"} {
		t.Run(mode, func(t *testing.T) {
			r := resolvedStrokes(t, rig, rec, mode)
			lv, path := recordAndWatch(t, rec, r, 0, recipe.Recipe{})
			want := batchOf(t, path, r)
			if mode == "split" && (len(want.Frames) < 4 || want.Report.Strokes != len(want.Frames)) {
				t.Fatalf("the batch build cut %d strokes into %d frames; the rig's four strokes need at least four", want.Report.Strokes, len(want.Frames))
			}
			got := lv.Result()
			sameImage(t, got, want)
			if got.Report.Strokes != want.Report.Strokes {
				t.Errorf("live %d strokes, batch %d", got.Report.Strokes, want.Report.Strokes)
			}
			sameRecentLines(t, got, want)
		})
	}
}

// TestLiveRetune: a delay and aperture offsets changed half-way through
// re-grid what was recorded; the end equals a batch build with the new
// recipe.
func TestLiveRetune(t *testing.T) {
	rec := simulate(t, liveRig())
	r, err := recon.ResolveLive(context.Background(), head(rec, 3), sampledata.DemoRecipe())
	if err != nil {
		t.Fatal(err)
	}
	r2 := r.Clone()
	d := *r.Sweep.DelayDeg + 0.4
	r2.Sweep.DelayDeg = &d
	r2.Sweep.ApertureOffsetsDeg = []float64{}
	r2.Image.PitchMM *= 2
	lv, path := recordAndWatch(t, rec, r, int64(rec.Frames()/2), r2)
	if got := lv.Recipe(); *got.Sweep.DelayDeg != d {
		t.Fatalf("after the retune the live recipe's delay is %g°, want %g°", *got.Sweep.DelayDeg, d)
	}
	sameImage(t, lv.Result(), batchOf(t, path, r2))
}

// TestLiveShort: a recording shorter than the first thousand lines is
// all open when it ends, and still equals the batch build.
func TestLiveShort(t *testing.T) {
	rig := liveRig()
	rig.DurationS = 4
	rec := simulate(t, rig)
	r, err := recon.ResolveLive(context.Background(), head(rec, 3), sampledata.DemoRecipe())
	if err != nil {
		t.Fatal(err)
	}
	lv, path := recordAndWatch(t, rec, r, 0, recipe.Recipe{})
	sameImage(t, lv.Result(), batchOf(t, path, r))
}

// TestLiveRefuses: a recipe whose automatic values are not resolved yet
// is refused with an error naming the key; each source and law says what
// it needs, and rows.strokes split and first need the reversal hysteresis.
func TestLiveRefuses(t *testing.T) {
	rec := head(simulate(t, liveRig()), 1)
	r := sampledata.DemoRecipe()
	_, err := recon.NewLive(r, recon.LayoutOf(rec))
	if err == nil || !strings.Contains(err.Error(), "is automatic (null)") {
		t.Errorf("a recipe with an automatic delay: %v, want an error naming a null key", err)
	}
	// rows.strokes split and first are formed live once the first
	// seconds resolve the reversal hysteresis; not before.
	for _, mode := range []string{"split", "first"} {
		c := r.Clone()
		c.Rows.Strokes = mode
		got, err := recon.ResolveLive(context.Background(), head(simulate(t, liveRig()), 3), c)
		if err != nil {
			t.Fatalf("rows.strokes %s: %v", mode, err)
		}
		if h := got.Rows.StrokesHysteresisMM; h == nil || !(*h > 0) {
			t.Errorf("rows.strokes %s: resolved rows.strokes_hysteresis_mm %v, want a value above 0", mode, h)
		}
		if _, err := recon.NewLive(got, recon.LayoutOf(rec)); err != nil {
			t.Errorf("rows.strokes %s, resolved: %v", mode, err)
		}
		got.Rows.StrokesHysteresisMM = nil
		_, err = recon.NewLive(got, recon.LayoutOf(rec))
		if err == nil || !strings.Contains(err.Error(), "rows.strokes_hysteresis_mm is automatic") {
			t.Errorf("rows.strokes %s with a null hysteresis: %v, want an error naming rows.strokes_hysteresis_mm", mode, err)
		}
	}
	// Each source and law says what a live build needs of it: the key
	// left null, or why it cannot be used at all.
	resolved, err := recon.ResolveLive(context.Background(), head(simulate(t, liveRig()), 3), sampledata.DemoRecipe())
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		change func(*recipe.Recipe)
		want   string
	}{
		{func(r *recipe.Recipe) { r.Rows.Source = recipe.SourceTone; r.Rows.CarrierHz = nil }, "rows.carrier_hz is automatic"},
		{func(r *recipe.Recipe) {
			r.Rows.Source, r.Rows.SpeedMMS = recipe.SourceEven, nil
			r.Channels.Position = ""
		}, "rows.speed_mm_s is automatic"},
		{func(r *recipe.Recipe) {
			r.Rows.Source, r.Rows.MMPerStep = recipe.SourceSteps, recipe.Float(0.1)
			r.Channels.Steps, r.Channels.Position = r.Channels.Position, ""
		}, "rows.steps_threshold is automatic"},
		{func(r *recipe.Recipe) {
			r.Rows.Source, r.Rows.CarrierHz = recipe.SourceTone, recipe.Float(1500)
			r.Channels.Position = r.Channels.Index
		}, "rows.pulse_rest is automatic"},
		{func(r *recipe.Recipe) {
			r.Rows.Source, r.Rows.CarrierHz, r.Rows.PulseRest = recipe.SourceTone, recipe.Float(1500), recipe.Float(0)
			r.Channels.Position = r.Channels.Index
		}, "rows.pulse_away is automatic"},
		{func(r *recipe.Recipe) {
			r.Sweep.Law, r.Sweep.SinePeriodS, r.Signal.Baseline = recipe.LawSine, nil, "none"
			r.Sweep.ApertureOffsetsDeg = []float64{}
		}, "sweep.sine_period_s is automatic"},
	} {
		r := resolved.Clone()
		c.change(&r)
		_, err := recon.NewLive(r, recon.LayoutOf(rec))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("NewLive: %v, want an error saying %q", err, c.want)
		}
	}
}

// appendTo appends rec's frames from at up to seconds to lv, in blocks of
// 10 ms, and returns where it stopped.
func appendTo(t *testing.T, lv *recon.Live, rec *capture.Recording, at int, seconds float64) int {
	t.Helper()
	block := int(rec.SampleRateHz) / 100
	for end := int(seconds * rec.SampleRateHz); at < end; {
		k := min(block, end-at)
		x := make([]float32, 0, k*len(rec.Channels))
		for i := at; i < at+k; i++ {
			for _, c := range rec.Channels {
				x = append(x, c.Samples[i])
			}
		}
		if err := lv.Append(x); err != nil {
			t.Fatal(err)
		}
		at += k
	}
	return at
}

// TestLiveFirstLines: before the first thousand lines (and index pulses)
// fix the edge response and the repair, each Result works the lines out
// afresh but grids only what changed; at several points it equals the
// batch build of the samples so far (Session.Build of the same frames),
// also after a kept line turned out different and when the measured rise
// outgrew the samples left off the canvas.
// newTestLive simulates the live rig's capture and starts a Live on it
// with the recipe its first 3 s resolve.
func newTestLive(t *testing.T) (*capture.Recording, recipe.Recipe, *recon.Live) {
	t.Helper()
	rec := simulate(t, liveRig())
	r, err := recon.ResolveLive(context.Background(), head(rec, 3), sampledata.DemoRecipe())
	if err != nil {
		t.Fatal(err)
	}
	lv, err := recon.NewLive(r, recon.LayoutOf(rec))
	if err != nil {
		t.Fatal(err)
	}
	return rec, r, lv
}

func TestLiveFirstLines(t *testing.T) {
	rec, r, lv := newTestLive(t)
	recon.SetLiveZone(lv, 1) // any measured rise is longer
	at := 0
	feedTo := func(seconds float64) { at = appendTo(t, lv, rec, at, seconds) }
	for i, s := range []float64{2.5, 4, 5.5, 7} {
		feedTo(s)
		got := lv.Result()
		if i > 0 && recon.LiveKept(lv) == 0 {
			t.Fatalf("at %g s no line is kept", s)
		}
		want, err := recon.NewSession(head(rec, float64(at)/rec.SampleRateHz)).Build(context.Background(), r, nil)
		if err != nil {
			t.Fatal(err)
		}
		if want.Report.Lines >= 1000 {
			t.Fatalf("at %g s already %d lines: the test is about the first thousand", s, want.Report.Lines)
		}
		sameImage(t, got, want)
		if i == 1 {
			if z := recon.LiveZone(lv); z <= 1 {
				t.Errorf("the zone left off the canvas is still %d samples after a rise was measured", z)
			}
			recon.SpoilLiveKept(lv, recon.LiveKept(lv)/2)
		}
	}
}

// TestLiveWhileRecording: after the first thousand lines too, the image
// at any point of a recording is the batch build of the samples so far,
// each pass's frame with rows.strokes split as well (its reversals found
// so far, the lines at the newest one still open).
func TestLiveWhileRecording(t *testing.T) {
	rig := strokesRig()
	rec := simulate(t, rig)
	for _, mode := range []string{"merge", "split"} {
		t.Run(mode, func(t *testing.T) {
			r := resolvedStrokes(t, rig, rec, mode)
			lv, err := recon.NewLive(r, recon.LayoutOf(rec))
			if err != nil {
				t.Fatal(err)
			}
			at := 0
			for _, s := range []float64{9.3, 10.6, 12.25} {
				at = appendTo(t, lv, rec, at, s)
				lv.Result() // one before, so that the next follows another
				at = appendTo(t, lv, rec, at, s+0.05)
				want, err := recon.NewSession(head(rec, float64(at)/rec.SampleRateHz)).Build(context.Background(), r, nil)
				if err != nil {
					t.Fatal(err)
				}
				if want.Report.Lines <= 1000 {
					t.Fatalf("at %g s only %d lines: the test is about the lines after the first thousand", s, want.Report.Lines)
				}
				sameImage(t, lv.Result(), want)
			}
		})
	}
}

// TestLiveStereoSoundCard: the two-input sound card (the position tone on
// the index input, sampledata.StereoSoundCardRig) watched live. Its
// recipe, with the carrier and the pulses' levels resolved from the first
// seconds, builds live what the batch build of the saved WAV does; and the
// live image's dot centres land on the simulator's truth (the scene's
// closed form, the fit cross-checked with gonum in truthDotFit) as
// closely as the same rig's on three inputs, watched live too.
func TestLiveStereoSoundCard(t *testing.T) {
	type outcome struct{ rms, sx, sy float64 }
	watch := func(name string, rig sampledata.Rig) outcome {
		rig.Wheel.RevPerMin = 1200
		rig.DurationS = 11
		rig.Position.NonlinearityPct = 0 // the two-point calibration cannot know a bow
		rec, truth, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 7})
		if err != nil {
			t.Fatal(err)
		}
		r := rig.Recipe()
		r.Rows.CarrierHz = nil
		r, err = recon.ResolveLive(context.Background(), head(rec, 3), r)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		lv, path := recordAndWatch(t, rec, r, 0, recipe.Recipe{})
		want := batchOf(t, path, r)
		if want.Report.Lines <= 1000 {
			t.Fatalf("%s: only %d lines: the test needs more than the first thousand", name, want.Report.Lines)
		}
		got := lv.Result()
		sameImage(t, got, want)
		sameRecentLines(t, got, want)
		var o outcome
		o.rms, o.sx, o.sy, _ = recon.TruthDotFit(t, got.Frames[0], truth.Dots, truth.DotDiameterMM)
		t.Logf("%s: %d channels, %d lines, dots %.3f mm RMS from the truth, scale %.5f × %.5f", name, len(rec.Channels), got.Report.Lines, o.rms, o.sx, o.sy)
		return o
	}
	two := watch("two inputs", sampledata.StereoSoundCardRig())
	if t.Failed() {
		return
	}
	three := watch("three inputs", sampledata.SoundCardRig())
	if two.rms > three.rms*1.1+0.02 || two.rms > 0.5 {
		t.Errorf("dot centres %.3f mm RMS on two inputs, %.3f mm on three", two.rms, three.rms)
	}
	if math.Abs(two.sx-1) > 0.005 || math.Abs(two.sy-1) > 0.005 {
		t.Errorf("two inputs: scale x %.5f y %.5f, want 1 within 0.5 %%", two.sx, two.sy)
	}
}

// TestLiveStereoFirstSeconds: the two-input sound card's live result part
// way through equals the batch build of the samples so far (Session.Build
// of the same frames): before the notch's backward pass has any final
// sample, and later, with the last samples worked out with the end's
// extension as the batch build does.
func TestLiveStereoFirstSeconds(t *testing.T) {
	rig := sampledata.StereoSoundCardRig()
	rig.Wheel.RevPerMin, rig.DurationS = 1200, 7
	rec := simulate(t, rig)
	r, err := recon.ResolveLive(context.Background(), head(rec, 3), rig.Recipe())
	if err != nil {
		t.Fatal(err)
	}
	if r.Rows.PulseRest == nil || r.Rows.PulseAway == nil || !(*r.Rows.PulseAway > 0) {
		t.Fatalf("the resolved recipe has rows.pulse_rest %v and rows.pulse_away %v, want both", r.Rows.PulseRest, r.Rows.PulseAway)
	}
	lv, err := recon.NewLive(r, recon.LayoutOf(rec))
	if err != nil {
		t.Fatal(err)
	}
	at := 0
	for _, s := range []float64{0.015, 0.2, 0.6, 2.5, 6.97} {
		at = appendTo(t, lv, rec, at, s)
		got := lv.Result()
		want, err := recon.NewSession(head(rec, float64(at)/rec.SampleRateHz)).Build(context.Background(), r, nil)
		if err != nil {
			if got != nil {
				t.Errorf("at %g s the batch build fails (%v), the live one gives %d lines", s, err, got.Report.Lines)
			}
			continue
		}
		t.Logf("at %g s: %d lines", s, want.Report.Lines)
		sameImage(t, got, want)
	}
}

// TestLiveStoreMovesWhileRead: Append moves the growing store to new
// memory outside the Live's lock; with Results, Channels and a Retune
// taken from another goroutine all the while (run under -race too), every
// channel's store ends bit for bit the samples given, in order (the
// recording's own channels are the reference), and a slice Channels gave
// earlier still holds what it held.
func TestLiveStoreMovesWhileRead(t *testing.T) {
	rec, r, lv := newTestLive(t)
	r2 := r.Clone()
	d := *r.Sweep.DelayDeg + 0.2
	r2.Sweep.DelayDeg = &d
	stop, done := make(chan struct{}), make(chan error, 1)
	var early [][]float32
	go func() {
		retuned := false
		for {
			select {
			case <-stop:
				done <- nil
				return
			default:
			}
			lv.Result()
			ch := lv.Channels()
			if early == nil && len(ch[0]) > int(rec.SampleRateHz) {
				early = ch
			}
			if !retuned && lv.Samples() > int64(2*rec.SampleRateHz) {
				retuned = true
				if err := lv.Retune(context.Background(), r2); err != nil {
					done <- err
					return
				}
			}
		}
	}()
	appendTo(t, lv, rec, 0, rec.DurationS())
	close(stop)
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	got := lv.Channels()
	for c, ch := range rec.Channels {
		if len(got[c]) != len(ch.Samples) || !slices.Equal(got[c], ch.Samples) {
			t.Errorf("channel %d: the store holds %d samples, not the %d given", c, len(got[c]), len(ch.Samples))
		}
		if early != nil && !slices.Equal(early[c], ch.Samples[:len(early[c])]) {
			t.Errorf("channel %d: a slice taken early changed", c)
		}
	}
	if early == nil {
		t.Error("no Channels call saw a second of samples")
	}
}
