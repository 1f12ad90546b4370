package ui

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// opened is what an open job hands back: a capture with its engine and
// the first build.
type opened struct {
	rec    *capture.Recording
	engine Engine
	recipe recipe.Recipe
	result *Result
	path   string
	name   string
	note   string // how the recipe was chosen
	// measurements are those of the sidecar the recipe came from.
	measurements []measure.Shape
}

func (ws *Workstation) openFunc() OpenFunc {
	if ws.opts.Open != nil {
		return ws.opts.Open
	}
	return capture.Open
}

func (ws *Workstation) engineFunc() EngineFunc {
	if ws.opts.NewEngine != nil {
		return ws.opts.NewEngine
	}
	return NewSessionEngine
}

// OpenDemo shows the built-in demo capture with its recipe.
func (ws *Workstation) OpenDemo() { ws.OpenDemoWithRecipe(nil) }

// OpenDemoWithRecipe shows the built-in demo built with r (the demo's own
// recipe when r is nil).
func (ws *Workstation) OpenDemoWithRecipe(given *recipe.Recipe) {
	newEngine := ws.engineFunc()
	var givenCopy *recipe.Recipe
	if given != nil {
		c := cloneRecipe(*given)
		givenCopy = &c
	}
	ws.submitOpen("Opening the built-in demo", func(ctx context.Context, progress func(string, float64)) (*opened, error) {
		progress("making the demo capture", 0)
		rec, err := sampledata.Demo()
		if err != nil {
			return nil, fmt.Errorf("the built-in demo could not be made: %w", err)
		}
		eng := newEngine(rec)
		r := sampledata.DemoRecipe()
		if givenCopy != nil {
			r = *givenCopy
		}
		res, err := eng.Build(ctx, r, progress)
		if err != nil {
			return nil, fmt.Errorf("the built-in demo could not be built: %w", err)
		}
		return &opened{rec: rec, engine: eng, recipe: r, result: res, name: "built-in demo"}, nil
	}, "")
}

// OpenFile opens the capture at path. With r nil it uses, in this order, a
// recipe saved beside the capture (NAME.recipe.json), the current recipe
// with the channel roles guessed from the capture, or the default recipe
// with guessed roles; the first that builds wins.
func (ws *Workstation) OpenFile(path string, r *recipe.Recipe) {
	ws.openWith(path, capture.Options{}, r)
}

// OpenFileWith is OpenFile reading the capture with copts: a sample rate
// for a CSV without a time column, or a raw layout.
func (ws *Workstation) OpenFileWith(path string, copts capture.Options, r *recipe.Recipe) {
	ws.openWith(path, copts, r)
}

func (ws *Workstation) openWith(path string, copts capture.Options, given *recipe.Recipe) {
	open, newEngine := ws.openFunc(), ws.engineFunc()
	current := cloneRecipe(ws.cur.Recipe)
	// The settings of another capture of the same rig are a good start;
	// those of the built-in demo are not (its rig is not the user's).
	haveCurrent := ws.result != nil && ws.sourcePath != ""
	currentName := ws.sourceName
	var givenCopy *recipe.Recipe
	if given != nil {
		c := cloneRecipe(*given)
		givenCopy = &c
	}
	ws.submitOpen("Opening "+filepath.Base(path), func(ctx context.Context, progress func(string, float64)) (*opened, error) {
		copts.Progress = func(f float64) { progress("reading "+filepath.Base(path), f) }
		rec, err := open(path, copts)
		if err != nil {
			return nil, err
		}
		eng := newEngine(rec)
		var tries []recipeTry
		if givenCopy != nil {
			tries = append(tries, recipeTry{recipe: *givenCopy, note: "the recipe given"})
		} else {
			side := strings.TrimSuffix(path, filepath.Ext(path)) + ".recipe.json"
			if sr, err := recipe.Load(side); err == nil {
				list, _ := measure.LoadList(side) // a sidecar's measurements come back with its recipe
				tries = append(tries, recipeTry{recipe: sr, measurements: list, note: "the recipe saved beside the capture (" + filepath.Base(side) + ")"})
			}
			if haveCurrent {
				// The rig is the one of the capture shown: keep its
				// settings, guess the channel roles anew.
				tries = append(tries, recipeTry{recipe: forNewCapture(current), known: recon.Known{"*": true, "channels": false}, look: true, note: "the rig settings of " + currentName + " with channel roles guessed from the capture (offsets, delay and threshold found anew)"})
			}
			// Nobody has described this capture: the same first look as
			// "spotloom recipe FILE".
			tries = append(tries, recipeTry{recipe: recipe.Default(), known: recon.Known{}, look: true, note: "a first look at the capture, from starting settings"})
		}
		var firstErr error
		for _, t := range tries {
			r, note := t.recipe, t.note
			var res *Result
			var notes []string
			var err error
			if t.look {
				var look *Look
				if look, err = eng.FirstLook(ctx, t.recipe, t.known, progress); err == nil {
					res, r, notes = look.Result, look.Settings, look.Notes
				}
			} else {
				res, err = eng.Build(ctx, t.recipe, progress)
			}
			if err == nil {
				if len(notes) > 0 {
					res.Report.Warnings = append(slices.Clone(notes), res.Report.Warnings...)
					note += "; " + strings.Join(notes, "; ")
				}
				return &opened{rec: rec, engine: eng, recipe: r, result: res, path: path, name: filepath.Base(path), note: note, measurements: t.measurements}, nil
			}
			if ctx.Err() != nil {
				return nil, ctx.Err()
			}
			if firstErr == nil {
				firstErr = fmt.Errorf("with %s: %w", t.note, err)
			}
		}
		return nil, &buildFailed{path: path, err: firstErr}
	}, path)
}

