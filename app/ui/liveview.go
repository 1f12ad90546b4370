package ui

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"time"

	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// liveTextRate is how often a second a live view brings its texts (the
// facts, the line count) up to date between the full updates: often enough
// to read them change, seldom enough that laying out new text (each one is
// shaped and measured again, by any Fyne driver) costs little. The image
// and the meters follow at liveRate.
const liveTextRate = 2

// setLabel sets l's text when it differs: setting a label lays its text
// out again even when it is the same.
func setLabel(l *widget.Label, text string) {
	if l.Text != text {
		l.SetText(text)
	}
}

// liveState is the window's side of a live view; it belongs to the UI
// goroutine.
type liveState struct {
	bar         *liveBar
	run         *liveRun // nil when no live view runs
	toneFollows bool     // the tone is fitted to each new image until the user sets it
	autoTone    recon.Tone
	fullAt      time.Time    // when every panel was last brought up to date
	textAt      time.Time    // when the texts (facts, stage) were last brought up to date
	ranges      [][2]float64 // each channel's range so far, for the trace strip
	lines       int          // lines so far
}

// laneRanges is the range so far of the channels of the trace strip's
// lanes ([0, 1] for none, as channelRange gives).
func (lv *liveState) laneRanges(ch ...int) [3][2]float64 {
	var out [3][2]float64
	for i, c := range ch[:3] {
		out[i] = [2]float64{0, 1}
		if c >= 0 && c < len(lv.ranges) && lv.ranges[c][1] >= lv.ranges[c][0] {
			out[i] = lv.ranges[c]
		}
	}
	return out
}

// rangeOf is channel c's range so far while a live view runs (the
// minimum and maximum channelRange would find), ok false otherwise.
func (lv *liveState) rangeOf(c int) (span [2]float64, ok bool) {
	if lv.run == nil || c < 0 || c >= len(lv.ranges) || lv.ranges[c][1] < lv.ranges[c][0] {
		return span, false
	}
	return lv.ranges[c], true
}

// Live reports whether a live view (a recording or a replay) is running.
func (ws *Workstation) Live() bool { return ws.lv.run != nil }

// beginLive shows run in the window and starts it: the controls act on
// its image, the bar shows its levels, and Stop (or the end of a replay)
// makes what was captured an ordinary capture.
func (ws *Workstation) beginLive(run *liveRun, what string) {
	ws.dropLive()
	ws.lv.run = run
	ws.lv.toneFollows = true
	ws.rec = snapshotRecording(run.rec)
	ws.engine = liveEngine{r: run}
	ws.sourcePath, ws.sourceName = "", what
	ws.hist = newHistory()
	ws.cur = settings{Recipe: cloneRecipe(run.start)}
	ws.good, ws.clean = ws.cur.clone(), ws.cur.clone()
	ws.result, ws.frameIndex, ws.place = nil, 0, &viewPlace{}
	ws.source.showCapture(ws.rec, run.path, fmt.Sprintf("found from the first %.0f s of the capture (more if that is too little), then kept while the image forms", liveResolveS))
	ws.lv.bar.start(what, run.format.Channels)
	ws.settled = what
	ws.stage.SetText(what + ": waiting for the first lines")
	ws.render()
	run.run()
}

// StopLive ends the live view: a recording stops (everything captured is
// in its file) and a replay stops where it is; then what was captured is
// opened as an ordinary capture.
func (ws *Workstation) StopLive() {
	if ws.lv.run != nil {
		ws.stage.SetText("Stopping " + ws.lv.run.name)
		ws.lv.run.stop()
	}
}

// dropLive ends a live view that another capture replaces: it stops, its
// file stays complete, and nothing is opened from it.
func (ws *Workstation) dropLive() {
	if r := ws.lv.run; r != nil {
		r.dropped.Store(true)
		r.stop()
		ws.lv.run = nil
		ws.lv.bar.hide()
	}
}

// closeLive stops a live view before the window closes and waits (a
// moment at most) until its file is closed with its sidecar.
func (ws *Workstation) closeLive() {
	r := ws.lv.run
	ws.dropLive()
	if r != nil {
		select {
		case <-r.captured:
		case <-time.After(3 * time.Second):
		}
	}
}

