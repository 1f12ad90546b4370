package ui

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/internal/faultydisk"
	"spotloom/recon"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// liveRig is a short scan: the head starts moving at once, so the first
// seconds find every automatic value.
func liveRig() sampledata.Rig {
	rig := sampledata.DemoRig()
	rig.SampleRateHz, rig.DurationS = 48000, 5
	rig.Motion.StartRestS, rig.Motion.StrokeS, rig.Motion.TravelMM, rig.Motion.PauseCount = 0.3, 4.4, 300, 0
	return rig
}

// liveCapture simulates the scan and writes it as a WAV (int16, which the
// rig's 16-bit ADC fills exactly) with the rig's recipe.
func liveCapture(t *testing.T) (*capture.Recording, string, recipe.Recipe) {
	t.Helper()
	return rigCapture(t, liveRig())
}

// rigCapture is liveCapture of rig.
func rigCapture(t *testing.T, rig sampledata.Rig) (*capture.Recording, string, recipe.Recipe) {
	t.Helper()
	rec, _, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "scan.wav")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := capture.WriteWAV(f, rec, "int16"); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	back, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return back, path, rig.Recipe()
}

// newLiveWorkstation is a headless window whose only "sound card" replays
// rec at speed times real time.
func newLiveWorkstation(t testing.TB, rec *capture.Recording, speed float64) *Workstation {
	t.Helper()
	a := test.NewTempApp(t)
	w := a.NewWindow("Spotloom live test")
	ws := New(a, w, Options{
		Devices: func() ([]live.DeviceInfo, error) {
			return []live.DeviceInfo{{Name: "bench replay", Default: true}}, nil
		},
		OpenDevice: func(name string, want live.Format) (live.Source, error) {
			if name != "bench replay" {
				return nil, errors.New("no such device " + name)
			}
			return live.NewReplay(rec, speed)
		},
	})
	w.Resize(fyne.NewSize(1280, 800))
	return ws
}

// endOfLive waits until the live view has ended and what it captured has
// been opened as a capture, and returns the live run.
func endOfLive(t *testing.T, ws *Workstation) *liveRun {
	t.Helper()
	var run *liveRun
	deadline := time.Now().Add(60 * time.Second)
	for run == nil && time.Now().Before(deadline) {
		uiDo(func() { run = ws.lv.run })
		if run == nil {
			time.Sleep(10 * time.Millisecond)
		}
	}
	if run == nil {
		t.Fatalf("no live view started: %s", ws.Problem())
	}
	select {
	case <-run.ended:
	case <-time.After(60 * time.Second):
		t.Fatal("the live view did not end")
	}
	ws.Wait()
	return run
}