// forNewCapture keeps the rig's settings of r (wheel, field, distance,
// calibration, pitch) and sets back to automatic what belongs to one
// capture: the delay, the index threshold, the aperture offsets (aperture
// 0 is whichever comes first in each capture), the sine period, the
// carrier, the levels of pulses sharing the tone's input and the
// reversal hysteresis of the passes.
func forNewCapture(r recipe.Recipe) recipe.Recipe {
	r = cloneRecipe(r)
	r.Sweep.DelayDeg = nil
	r.Sweep.ApertureOffsetsDeg = nil // measured in every build
	r.Sweep.SinePeriodS = nil
	r.Timing.Threshold, r.Timing.Hysteresis = nil, nil
	r.Rows.CarrierHz = nil
	r.Rows.StepsThreshold, r.Rows.StepsHysteresis = nil, nil
	r.Rows.PulseRest, r.Rows.PulseAway = nil, nil
	r.Rows.StrokesHysteresisMM = nil
	return r
}

type recipeTry struct {
	recipe       recipe.Recipe
	measurements []measure.Shape
	note         string
	look         bool        // a first look: fit what known leaves open to the capture
	known        recon.Known // the keys a first look keeps
}

// buildFailed marks a capture that was read but would not build.
type buildFailed struct {
	path string
	err  error
}

func (e *buildFailed) Error() string { return e.err.Error() }
func (e *buildFailed) Unwrap() error { return e.err }

func (ws *Workstation) submitOpen(what string, run func(ctx context.Context, progress progressFunc) (*opened, error), path string) {
	ws.busy(what)
	submit(ws.work, false, run, func(o *opened, err error, _ bool) {
		if err != nil {
			ws.openFailed(path, err)
			return
		}
		ws.finishOpen(o)
	})
}

func (ws *Workstation) openFailed(path string, err error) {
	name := filepath.Base(path)
	if path == "" {
		name = "the built-in demo"
	}
	switch {
	case errors.Is(err, context.Canceled):
		ws.stage.SetText("Opening stopped; the previous capture is still shown")
	case path != "" && errors.Is(err, capture.ErrNoLayout):
		// The layout form itself says what happened and what to fill in.
		ws.problem = "Cannot read " + name + ": " + err.Error()
		ws.stage.SetText("Cannot read " + name + " without its layout")
		ws.askRawLayout(path)
	case path != "" && errors.Is(err, capture.ErrNoSampleRate):
		ws.problem = "Cannot read " + name + ": " + err.Error()
		ws.stage.SetText("Cannot read " + name + " without its sample rate")
		ws.askSampleRate(path)
	default:
		var bf *buildFailed
		if errors.As(err, &bf) {
			ws.showProblem("Cannot build "+name, "The capture was read, but no image could be formed from it "+err.Error()+".",
				"give a recipe that matches the rig (spotloom open FILE --recipe R.json, or Load recipe… after opening); `spotloom inspect FILE` lists the channels and the guessed roles."+ws.stillShown())
			return
		}
		ws.showProblem("Cannot open "+name, err.Error(),
			"make sure the file is a WAV, CSV or raw capture that is complete; `spotloom inspect FILE` shows what Spotloom sees in it."+ws.stillShown())
	}
}