// showLive puts an update of run into the window. The image and the
// facts change at every update; the panels that rescan the capture or
// redraw many widgets (the controls, the trace strip, the measurements)
// once a second, and at once when the settings or the frame changed.
func (ws *Workstation) showLive(run *liveRun, rec *capture.Recording, res *Result, st liveStatus) {
	if ws.lv.run != run {
		return // stopped, or replaced by another capture
	}
	ws.lv.bar.show(st)
	ws.lv.ranges = st.ranges
	if res != nil {
		ws.lv.lines = res.Report.Lines
	}
	if res == nil || len(res.Frames) == 0 {
		if st.done {
			ws.finishLive(run, st)
		}
		return
	}
	first := ws.result == nil
	if ws.lv.toneFollows && !first && ws.cur.Tone != ws.lv.autoTone {
		ws.lv.toneFollows = false // the user set the tone
	}
	full := first || st.done || st.moved || time.Since(ws.lv.fullAt) >= time.Second ||
		len(res.Frames) != len(ws.result.Frames) || !sameRecipe(res.Recipe, ws.result.Recipe)
	if ws.lv.toneFollows && !first && full {
		// Fitted at the full updates only: a fit sorts the whole frame,
		// and between them the image keeps its tone, so only the pixels
		// that changed are toned again.
		t := recon.AutoTone(res.Frames[0])
		t.Invert = ws.cur.Tone.Invert
		ws.cur.Tone, ws.good.Tone = t, t
	}
	texts := full || time.Since(ws.lv.textAt) >= time.Second/liveTextRate
	if texts {
		ws.lv.textAt = time.Now()
	}
	if full {
		ws.rec, ws.lv.fullAt = rec, time.Now()
		ws.applyResult(res, first)
	} else {
		ws.result, ws.liveUpdate, ws.liveFacts = res, true, texts
		ws.frameIndex = min(ws.frameIndex, len(res.Frames)-1)
		ws.render()
	}
	ws.lv.autoTone = ws.cur.Tone
	if first {
		ws.good = ws.cur.clone()
	}
	if texts && !ws.work.busy() {
		setLabel(ws.stage, fmt.Sprintf("%s: %d lines", ws.settled, res.Report.Lines))
	}
	if !st.arrived.IsZero() {
		lat := time.Since(st.arrived)
		run.latMax, run.latSum, run.latN = max(run.latMax, lat), run.latSum+lat, run.latN+1
	}
	if st.done {
		ws.finishLive(run, st)
	}
}

// finishLive turns what a live view captured into an ordinary capture:
// the file recorded (read back from disk) or the file replayed, built with
// the settings the live image was made with, so the image stays as it was.
func (ws *Workstation) finishLive(run *liveRun, st liveStatus) {
	ws.lv.run = nil
	defer close(run.ended)
	if run.dropped.Load() {
		return
	}
	secs := float64(st.frames) / float64(st.rateHz)
	what := fmt.Sprintf("Replayed %s (%.1f s)", run.name, secs)
	if run.out != "" {
		what = fmt.Sprintf("Recorded %s: %.1f s, %d overruns", run.name, secs, st.overruns)
	}
	if run.recErr != nil {
		title := "The recording stopped"
		try := "what was captured before it stopped is kept in the file and opened now."
		if !run.recorded {
			title, try = "Cannot record", "choose another file name or folder, or another device, and press Record… again."
		}
		ws.showProblem(title, windowWords(run.recErr.Error())+".", try)
	} else if run.out != "" && !run.stopping.Load() {
		ws.showProblem("The capture device stopped", run.src.Name()+" stopped delivering samples (unplugged, or taken by the sound system) after "+clock(secs)+".",
			"what it delivered until then is kept in "+run.name+" and opened now; check the device and press Record… again.")
	}
	if run.out != "" && !run.recorded {
		ws.lv.bar.hide()
		return // nothing of ours to open
	}
	if run.final == nil {
		// No image was formed live: open it as any capture is opened.
		ws.lv.bar.hide()
		ws.OpenFile(run.path, nil)
		return
	}
	ws.reopenLive(run, what)
}

// reopenLive opens run's capture with the live image's settings, keeping
// the tone, the view and the undo history of the live view.
func (ws *Workstation) reopenLive(run *liveRun, what string) {
	r := cloneRecipe(run.final.Recipe)
	tone, hist, place, tuned := ws.cur.Tone, ws.hist, ws.view.place(), ws.hist.canUndo()
	open, newEngine := ws.openFunc(), ws.engineFunc()
	ws.busy(what + "; opening it as a capture")
	submit(ws.work, false, func(ctx context.Context, progress progressFunc) (*opened, error) {
		rec := run.replayed
		if rec == nil {
			var err error
			if rec, err = open(run.path, capture.Options{}); err != nil {
				return nil, err
			}
		}
		eng := newEngine(rec)
		res, err := eng.Build(ctx, r, progress)
		if err != nil {
			return nil, &buildFailed{path: run.path, err: err}
		}
		return &opened{rec: rec, engine: eng, recipe: r, result: res, path: run.path, name: run.name,
			note: "the settings the live image was made with (automatic values as found from its first seconds)"}, nil
	}, func(o *opened, err error, _ bool) {
		ws.lv.bar.hide()
		if err != nil {
			ws.openFailed(run.path, err)
			return
		}
		ws.finishOpen(o)
		ws.cur.Tone, ws.good.Tone = tone, tone
		ws.place = &place
		ws.hist = hist
		if tuned {
			ws.clean = settings{} // tuned while live: not saved anywhere yet
		} else {
			ws.clean = ws.cur.clone()
		}
		ws.settled = what + "; now an ordinary capture"
		ws.stage.SetText(ws.settled)
		ws.render()
	})
}