// sameFrames checks two builds pixel by pixel: the same size, placement
// and coverage, and values equal to float rounding (1e-5 of the frame's
// range).
func sameFrames(t *testing.T, what string, got, want *recon.Frame) {
	t.Helper()
	if got.Width != want.Width || got.Height != want.Height || got.OriginXMM != want.OriginXMM || got.OriginYMM != want.OriginYMM || got.PitchXMM != want.PitchXMM {
		t.Fatalf("%s: %dx%d at (%g, %g) mm, pitch %g; want %dx%d at (%g, %g), pitch %g", what,
			got.Width, got.Height, got.OriginXMM, got.OriginYMM, got.PitchXMM, want.Width, want.Height, want.OriginXMM, want.OriginYMM, want.PitchXMM)
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range want.Pix {
		lo, hi = min(lo, float64(v)), max(hi, float64(v))
	}
	tol := 1e-5 * (hi - lo)
	bad, worst := 0, 0.0
	for row := 0; row < want.Height; row++ {
		for col := 0; col < want.Width; col++ {
			a, okA := got.At(col, row)
			b, okB := want.At(col, row)
			d := math.Abs(float64(a) - float64(b))
			if okA != okB || (okA && d > tol) {
				bad++
			}
			if okA && okB {
				worst = max(worst, d)
			}
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d of %d pixels differ (largest difference %.3g, tolerance %.3g)", what, bad, want.Width*want.Height, worst, tol)
	}
}

// keptAsSource checks that every frame of the file kept is the source's
// frame at its place (int16 keeps the rig's 16-bit ADC values exactly:
// WAVE PCM, 16-bit two's complement), but those the sidecar lists as
// overruns (a loaded machine), which are zeros.
func keptAsSource(t *testing.T, kept, src *capture.Recording, side *live.Sidecar) {
	t.Helper()
	lost := make([]bool, kept.Frames())
	for _, o := range side.Overruns {
		for i := o.AtFrame; i < min(o.AtFrame+o.Frames, int64(len(lost))); i++ {
			lost[i] = true
		}
	}
	for c := range kept.Channels {
		for i, v := range kept.Channels[c].Samples {
			want := src.Channels[c].Samples[i]
			if lost[i] {
				want = 0
			}
			if v != want {
				t.Fatalf("channel %d frame %d: file %v, source %v", c, i, v, want)
			}
		}
	}
}

// openAndRecord opens the capture at srcPath with r in a window whose
// "sound card" replays src at five times real time, records it with
// Record… as name (.wav is added) and waits for the end: the window, the
// live run and the file written.
func openAndRecord(t *testing.T, src *capture.Recording, srcPath string, r recipe.Recipe, name string) (*Workstation, *liveRun, string) {
	t.Helper()
	ws := newLiveWorkstation(t, src, 5)
	ws.OpenFile(srcPath, &r)
	ws.Wait()
	if ws.result == nil {
		t.Fatalf("the capture did not open: %s", ws.Problem())
	}
	out := filepath.Join(t.TempDir(), name+".wav")
	uiDo(func() {
		form := ws.showRecordForm([]live.DeviceInfo{{Name: "bench replay", Default: true}}, nil)
		form.folder.SetText(filepath.Dir(out))
		form.name.SetText(name)
		form.record()
	})
	return ws, endOfLive(t, ws), out
}

// Record… with a replay as the device: the WAV holds every sample of the
// source (the rig's 16-bit ADC values, which int16 keeps exactly: WAVE
// PCM, 16-bit two's complement), the live image after the last sample is
// the batch build of that file with the same recipe, and the file is then
// the window's ordinary capture, which rebuilds with new settings.
func TestRecordLiveEqualsBatchBuildAndOpensTheFile(t *testing.T) {
	src, srcPath, r := liveCapture(t)
	ws, run, out := openAndRecord(t, src, srcPath, r, "take")
	if run.final == nil || len(run.final.Frames) != 1 {
		t.Fatalf("no live image at the end: %+v", run.noImage)
	}

	kept, err := capture.Open(out, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if kept.Frames() != src.Frames() || len(kept.Channels) != len(src.Channels) || kept.SampleRateHz != src.SampleRateHz {
		t.Fatalf("the file holds %d frames of %d channels at %g Hz; the source %d of %d at %g", kept.Frames(), len(kept.Channels), kept.SampleRateHz, src.Frames(), len(src.Channels), src.SampleRateHz)
	}
	side, err := live.ReadSidecar(live.SidecarPath(out))
	if err != nil {
		t.Fatal(err)
	}
	keptAsSource(t, kept, src, side)
	batch, err := recon.NewSession(kept).Build(context.Background(), run.final.Recipe, nil)
	if err != nil {
		t.Fatal(err)
	}
	sameFrames(t, "live image against the batch build of the file", run.final.Frames[0], batch.Frames[0])

	var path string
	var engine Engine
	uiDo(func() { path, engine = ws.sourcePath, ws.engine })
	if path != out || ws.Live() {
		t.Fatalf("after the end the window shows %q (live: %v), want the recording %s", path, ws.Live(), out)
	}
	if _, isLive := engine.(liveEngine); isLive {
		t.Fatal("the recording is still on the live engine after the end")
	}
	sameFrames(t, "the opened recording against the batch build", ws.result.Frames[0], batch.Frames[0])
	// The "device" came to its end without Stop: the window says so.
	stopped := ws.Problem()
	if !strings.HasPrefix(stopped, "The capture device stopped") {
		t.Errorf("a device that ends by itself: problem %q, want it said", stopped)
	}

	// An ordinary capture now: a new delay rebuilds it.
	before := ws.result.Frames[0]
	uiDo(func() {
		ws.change("delay", func(rr *recipe.Recipe) { d := *ws.result.Recipe.Sweep.DelayDeg + 1.5; rr.Sweep.DelayDeg = &d })
	})
	ws.Wait()
	if ws.result.Frames[0] == before || ws.Problem() != stopped {
		t.Errorf("the recording did not rebuild with a new delay: %s", ws.Problem())
	}
}

// A control changed while the image forms re-grids what was captured so
// far, and the capture goes on into the new settings: the image at the end
// is the batch build with the new value.
func TestLiveControlsActOnTheFormingImage(t *testing.T) {
	src, srcPath, r := liveCapture(t)
	ws := newLiveWorkstation(t, src, 2)
	ws.Replay(srcPath, capture.Options{}, &r, 2)
	ws.Wait()
	// Wait for the first live image, then move the delay.
	deadline := time.Now().Add(30 * time.Second)
	var res *Result
	for res == nil && time.Now().Before(deadline) {
		uiDo(func() { res = ws.result })
		time.Sleep(20 * time.Millisecond)
	}
	if res == nil {
		t.Fatal("no live image formed")
	}
	delay := *res.Recipe.Sweep.DelayDeg + 2
	uiDo(func() {
		ws.change("delay", func(rr *recipe.Recipe) { rr.Sweep.DelayDeg = &delay })
	})
	run := endOfLive(t, ws)
	if run.final == nil {
		t.Fatal("no live image at the end")
	}
	if got := *run.final.Recipe.Sweep.DelayDeg; got != delay {
		t.Fatalf("the live image ended with delay %g°, want the %g° set while it formed", got, delay)
	}
	batch, err := recon.NewSession(src).Build(context.Background(), run.final.Recipe, nil)
	if err != nil {
		t.Fatal(err)
	}
	sameFrames(t, "live image after a retune against the batch build", run.final.Frames[0], batch.Frames[0])
	if ws.sourcePath != srcPath {
		t.Errorf("after the replay the window shows %q, want the file replayed", ws.sourcePath)
	}
}

// Stop ends a recording part-way: what was captured until then is the
// file, and the window opens it.
func TestStopEndsTheRecordingAndOpensIt(t *testing.T) {
	ws, out := recordOverCapture(t, "part.wav")
	time.Sleep(1200 * time.Millisecond)
	uiDo(ws.StopLive)
	endOfLive(t, ws)
	kept, err := capture.Open(out, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if secs := kept.DurationS(); secs < 0.5 || secs > 4 {
		t.Errorf("stopped after about 1.2 s of a 5 s replay, the file holds %.2f s", secs)
	}
	if ws.sourcePath != out || ws.rec.Frames() != kept.Frames() {
		t.Errorf("the window shows %q with %d frames, want %s with %d", ws.sourcePath, ws.rec.Frames(), out, kept.Frames())
	}
}

// A recording never replaces a file: a name that exists, or whose sidecar
// exists, is refused before anything starts, and the file is untouched.
func TestRecordRefusesAnExistingFile(t *testing.T) {
	src, _, _ := liveCapture(t)
	ws := newLiveWorkstation(t, src, 25)
	dir := t.TempDir()
	for _, existingFile := range []string{"old.wav", "side.recording.json"} {
		p := filepath.Join(dir, existingFile)
		if err := os.WriteFile(p, []byte("keep me"), 0o644); err != nil {
			t.Fatal(err)
		}
		name := strings.TrimSuffix(existingFile, ".recording.json")
		uiDo(func() {
			form := ws.showRecordForm([]live.DeviceInfo{{Name: "bench replay"}}, nil)
			form.folder.SetText(dir)
			form.name.SetText(name)
			form.record()
		})
		time.Sleep(50 * time.Millisecond)
		var problem string
		var running bool
		uiDo(func() { problem, running = ws.Problem(), ws.Live() })
		if !strings.Contains(problem, "already exists") || running {
			t.Errorf("%s: problem %q, live %v; want a refusal", existingFile, problem, running)
		}
		if data, _ := os.ReadFile(p); string(data) != "keep me" {
			t.Errorf("%s was changed", existingFile)
		}
	}
}

// Without a sound server, or without a device, Record… says so and what
// to do, in one message.
func TestRecordWithoutSoundSystem(t *testing.T) {
	for _, tc := range []struct {
		devices []live.DeviceInfo
		err     error
		want    string
	}{
		{nil, errors.New("no sound system: connection refused"), "Cannot list the capture devices: no sound system: connection refused"},
		{nil, nil, "No capture device"},
	} {
		a := test.NewTempApp(t)
		ws := New(a, a.NewWindow("t"), Options{Devices: func() ([]live.DeviceInfo, error) { return tc.devices, tc.err }})
		uiDo(ws.ShowRecord)
		deadline := time.Now().Add(5 * time.Second)
		p := ""
		for p == "" && time.Now().Before(deadline) {
			time.Sleep(10 * time.Millisecond)
			uiDo(func() { p = ws.Problem() })
		}
		if !strings.HasPrefix(p, tc.want) {
			t.Errorf("problem %q, want %q", p, tc.want)
		}
	}
}

// waitLive waits (at most 30 s) until ok holds of the window, on the UI
// goroutine, while a live view runs.
func waitLive(t *testing.T, ws *Workstation, what string, ok func() bool) {
	t.Helper()
	deadline := time.Now().Add(30 * time.Second)
	for time.Now().Before(deadline) {
		done := false
		uiDo(func() { done = ok() })
		if done {
			return
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("%s: not seen within 30 s (%s)", what, ws.Problem())
}

// While the image forms, the trace strip shows the newest line the live
// build lists, its lanes scaled to each channel's range so far (the
// recording's own minimum and maximum, computed here from the samples
// shown), and its caption counts the lines so far; at the end it shows
// the ordinary capture's lines.
func TestTraceStripFollowsTheLiveImage(t *testing.T) {
	src, srcPath, r := liveCapture(t)
	ws := newLiveWorkstation(t, src, 2)
	ws.Replay(srcPath, capture.Options{}, &r, 2)
	ws.Wait()
	var checked bool
	waitLive(t, ws, "a live image with lines in the trace strip", func() bool {
		if !ws.Live() || ws.result == nil || len(ws.result.Lines) < recon.LiveRecentLines || ws.strip.Chosen() < 0 {
			return false
		}
		res, v := ws.result, ws.strip.view()
		newest := res.Lines[len(res.Lines)-1]
		if v.chosen != len(res.Lines)-1 || v.lines[v.chosen].Number != newest.Number {
			return false // the strip is updated once a second: wait for it
		}
		if v.rec != ws.rec {
			t.Errorf("the strip shows another capture than the window's")
		}
		if from, to := v.from, v.to; !(from <= newest.EdgeS && newest.FieldEndS <= to) {
			t.Errorf("the strip shows %.4f–%.4f s, not the newest line (edge %.4f s, field ends %.4f s)", from, to, newest.EdgeS, newest.FieldEndS)
		}
		for i, lane := range v.lanes {
			want := channelRange(v.rec, lane.channel)
			if math.Abs(v.ranges[i][0]-want[0]) > 1e-7 || math.Abs(v.ranges[i][1]-want[1]) > 1e-7 {
				t.Errorf("lane %s: range %v, the capture so far spans %v", lane.name, v.ranges[i], want)
			}
		}
		if want := fmt.Sprintf("Line %d of %d so far", newest.Number, res.Report.Lines); !strings.HasPrefix(v.caption, want) {
			t.Errorf("caption %q, want it to start %q", v.caption, want)
		}
		checked = true
		return true
	})
	if !checked {
		t.Fatal("the strip was not checked")
	}
	endOfLive(t, ws)
	var lines, shown int
	uiDo(func() { lines, shown = len(ws.result.Lines), len(ws.strip.view().lines) })
	if lines <= recon.LiveRecentLines || shown != lines {
		t.Errorf("after the end the strip has %d lines, the capture's build %d", shown, lines)
	}
}

// One frame per pass of the head (rows.strokes split) forms live, the
// reversal hysteresis found in the first seconds: the live image at the
// end has the frames of the batch build of the file with its recipe, and
// the capture then opened shows them.
func TestLiveStrokesSplitFormsLive(t *testing.T) {
	rig := liveRig()
	rig.Motion.StrokeS, rig.Motion.StrokeCount, rig.Motion.TurnRestS = 2.2, 2, 0.1
	src, srcPath, r := rigCapture(t, rig)
	r.Rows.Strokes = "split"
	ws := newLiveWorkstation(t, src, 4)
	ws.Replay(srcPath, capture.Options{}, &r, 4)
	ws.Wait()
	run := endOfLive(t, ws)
	if run.final == nil {
		t.Fatalf("no live image at the end: %q (%s)", run.noImage, ws.Problem())
	}
	live := run.final
	if h := live.Recipe.Rows.StrokesHysteresisMM; live.Recipe.Rows.Strokes != "split" || h == nil {
		t.Fatalf("the live recipe has rows.strokes %q, hysteresis %v; want split with the hysteresis resolved", live.Recipe.Rows.Strokes, h)
	}
	batch, err := recon.NewSession(src).Build(context.Background(), live.Recipe, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(batch.Frames) < 2 || len(live.Frames) != len(batch.Frames) || len(ws.result.Frames) != len(batch.Frames) {
		t.Fatalf("live %d frames, the capture opened at the end %d, the batch build %d; want the same, at least the rig's two strokes",
			len(live.Frames), len(ws.result.Frames), len(batch.Frames))
	}
	for i := range batch.Frames {
		sameFrames(t, fmt.Sprintf("live frame %d against the batch build", i), live.Frames[i], batch.Frames[i])
	}
}

// A disk that fills up during a recording (writes fail with ENOSPC, as
// write(2) says on a full disk) stops it with a message saying so and how
// much is kept; what was written is a readable WAV holding exactly the
// source's first frames, its sidecar says why it stopped, and the window
// opens it as an ordinary capture.
func TestRecordStopsOnAFullDiskAndKeepsWhatWasWritten(t *testing.T) {
	src, srcPath, r := liveCapture(t)
	const room = 3.0 // seconds of the capture the disk holds, about
	a := test.NewTempApp(t)
	w := a.NewWindow("Spotloom full disk test")
	ws := New(a, w, Options{
		OpenDevice: func(string, live.Format) (live.Source, error) { return live.NewReplay(src, 4) },
		CreateWAV:  faultydisk.Full(int64(room * src.SampleRateHz * 2 * float64(len(src.Channels)))),
	})
	w.Resize(fyne.NewSize(1280, 800))
	ws.OpenFile(srcPath, &r)
	ws.Wait()
	out := filepath.Join(t.TempDir(), "full.wav")
	uiDo(func() {
		dev, _ := ws.openDeviceFunc()("bench replay", live.Format{})
		ws.RecordFrom(dev, out, "int16")
	})
	endOfLive(t, ws)
	var problem, shown string
	uiDo(func() { problem, shown = ws.Problem(), ws.sourcePath })
	if !strings.HasPrefix(problem, "The recording stopped") || !strings.Contains(problem, "the disk is full") || !strings.Contains(problem, "are in the file") {
		t.Errorf("problem %q, want the full disk said and what is kept", problem)
	}
	kept, err := capture.Open(out, capture.Options{})
	if err != nil {
		t.Fatalf("what was written does not read back: %v", err)
	}
	if secs := kept.DurationS(); secs < room-0.1 || secs > room {
		t.Errorf("the file holds %.3f s; the disk had room for about %.1f s", secs, room)
	}
	side, err := live.ReadSidecar(live.SidecarPath(out))
	if err != nil {
		t.Fatal(err)
	}
	if side.Frames != int64(kept.Frames()) || !strings.Contains(side.Stopped, "no space") {
		t.Errorf("sidecar: %d frames, stopped %q; the file holds %d", side.Frames, side.Stopped, kept.Frames())
	}
	keptAsSource(t, kept, src, side)
	if shown != out || ws.result == nil || ws.rec.Frames() != kept.Frames() {
		t.Errorf("the window shows %q (built: %v), want the %d frames of %s as a capture", shown, ws.result != nil, kept.Frames(), out)
	}
}

// replayToFirstImage replays the live test capture at speed times its
// rate in a headless window and waits for the first live image.
func replayToFirstImage(t *testing.T, speed float64) (*capture.Recording, *Workstation, *liveRun) {
	t.Helper()
	src, srcPath, r := liveCapture(t)
	ws := newLiveWorkstation(t, src, speed)
	ws.Replay(srcPath, capture.Options{}, &r, speed)
	ws.Wait()
	var run *liveRun
	waitLive(t, ws, "a live image", func() bool { run = ws.lv.run; return ws.Live() && ws.result != nil })
	return src, ws, run
}

// A tone set while the image forms acts on the live image at once and is
// kept at every later update (the live view fits the tone to each new
// image only until the user sets it), and after the capture is opened.
func TestLiveToneSetByTheUserActsAndIsKept(t *testing.T) {
	_, ws, run := replayToFirstImage(t, 2)
	var frames int
	uiDo(func() {
		ws.edit(ctlGamma, func(s *settings) bool { s.Tone.Gamma = 2.5; return true })
		frames = ws.result.Report.Lines
	})
	check := func(when string) {
		uiDo(func() {
			if ws.cur.Tone.Gamma != 2.5 || ws.view.tone.Gamma != 2.5 {
				t.Errorf("%s: the window's gamma %g, the image's %g; want the 2.5 set", when, ws.cur.Tone.Gamma, ws.view.tone.Gamma)
			}
		})
	}
	check("at once")
	waitLive(t, ws, "later live images", func() bool { return !ws.Live() || ws.result.Report.Lines > frames+200 })
	check("while the image forms")
	select {
	case <-run.ended:
	case <-time.After(60 * time.Second):
		t.Fatal("the live view did not end")
	}
	ws.Wait()
	check("once the capture is opened")
}

// A disk that stalls for a moment during a recording loses the frames the
// ring buffer cannot hold meanwhile: they are counted and shown in the
// live bar and the end's summary, listed in the sidecar, and written as
// zeros at their place, so the file keeps the source's length and every
// other frame where it was (a gap marked, not closed up).
func TestRecordOverrunIsShownAndMarked(t *testing.T) {
	src, srcPath, r := liveCapture(t)
	frame := int64(2 * len(src.Channels)) // int16
	a := test.NewTempApp(t)
	w := a.NewWindow("Spotloom overrun test")
	ws := New(a, w, Options{
		OpenDevice: func(string, live.Format) (live.Source, error) { return live.NewReplay(src, 4) },
		// At 4× real time the 2 s ring fills in half a second: a 1.5 s
		// stall a second in loses about a second of frames.
		CreateWAV: faultydisk.Stalling(int64(src.SampleRateHz)*frame, 1500*time.Millisecond),
	})
	w.Resize(fyne.NewSize(1280, 800))
	ws.OpenFile(srcPath, &r)
	ws.Wait()
	out := filepath.Join(t.TempDir(), "stall.wav")
	uiDo(func() {
		dev, _ := ws.openDeviceFunc()("bench replay", live.Format{})
		ws.RecordFrom(dev, out, "int16")
	})
	endOfLive(t, ws)
	side, err := live.ReadSidecar(live.SidecarPath(out))
	if err != nil {
		t.Fatal(err)
	}
	if len(side.Overruns) == 0 || side.OverrunFrames < int64(src.SampleRateHz)/4 {
		t.Fatalf("sidecar overruns %+v (%d frames); a 1.5 s stall at 4× should lose about a second", side.Overruns, side.OverrunFrames)
	}
	kept, err := capture.Open(out, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if kept.Frames() != src.Frames() {
		t.Fatalf("the file holds %d frames, the source %d: the gap was closed up", kept.Frames(), src.Frames())
	}
	keptAsSource(t, kept, src, side)
	var bar, stage string
	uiDo(func() { bar, stage = ws.lv.bar.overruns.Text, ws.settled })
	if want := fmt.Sprintf("overruns %d (%d frames marked as zeros)", len(side.Overruns), side.OverrunFrames); bar != want {
		t.Errorf("live bar %q, want %q", bar, want)
	}
	if want := fmt.Sprintf("%d overruns", len(side.Overruns)); !strings.Contains(stage, want) {
		t.Errorf("the end's summary %q does not say %q", stage, want)
	}
}

// The window keeps one copy of the samples while the image forms: the
// capture it shows is the live engine's own store (the same memory; when
// the engine's store grows into new memory, the next update shows that),
// holds the source's samples, and stays so after a control re-grids what
// was captured.
func TestLiveWindowSharesTheEngineSamples(t *testing.T) {
	src, ws, run := replayToFirstImage(t, 1)
	check := func(when string, mustBeLive bool) {
		t.Helper()
		var shown *capture.Recording
		waitLive(t, ws, when+": the capture shown in the engine's store", func() bool {
			if !ws.Live() {
				return true
			}
			shown = ws.rec
			run.mu.Lock()
			engine := run.builder.Channels()
			run.mu.Unlock()
			for c, ch := range shown.Channels {
				if n := len(ch.Samples); n == 0 || n > len(engine[c]) || &ch.Samples[0] != &engine[c][0] {
					return false
				}
			}
			return true
		})
		if shown == nil {
			if mustBeLive {
				t.Fatalf("%s: the replay ended before the check", when)
			}
			return // the replay ended first
		}
		// The replay hands the file's samples on unchanged.
		for c, ch := range shown.Channels {
			for i, v := range ch.Samples {
				if v != src.Channels[c].Samples[i] {
					t.Fatalf("%s: channel %d sample %d is %v, the file's %v", when, c, i, v, src.Channels[c].Samples[i])
				}
			}
		}
	}
	check("while the image forms", true)
	uiDo(func() {
		ws.change("delay", func(rr *recipe.Recipe) { d := *ws.result.Recipe.Sweep.DelayDeg + 1; rr.Sweep.DelayDeg = &d })
	})
	ws.Wait()
	check("after a re-grid", false)
	endOfLive(t, ws)
}

// Record… from a two-input sound card (the position tone on the index
// input): the image forms live, with the pulses' levels resolved from the
// first seconds, and after the last sample it is the batch build of the
// file kept with the same recipe.
func TestRecordTwoInputCardLive(t *testing.T) {
	rig := sampledata.StereoSoundCardRig()
	rig.SampleRateHz, rig.DurationS = 48000, 5
	rig.Motion.StartRestS, rig.Motion.StrokeS, rig.Motion.PauseCount = 0.3, 4.4, 0
	src, srcPath, r := rigCapture(t, rig)
	ws, run, out := openAndRecord(t, src, srcPath, r, "stereo-take")
	run.mu.Lock()
	formed := run.builder != nil
	run.mu.Unlock()
	if !formed {
		t.Fatalf("the two-input card was not built live: %q", run.noImage)
	}
	if run.final == nil || len(run.final.Frames) != 1 {
		t.Fatalf("no live image at the end: %+v (%s)", run.noImage, ws.Problem())
	}
	if run.final.Recipe.Rows.PulseRest == nil || run.final.Recipe.Channels.Position != run.final.Recipe.Channels.Index {
		t.Fatalf("the live recipe does not share the index channel with resolved pulse levels: %+v %+v", run.final.Recipe.Channels, run.final.Recipe.Rows)
	}
	kept, err := capture.Open(out, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	batch, err := recon.NewSession(kept).Build(context.Background(), run.final.Recipe, nil)
	if err != nil {
		t.Fatal(err)
	}
	sameFrames(t, "two-input live image against the batch build of the file", run.final.Frames[0], batch.Frames[0])
}