func (ws *Workstation) stillShown() string {
	if ws.result == nil {
		return ""
	}
	return " The previous capture is still shown."
}

func (ws *Workstation) finishOpen(o *opened) {
	ws.dropLive()
	// A new capture is a new state: nothing of the last one's settings,
	// build or history is kept.
	ws.state = state{
		rec: o.rec, engine: o.engine, sourcePath: o.path, sourceName: o.name, hist: newHistory(),
		cur:   settings{Recipe: cloneRecipe(o.recipe), Measurements: measure.CloneList(o.measurements)},
		place: &viewPlace{},
	}
	resume := ws.resume
	ws.resume = nil
	ws.source.showCapture(o.rec, o.path, o.note)
	ws.applyResult(o.result, true)
	ws.good = ws.cur.clone()
	ws.clean = ws.cur.clone()
	if resume != nil {
		// The tuning came back from the last session: its tone and view
		// too, and it is still not saved.
		ws.cur.Tone, ws.good.Tone = resume.Tone, resume.Tone
		ws.cur.Measurements = measure.CloneList(resume.Measurements)
		ws.clean = settings{}
		ws.place = &resume.View
	}
	ws.render()
	if o.path != "" {
		ws.addRecent(o.path)
	}
	ws.settled = "Opened " + o.name
	if resume != nil {
		ws.settled = "Resumed the last session on " + o.name
	}
	ws.stage.SetText(ws.settled)
	ws.saveSession()
}

// rebuild asks for a build of the current settings; a newer call cancels
// a build still running.
func (ws *Workstation) rebuild(reason string) {
	if ws.engine == nil {
		return
	}
	eng := ws.engine
	r := cloneRecipe(ws.cur.Recipe)
	started := time.Now()
	ws.busy("Building")
	submit(ws.work, true, func(ctx context.Context, progress progressFunc) (*Result, error) {
		return eng.Build(ctx, r, progress)
	}, func(res *Result, err error, stale bool) {
		if eng != ws.engine || (stale && err != nil) {
			return // a different capture was opened, or a newer build is on its way
		}
		if stale {
			// Finished before the newer build cancelled it: show it while
			// the newer one runs, so a drag shows its way.
			ws.applyResult(res, false)
			ws.good = settings{Recipe: cloneRecipe(r), Tone: ws.cur.Tone}
			return
		}
		ws.finishBuild(r, res, err, reason, time.Since(started))
	})
}

func (ws *Workstation) finishBuild(r recipe.Recipe, res *Result, err error, reason string, elapsed time.Duration) {
	if err != nil {
		if errors.Is(err, context.Canceled) {
			ws.restoreGood()
			ws.stage.SetText("Build stopped; the settings of the image shown are restored")
			return
		}
		ws.restoreGood()
		what := reason
		if what == "" {
			what = "These settings"
		}
		msg := windowWords(err.Error())
		if len(ws.dialogs) > 0 {
			// A message is already up (say, while a slider is dragged on):
			// say it in the status line instead of stacking dialogs.
			ws.problem = "Cannot build with these settings: " + msg
			ws.stage.SetText(ws.problem)
			return
		}
		ws.showProblem("Cannot build with these settings", fmt.Sprintf("%s could not be used: %s.", what, msg),
			"change the value back or pick another one; the image and the settings it was made with are restored.")
		return
	}
	if res == nil {
		return
	}
	ws.applyResult(res, false)
	ws.good = settings{Recipe: cloneRecipe(r), Tone: ws.cur.Tone}
	ws.lastBuild = elapsed
	note := fmt.Sprintf("Built in %d ms", elapsed.Milliseconds())
	if ws.afterBuild != "" {
		note = ws.afterBuild + " · " + note
		ws.afterBuild = ""
	}
	ws.settled = note
	ws.stage.SetText(note)
}