// RecordFrom starts a live recording of src into the new WAV file out
// (sampleType "int16", "int24" or "float32"), with the rig settings of the
// capture shown and the automatic values found anew.
func (ws *Workstation) RecordFrom(src live.Source, out, sampleType string) {
	run := ws.newLiveRun(src, out, sampleType, ws.liveStartRecipe(src.Format()))
	ws.beginLive(run, "Recording "+filepath.Base(out))
}

// liveStartRecipe is the settings a recording starts from: those of the
// capture shown, with what belongs to one capture (delay, threshold,
// offsets) found anew and the channel roles by number; the defaults when
// nothing is shown.
func (ws *Workstation) liveStartRecipe(f live.Format) recipe.Recipe {
	if ws.result == nil {
		return recipe.Default()
	}
	r := forNewCapture(ws.cur.Recipe)
	det, idx, pos := ws.roleChannels(ws.cur.Recipe)
	byNumber := func(ref *recipe.ChannelRef, n int) {
		if n >= 0 && n < f.Channels {
			*ref = recipe.ChannelRef(fmt.Sprint(n))
		}
	}
	byNumber(&r.Channels.Detector, det)
	byNumber(&r.Channels.Index, idx)
	if r.Channels.Position.IsSet() {
		byNumber(&r.Channels.Position, pos)
	} else if r.Channels.Steps.IsSet() {
		byNumber(&r.Channels.Steps, pos)
	}
	return r
}

// replayPlan is what a replay needs, read off the UI goroutine.
type replayPlan struct {
	rec    *capture.Recording
	src    *live.Replay
	recipe recipe.Recipe
}

// Replay plays the capture at path (the built-in demo when path is "") at
// speed times its real rate through the live path, so the window shows
// its image forming as if it were being recorded; at the end it is an
// ordinary capture. The settings are given (r), else those saved beside
// the capture, else a first look at it.
func (ws *Workstation) Replay(path string, copts capture.Options, r *recipe.Recipe, speed float64) {
	open, newEngine := ws.openFunc(), ws.engineFunc()
	var given *recipe.Recipe
	if r != nil {
		c := cloneRecipe(*r)
		given = &c
	}
	name := filepath.Base(path)
	if path == "" {
		name = "the built-in demo"
	}
	ws.busy("Opening " + name + " to replay it")
	submit(ws.work, false, func(ctx context.Context, progress progressFunc) (*replayPlan, error) {
		rec, start, err := replayCapture(ctx, path, copts, given, open, newEngine, progress)
		if err != nil {
			return nil, err
		}
		src, err := live.NewReplay(rec, speed)
		if err != nil {
			return nil, err
		}
		return &replayPlan{rec: rec, src: src, recipe: start}, nil
	}, func(p *replayPlan, err error, _ bool) {
		if err != nil {
			ws.openFailed(path, err)
			return
		}
		run := ws.newLiveRun(p.src, "", "", p.recipe)
		run.replayed, run.path, run.name = p.rec, path, name
		ws.beginLive(run, "Replaying "+name)
	})
}

// replayCapture reads the capture to replay and chooses its settings.
func replayCapture(ctx context.Context, path string, copts capture.Options, given *recipe.Recipe, open OpenFunc, newEngine EngineFunc, progress progressFunc) (*capture.Recording, recipe.Recipe, error) {
	if path == "" {
		progress("making the demo capture", 0)
		rec, err := sampledata.Demo()
		if given != nil {
			return rec, *given, err
		}
		return rec, sampledata.DemoRecipe(), err
	}
	copts.Progress = func(f float64) { progress("reading "+filepath.Base(path), f) }
	rec, err := open(path, copts)
	if err != nil {
		return nil, recipe.Recipe{}, err
	}
	if given != nil {
		return rec, *given, nil
	}
	if r, err := recipe.Load(export.SidecarPath(path)); err == nil {
		return rec, r, nil
	}
	look, err := newEngine(rec).FirstLook(ctx, recipe.Default(), recon.Known{}, progress)
	if err != nil {
		if errors.Is(err, context.Canceled) {
			return nil, recipe.Recipe{}, err
		}
		return nil, recipe.Recipe{}, &buildFailed{path: path, err: fmt.Errorf("with a first look at the capture: %w", err)}
	}
	return rec, look.Settings, nil
}