// restoreGood puts back the settings the image shown was built with.
// The measurements stay: they need no build.
func (ws *Workstation) restoreGood() {
	good := ws.good.clone()
	good.Measurements = ws.cur.Measurements
	if last, ok := ws.hist.newest(); ok && sameSettings(last, good) {
		ws.hist.dropLast()
	}
	ws.cur = good
	ws.render()
}

// applyResult shows a finished build. first means a new capture: the tone
// is set automatically. A new detector polarity re-fits the tone too, since
// the old window and level lie on the other side of zero.
func (ws *Workstation) applyResult(res *Result, first bool) {
	ws.result = res
	if len(res.Frames) == 0 {
		ws.frameIndex = 0
	} else if ws.frameIndex >= len(res.Frames) {
		ws.frameIndex = len(res.Frames) - 1
	}
	frame := ws.shownFrame()
	refit := first || ws.controls.autoEachBuild() || res.Recipe.Signal.Invert != ws.tonedInvert
	if refit && frame != nil {
		shownInverted := ws.cur.Tone.Invert
		ws.cur.Tone = recon.AutoTone(frame)
		if !first {
			ws.cur.Tone.Invert = shownInverted
		}
		ws.good.Tone = ws.cur.Tone
	}
	ws.tonedInvert = res.Recipe.Signal.Invert
	ws.render()
}

// shownFrame is the frame of the build shown that the view shows, or nil.
func (ws *Workstation) shownFrame() *recon.Frame {
	if ws.result == nil || ws.frameIndex >= len(ws.result.Frames) {
		return nil
	}
	return ws.result.Frames[ws.frameIndex]
}

// renderBuild puts the build and the frame shown into the image, the
// trace strip, the facts and the measurements.
func (ws *Workstation) renderBuild(frame *recon.Frame) {
	res := ws.result
	ws.view.SetFrame(frame, ws.cur.Tone)
	ws.showZoom(ws.view.Zoom())
	if res != ws.drawn.result {
		det, idx, pos := ws.roleChannels(res.Recipe)
		if ws.lv.run != nil {
			ws.strip.SetLive(ws.rec, det, idx, pos, res.Lines, res.Report.Threshold, ws.lv.laneRanges(det, idx, pos), ws.lv.lines)
		} else {
			ws.strip.SetData(ws.rec, det, idx, pos, res.Lines, res.Report.Threshold)
		}
		ws.showLineNumber()
		ws.facts.show(res.Report, ws.rec)
	}
	ws.measures.show(frame)
	// The pointer has not moved but the frame under it has.
	if p, ok := ws.view.Hover(); ok {
		ws.pointerMoved(p)
	} else {
		ws.readout.SetText("")
	}
}

// shown is what the controls show now.
func (ws *Workstation) shown() shown {
	v := shown{s: ws.cur, res: ws.result, rec: ws.rec, frame: ws.view.Frame()}
	if v.frame != nil {
		// A scan of the whole frame: once per frame.
		if m := &ws.drawn.frameRange; m.frame != v.frame {
			m.frame = v.frame
			m.span[0], m.span[1] = coveredRange(v.frame)
		}
		v.frameRange = ws.drawn.frameRange.span
	}
	if _, idx, _ := ws.roleChannels(ws.result.Recipe); idx >= 0 && ws.rec != nil {
		// A scan of the whole channel: once per capture and channel; a
		// live capture has its range so far kept as it comes.
		if m := &ws.drawn.indexSpan; m.rec != ws.rec || m.ch != idx {
			span, ok := ws.lv.rangeOf(idx)
			if !ok {
				span = channelRange(ws.rec, idx)
			}
			*m = channelSpan{rec: ws.rec, ch: idx, span: span}
		}
		v.indexSpan = ws.drawn.indexSpan.span
	}
	return v
}

// render is the one step that puts the window's state into its panels:
// the build and frame shown (image, traces, facts, measurements) when they
// changed, the tone when it changed, and always the controls, the channel
// roles, the frame controls, undo and the title.
func (ws *Workstation) render() {
	if ws.place != nil && !(ws.place.Zoom > 0) {
		ws.view.Reset() // a new capture: the next frame fits
	}
	if ws.liveUpdate {
		ws.liveUpdate = false
		if ws.result != nil && ws.drawn.result != nil {
			ws.view.SetFrame(ws.shownFrame(), ws.cur.Tone)
			ws.drawn.tone = ws.cur.Tone
			if ws.liveFacts {
				ws.facts.show(ws.result.Report, ws.rec)
			}
			return
		}
	}
	if ws.result == nil {
		if ws.view.Frame() != nil {
			ws.view.SetFrame(nil, ws.cur.Tone)
		}
		ws.drawn.result = nil
	}
	if ws.result != nil {
		if frame := ws.shownFrame(); ws.result != ws.drawn.result || frame != ws.view.Frame() {
			ws.renderBuild(frame)
		} else if ws.cur.Tone != ws.drawn.tone {
			ws.view.SetTone(ws.cur.Tone)
		}
		// A live view's capture grows in a new snapshot at each full
		// update, with the channels it had: no new capture to lay out.
		newCapture := ws.rec != ws.drawn.rec && !(ws.lv.run != nil && sameChannels(ws.rec, ws.drawn.rec))
		ws.drawn.result, ws.drawn.tone, ws.drawn.rec = ws.result, ws.cur.Tone, ws.rec
		if ws.controls.show(ws.shown()) || newCapture {
			ws.relayout()
		}
		ws.source.showRoles(ws.cur.Recipe)
	}
	if ws.place != nil && ws.place.Zoom > 0 {
		ws.view.setPlace(*ws.place)
	}
	ws.place = nil
	ws.showFrameControls()
	ws.showMeasurements()
	ws.updateUndo()
	ws.setTitle()
}

// sameChannels reports whether captures a and b have the same rate and
// channels (names and units), whatever their samples.
func sameChannels(a, b *capture.Recording) bool {
	if a == nil || b == nil || a.SampleRateHz != b.SampleRateHz || len(a.Channels) != len(b.Channels) {
		return false
	}
	for i := range a.Channels {
		if a.Channels[i].Name != b.Channels[i].Name || a.Channels[i].Unit != b.Channels[i].Unit {
			return false
		}
	}
	return true
}

// roleChannels returns the channel numbers of the detector, index and
// position (or steps) roles of r in the capture shown; -1 for none.
func (ws *Workstation) roleChannels(r recipe.Recipe) (det, idx, pos int) {
	return roleChannels(ws.rec, r)
}

// roleChannels returns the channel numbers of the detector, index and
// position (or steps) roles of r in rec; -1 for none.
func roleChannels(rec *capture.Recording, r recipe.Recipe) (det, idx, pos int) {
	look := func(ref recipe.ChannelRef) int {
		if rec == nil || !ref.IsSet() {
			return -1
		}
		i, err := rec.Lookup(string(ref))
		if err != nil {
			return -1
		}
		return i
	}
	det, idx, pos = look(r.Channels.Detector), look(r.Channels.Index), look(r.Channels.Position)
	if pos < 0 {
		pos = look(r.Channels.Steps)
	}
	return det, idx, pos
}

// edit changes the settings as control says: a recipe change rebuilds, a
// tone change only redraws. f returns false to refuse the value (the
// controls then show the settings as they are).
func (ws *Workstation) edit(control string, f func(*settings) bool) {
	if ws.result == nil {
		return
	}
	before := ws.cur.clone()
	next := ws.cur.clone()
	if !f(&next) {
		ws.render()
		return
	}
	if next.Recipe.Sweep.Law == recipe.LawTable && len(next.Recipe.Sweep.Table) < 2 {
		ws.render() // the law list shows the law in use again
		ws.ShowTableEditor()
		return
	}
	if sameSettings(next, before) {
		return
	}
	ws.hist.record(control, before)
	ws.cur = next
	if sameRecipe(next.Recipe, before.Recipe) {
		ws.good.Tone = next.Tone
		ws.render()
	} else {
		ws.updateUndo()
		ws.setTitle()
		ws.rebuild("")
	}
	ws.sessionChanged()
}

// change edits the recipe from control and rebuilds.
func (ws *Workstation) change(control string, f func(r *recipe.Recipe)) {
	ws.edit(control, func(s *settings) bool { f(&s.Recipe); return true })
}

// gesture opens or closes the undo step of a drag of control.
func (ws *Workstation) gesture(control string, start bool) {
	if start {
		ws.hist.begin(control)
	} else {
		ws.hist.end()
		ws.sessionChanged()
	}
}

// AutoTone sets the tone from the histogram of the frame shown.
func (ws *Workstation) AutoTone() {
	f := ws.view.Frame()
	if f == nil {
		return
	}
	t := recon.AutoTone(f)
	t.Invert = ws.cur.Tone.Invert
	ws.edit("auto tone", func(s *settings) bool { s.Tone = t; return true })
}

// Undo restores the settings before the last change.
func (ws *Workstation) Undo() { ws.restore(ws.hist.back(ws.cur)) }

// Redo re-applies the last change undone.
func (ws *Workstation) Redo() { ws.restore(ws.hist.forward(ws.cur)) }

func (ws *Workstation) restore(s settings, ok bool) {
	if !ok || ws.result == nil {
		return
	}
	recipeChanged := !sameRecipe(s.Recipe, ws.cur.Recipe)
	ws.cur = s.clone()
	if recipeChanged {
		ws.rebuild("The restored settings")
	} else {
		ws.good.Tone = ws.cur.Tone
	}
	ws.render()
	ws.sessionChanged()
}

func (ws *Workstation) updateUndo() {
	set := func(b interface {
		Enable()
		Disable()
	}, on bool) {
		if on {
			b.Enable()
		} else {
			b.Disable()
		}
	}
	set(ws.undoButton, ws.hist.canUndo())
	set(ws.redoButton, ws.hist.canRedo())
	if ws.menuUndo != nil {
		ws.menuUndo.Disabled = !ws.hist.canUndo()
		ws.menuRedo.Disabled = !ws.hist.canRedo()
		ws.mainMenu.Refresh()
	}
}

// Cancel stops the running build or open; the image and settings stay.
func (ws *Workstation) Cancel() { ws.work.stop() }

// EstimateApertureOffsets sets the per-aperture offsets that line up
// neighbouring lines of the current image.
func (ws *Workstation) EstimateOffsets() {
	if ws.engine == nil || ws.result == nil {
		return
	}
	eng := ws.engine
	r := cloneRecipe(ws.cur.Recipe)
	ws.busy("Estimating aperture offsets")
	submit(ws.work, false, func(ctx context.Context, progress progressFunc) ([]float64, error) {
		progress("estimating aperture offsets", 0)
		return eng.EstimateApertureOffsets(ctx, r)
	}, func(offsets []float64, err error, _ bool) {
		if eng != ws.engine {
			return
		}
		if err != nil {
			if errors.Is(err, context.Canceled) {
				ws.stage.SetText("Estimate stopped")
				return
			}
			ws.showProblem("Cannot estimate aperture offsets", windowWords(err.Error())+".",
				"the estimate needs several lines of each aperture over a textured part of the scene; set the offsets by hand while watching the image.")
			return
		}
		ws.afterBuild = "Aperture offsets estimated: " + formatList(offsets, "%.2f°")
		ws.change("estimate offsets", func(r *recipe.Recipe) {
			r.Sweep.ApertureOffsetsDeg = append([]float64(nil), offsets...)
		})
		ws.stage.SetText(ws.afterBuild)
	})
}

func formatList(v []float64, format string) string {
	parts := make([]string, len(v))
	for i, x := range v {
		// "-0.00" reads as a sign that means nothing.
		parts[i] = strings.Replace(fmt.Sprintf(format, x), "-0.00", "0.00", 1)
		if parts[i] == "-0" {
			parts[i] = "0"
		}
	}
	return strings.Join(parts, ", ")
}

// progress reports are thinned to about 20 a second before they reach the
// UI goroutine.
var progressGate struct {
	sync.Mutex
	last time.Time
}

func (ws *Workstation) reportProgress(stage string, fraction float64) {
	progressGate.Lock()
	now := time.Now()
	// A stage's start and end too: a build of a few tens of ms would
	// otherwise hand a dozen status lines to the UI goroutine, none seen.
	if now.Sub(progressGate.last) < 50*time.Millisecond {
		progressGate.Unlock()
		return
	}
	progressGate.last = now
	progressGate.Unlock()
	uiDo(func() {
		if ws.work.busy() {
			ws.stage.SetText(stage)
			ws.progress.SetValue(fraction)
		}
	})
}

// busy shows that work has started: the progress bar, and Stop enabled.
func (ws *Workstation) busy(what string) {
	ws.stage.SetText(what)
	ws.progress.SetValue(0)
	ws.progressBox.Show()
	ws.showRunning(true)
}

// settled hides the progress and disables Stop once nothing is left to
// run; the worker calls it on the UI goroutine after the last outcome.
func (ws *Workstation) settledWork() {
	ws.progress.SetValue(1)
	ws.progressBox.Hide()
	ws.showRunning(false)
}

// showRunning enables the Cancel button and the Stop menu entry only while
// work runs.
func (ws *Workstation) showRunning(on bool) {
	if on {
		ws.cancel.Enable()
	} else {
		ws.cancel.Disable()
	}
	if ws.menuStop != nil && ws.menuStop.Disabled == on {
		ws.menuStop.Disabled = !on
		ws.mainMenu.Refresh()
	}
}

func (ws *Workstation) startIn(d *dialog.FileDialog, near string) {
	dir := ""
	if near != "" {
		dir = filepath.Dir(near)
	} else if wd, err := os.Getwd(); err == nil {
		dir = wd
	}
	if dir == "" {
		return
	}
	if l, err := storage.ListerForURI(storage.NewFileURI(dir)); err == nil {
		d.SetLocation(l)
	}
}

// ChooseRecipe asks for a recipe file and applies it.
func (ws *Workstation) ChooseRecipe() {
	d := dialog.NewFileOpen(func(rc fyne.URIReadCloser, err error) {
		if err != nil || rc == nil {
			return
		}
		path := rc.URI().Path()
		rc.Close()
		ws.LoadRecipe(path)
	}, ws.win)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".json"}))
	ws.startIn(d, ws.sourcePath)
	d.Resize(fyne.NewSize(820, 560))
	d.Show()
}

// applyRecipe replaces the recipe and rebuilds; if the build fails the
// settings go back to those of the image shown.
func (ws *Workstation) applyRecipe(r recipe.Recipe, reason string) {
	ws.applyRecipeWith(r, nil, reason)
}

// applyRecipeWith is applyRecipe that also replaces the measurements,
// unless nil, in the same undo step.
func (ws *Workstation) applyRecipeWith(r recipe.Recipe, measurements []measure.Shape, reason string) {
	if ws.result == nil {
		return
	}
	before := ws.cur.clone()
	ws.hist.record("", before)
	ws.cur.Recipe = cloneRecipe(r)
	if measurements != nil {
		ws.cur.Measurements = measure.CloneList(measurements)
	}
	ws.render()
	ws.rebuild(reason)
	ws.sessionChanged()
}

// recentKey is the preference that lists recently opened captures.
const recentKey = "recent_captures"

func (ws *Workstation) recent() []string {
	if ws.app == nil {
		return nil
	}
	return ws.app.Preferences().StringList(recentKey)
}

func (ws *Workstation) addRecent(path string) {
	if ws.app == nil {
		return
	}
	if abs, err := filepath.Abs(path); err == nil {
		path = abs
	}
	list := []string{path}
	for _, p := range ws.recent() {
		if p != path && len(list) < 8 {
			list = append(list, p)
		}
	}
	ws.app.Preferences().SetStringList(recentKey, list)
	ws.refreshRecentMenu()
	ws.source.showRecent(list)
}

func (ws *Workstation) refreshRecentMenu() {
	list := ws.recent()
	var items []*fyne.MenuItem
	for _, p := range list {
		p := p
		items = append(items, fyne.NewMenuItem(p, func() {
			ws.askDiscard("open "+filepath.Base(p), func() { ws.OpenFile(p, nil) })
		}))
	}
	if len(items) == 0 {
		none := fyne.NewMenuItem("(none yet)", nil)
		none.Disabled = true
		items = append(items, none)
	}
	ws.recentMenu.ChildMenu = fyne.NewMenu("", items...)
	if ws.mainMenu != nil {
		ws.mainMenu.Refresh()
	}
}
