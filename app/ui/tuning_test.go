package ui

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"

	"spotloom/recon"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// viewState reads the view's zoom (units per mm) and centre (mm).
func viewState(v *ImageView) (zoom float32, cx, cy float64) {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	return v.zoom, v.centreX, v.centreY
}

// TestZoomKeptAcrossRebuild: a zoomed and panned view stays where the
// user put it when the delay changes, and a new pitch (a frame of another
// size) keeps the same millimetre point under the pointer. The check is on
// the view's own mm grid: the mm under a screen position must not move.
func TestZoomKeptAcrossRebuild(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	ws.view.ZoomBy(2)
	ws.view.Dragged(&fyne.DragEvent{Dragged: fyne.Delta{DX: 30, DY: -20}})
	z0, x0, y0 := viewState(ws.view)

	ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.3f", ws.result.Report.DelayDeg+0.5))
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatal(p)
	}
	if z, x, y := viewState(ws.view); z != z0 || x != x0 || y != y0 {
		t.Errorf("after a delay change the view is zoom %g centre (%g, %g), was %g (%g, %g)", z, x, y, z0, x0, y0)
	}

	at := fyne.NewPos(ws.view.Size().Width/3, ws.view.Size().Height/3)
	ws.view.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: at}})
	before, _ := ws.view.Hover()
	w0 := ws.result.Frames[0].Width
	ws.controls.number(ctlPitch).typed(fmt.Sprintf("%.3f", ws.result.Report.PitchMM*2))
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatal(p)
	}
	if ws.result.Frames[0].Width == w0 {
		t.Fatal("doubling the pitch kept the frame size")
	}
	after, _ := ws.view.Hover()
	if math.Abs(after.XMM-before.XMM) > 1e-9 || math.Abs(after.YMM-before.YMM) > 1e-9 {
		t.Errorf("under the pointer: (%g, %g) mm before the new pitch, (%g, %g) after", before.XMM, before.YMM, after.XMM, after.YMM)
	}
	// The value under the still pointer is read from the new frame.
	want := fmt.Sprintf("px %d,%d", after.Col, after.Row)
	if !strings.Contains(ws.readout.Text, want) {
		t.Errorf("read-out %q after the rebuild, want it to name %s", ws.readout.Text, want)
	}
}

func TestMessagesUseControlNames(t *testing.T) {
	got := windowWords("timing.threshold 5 is outside the index channel 1, which stays between -0.05 and 0.84: no pulses; set threshold to null to find it automatically")
	for _, bad := range []string{"timing.", "null"} {
		if strings.Contains(got, bad) {
			t.Errorf("%q still says %q", got, bad)
		}
	}
	if !strings.HasPrefix(got, "Index threshold 5") || !strings.Contains(got, "Find automatically") {
		t.Errorf("got %q", got)
	}
	if got := windowWords(`recipe key "sweep.field_deg" is 0: expected an angle above 0° and below 360°`); got != "Field of view is 0: expected an angle above 0° and below 360°" {
		t.Errorf("got %q", got)
	}
	// The same from the engine itself: an index threshold above the demo's
	// index signal, typed into the window.
	ws, _ := newTestWorkstation(t)
	ws.controls.number(ctlThreshold).typed("5")
	ws.Wait()
	msg := ws.Problem()
	if !strings.Contains(msg, "Index threshold") || strings.Contains(msg, "timing.") || strings.Contains(msg, "null") {
		t.Errorf("a threshold of 5 says %q, want the control's name and no recipe keys", msg)
	}
}

// TestDismissedErrorLeavesStatusLine: the status line names a problem
// while its message is up and not after it is closed.
func TestDismissedErrorLeavesStatusLine(t *testing.T) {
	ws, w := newTestWorkstation(t)
	before := ws.stage.Text
	ws.controls.number(ctlField).typed("100")
	ws.Wait()
	if ws.Problem() == "" || len(ws.dialogs) != 1 {
		t.Fatalf("a field of 100° (wider than the aperture spacing) was not refused with a message (%q)", ws.Problem())
	}
	if strings.Contains(ws.problem, "sweep.") {
		t.Errorf("the message speaks in recipe keys: %q", ws.problem)
	}
	if ws.stage.Text == before {
		t.Error("the status line does not name the problem")
	}
	ws.escape()
	if w.Canvas().Overlays().Top() != nil {
		t.Fatal("Esc did not close the message")
	}
	if ws.stage.Text != before {
		t.Errorf("after the message was closed the status line says %q, want %q", ws.stage.Text, before)
	}
}

// pressKey sends a key as the desktop driver does: to the focused widget
// when there is one, else to the canvas.
func pressKey(c fyne.Canvas, name fyne.KeyName) {
	ev := &fyne.KeyEvent{Name: name}
	if f := c.Focused(); f != nil {
		f.TypedKey(ev)
	} else if h := c.OnTypedKey(); h != nil {
		h(ev)
	}
}

// typeRune sends a rune as the desktop driver does.
func typeRune(c fyne.Canvas, r rune) {
	if f := c.Focused(); f != nil {
		f.TypedRune(r)
	} else if h := c.OnTypedRune(); h != nil {
		h(r)
	}
}

// TestArrowKeysNudgeTheFocusedControl: the delay moves by 0.01° a press,
// 0.1° with Shift; the field of view by a round fraction of its span.
func TestArrowKeysNudgeTheFocusedControl(t *testing.T) {
	ws, w := newTestWorkstation(t)
	c := w.Canvas()
	delay := ws.controls.number(ctlDelay)
	d0 := delay.value
	c.Focus(delay.slider)
	pressKey(c, fyne.KeyRight)
	ws.Wait()
	if got := *ws.result.Recipe.Sweep.DelayDeg; math.Abs(got-(math.Round(d0/0.01)*0.01+0.01)) > 1e-9 {
		t.Errorf("one press moved the delay from %.4f to %.4f, want the next 0.01°", d0, got)
	}
	d1 := *ws.result.Recipe.Sweep.DelayDeg
	defer func(f func() fyne.KeyModifier) { keyModifiers = f }(keyModifiers)
	keyModifiers = func() fyne.KeyModifier { return fyne.KeyModifierShift }
	pressKey(c, fyne.KeyLeft)
	ws.Wait()
	if got := *ws.result.Recipe.Sweep.DelayDeg; math.Abs(got-(d1-0.1)) > 1e-9 {
		t.Errorf("Shift+Left moved the delay from %.4f to %.4f, want 0.1° less", d1, got)
	}
	keyModifiers = func() fyne.KeyModifier { return 0 }
	if len(ws.hist.undo) != 2 {
		t.Errorf("%d undo steps after two presses, want 2", len(ws.hist.undo))
	}

	field := ws.controls.number(ctlField)
	f0 := field.value
	ws.controls.groups.OpenAll() // a folded group's controls take no focus
	c.Focus(field.slider)
	if c.Focused() != field.slider {
		t.Fatal("the field slider did not take the focus")
	}
	pressKey(c, fyne.KeyDown)
	ws.Wait()
	// 1…120° over 200 rounds down to 0.5° (1-2-5 steps).
	if p := ws.Problem(); p != "" {
		t.Fatal(p)
	}
	if got := ws.cur.Recipe.Sweep.FieldDeg; math.Abs(got-(f0-0.5)) > 1e-9 {
		t.Errorf("Down moved the field from %g to %g, want 0.5° less", f0, got)
	}
}

// TestFineDragMovesATenth: with Ctrl held, a drag moves the value a tenth
// of what the same drag moves it without.
func TestFineDragMovesATenth(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	s := ws.controls.number(ctlDelay).slider
	defer func(f func() fyne.KeyModifier) { keyModifiers = f }(keyModifiers)
	keyModifiers = func() fyne.KeyModifier { return fyne.KeyModifierControl }
	v0 := s.Value
	usable := s.Size().Width - 2*theme.Size(theme.SizeNameInlineIcon)
	for i := 0; i < 6; i++ {
		s.Dragged(&fyne.DragEvent{Dragged: fyne.Delta{DX: 1}})
	}
	s.DragEnd()
	ws.Wait()
	want := 6 / float64(usable) * (s.Max - s.Min) / fineDragDivisor
	if got := s.Value - v0; math.Abs(got-want) > s.Step {
		t.Errorf("a fine 6-unit drag moved the delay %.4f°, want %.4f°", got, want)
	}
	if len(ws.hist.undo) != 1 {
		t.Errorf("one drag made %d undo steps, want 1", len(ws.hist.undo))
	}
}

// TestShortcutsWorkWithAListFocused: after a list or a slider was used,
// +, −, 0, the arrows and Esc still do what the window says they do.
func TestShortcutsWorkWithAListFocused(t *testing.T) {
	ws, w := newTestWorkstation(t)
	c := w.Canvas()
	ws.controls.groups.OpenAll()
	for _, f := range []fyne.Focusable{ws.controls.choice(ctlLaw), ws.controls.toggle(ctlShowNeg), ws.source.detector} {
		c.Focus(f)
		if c.Focused() != f {
			t.Fatalf("%T did not take the focus", f)
		}
		z0 := ws.view.Zoom()
		typeRune(c, '+')
		if z := ws.view.Zoom(); !(z > z0*1.2) {
			t.Errorf("%T focused: + left the zoom at %g (was %g)", f, z, z0)
		}
		typeRune(c, '-')
		typeRune(c, '0')
		line := ws.strip.Chosen()
		pressKey(c, fyne.KeyDown)
		if ws.strip.Chosen() != line+1 {
			t.Errorf("%T focused: Down did not step the trace strip's line (%d → %d)", f, line, ws.strip.Chosen())
		}
		ws.showProblem("test", "a message", "")
		pressKey(c, fyne.KeyEscape)
		if c.Overlays().Top() != nil {
			t.Errorf("%T focused: Esc did not close the message", f)
		}
	}
	// A focused slider keeps its arrows but hands on the zoom keys.
	c.Focus(ws.controls.number(ctlGamma).slider)
	z0 := ws.view.Zoom()
	typeRune(c, '+')
	if z := ws.view.Zoom(); !(z > z0*1.2) {
		t.Errorf("slider focused: + left the zoom at %g", z)
	}
}

// TestModifiedMarkAndAskBeforeLeaving: a change marks the title, undoing
// it clears the mark, and opening the demo asks before leaving tuning.
func TestModifiedMarkAndAskBeforeLeaving(t *testing.T) {
	ws, w := newTestWorkstation(t)
	if strings.Contains(w.Title(), "not saved") {
		t.Fatalf("freshly opened, the title says %q", w.Title())
	}
	ws.controls.number(ctlGamma).typed("1.5")
	if !strings.Contains(w.Title(), "not saved") {
		t.Errorf("after a change the title says %q", w.Title())
	}
	opened := false
	ws.askDiscard("open the built-in demo", func() { opened = true })
	if opened || w.Canvas().Overlays().Top() == nil {
		t.Fatal("leaving changed settings did not ask")
	}
	ws.escape()
	if opened {
		t.Error("declining still went on")
	}
	ws.Undo()
	if strings.Contains(w.Title(), "not saved") {
		t.Errorf("back at the opened settings the title says %q", w.Title())
	}
	ws.askDiscard("open the built-in demo", func() { opened = true })
	if !opened {
		t.Error("with nothing changed it asked")
	}
}

// TestRolesSwapInOneStep: giving the detector role the index channel
// moves the index role to the detector's old channel, in one undo step.
func TestRolesSwapInOneStep(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	det, idx, pos := ws.roleChannels(ws.cur.Recipe)
	steps := len(ws.hist.undo)
	ws.source.detector.SetSelected(ws.source.options[idx])
	ws.Wait()
	d, i, p := ws.roleChannels(ws.cur.Recipe)
	if d != idx || i != det || p != pos {
		t.Errorf("roles %d/%d/%d after the swap, want %d/%d/%d", d, i, p, idx, det, pos)
	}
	if len(ws.hist.undo) != steps+1 {
		t.Errorf("the swap took %d undo steps", len(ws.hist.undo)-steps)
	}
	if ws.source.index.Selected != ws.source.options[det] {
		t.Errorf("the index list shows %q", ws.source.index.Selected)
	}
	ws.source.position.SetSelected(noChannel)
	ws.Wait()
	if _, _, p := ws.roleChannels(ws.cur.Recipe); p != -1 && ws.Problem() == "" {
		t.Errorf("position role %d after choosing none", p)
	}
}

// TestEveryChoiceBuildsOrExplains picks every entry of every list of the
// window through the list itself; each either builds or shows a message,
// and the window keeps working.
func TestEveryChoiceBuildsOrExplains(t *testing.T) {
	ws, w := newTestWorkstation(t)
	for _, b := range ws.controls.ctls {
		if b.kind != kindChoice {
			continue
		}
		for _, name := range b.names {
			ws.problem = ""
			b.choice.SetSelected(name)
			ws.Wait()
			if ws.result == nil || len(ws.result.Frames) == 0 {
				t.Fatalf("%s: %s left no image", b.name, name)
			}
			if ws.Problem() != "" && w.Canvas().Overlays().Top() == nil {
				t.Errorf("%s: %s: a problem without a message", b.name, name)
			}
			for w.Canvas().Overlays().Top() != nil {
				ws.escape()
			}
			w.Canvas().Capture() // paint everything, the trace strip too
		}
	}
}

// TestNegativeDetectorRefitsTone: after the polarity is turned, the
// frame's values are negated, so a tone fitted to the old frame would
// show nothing; the window fits it anew. Checked against recon.AutoTone of
// the new frame.
func TestNegativeDetectorRefitsTone(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	ws.controls.toggle(ctlPolarity).SetChecked(true)
	ws.Wait()
	if want := recon.AutoTone(ws.view.Frame()); ws.cur.Tone != want {
		t.Errorf("tone %+v after turning the polarity, want the fit of the new frame %+v", ws.cur.Tone, want)
	}
}

// TestLongCalibrationIsACount: 100 000 calibration points are shown as a
// count, not typed into a text box.
func TestLongCalibrationIsACount(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	pts := make([][2]float64, 100000)
	for i := range pts {
		pts[i] = [2]float64{0.5 + 4*float64(i)/float64(len(pts)-1), 400 * float64(i) / float64(len(pts)-1)}
	}
	ws.controls.cal.show(pts, true)
	if !strings.Contains(ws.controls.cal.summary.Text, "100\u202f000 points") {
		t.Errorf("summary %q", ws.controls.cal.summary.Text)
	}
	if ws.controls.cal.text.Visible() || ws.controls.cal.text.Text != "" {
		t.Error("the long calibration went into the text box")
	}
	got, err := parsePairs(formatPairs(pts), "test")
	if err != nil || !samePairs(got, pts) {
		t.Errorf("pairs do not survive writing and reading back: %v", err)
	}
}

// TestSessionIsKeptAndOfferedBack: a change is written to the session
// file (through a synced temporary file, readable by the user alone), and
// the next window started on it offers it back and restores the settings
// and the view.
func TestSessionIsKeptAndOfferedBack(t *testing.T) {
	path := filepath.Join(t.TempDir(), "spotloom", "session.json")
	a := test.NewTempApp(t)
	w := a.NewWindow("Spotloom test")
	ws := New(a, w, Options{SessionFile: path})
	w.Resize(fyne.NewSize(1280, 800))
	ws.OpenDemo()
	ws.Wait()
	ws.controls.number(ctlDelay).typed("9.5")
	ws.Wait()
	ws.view.ZoomBy(2)
	cx, cy := centreMM(ws.view.Frame())
	ws.AddMeasurement(measure.Shape{Kind: measure.KindRegion, Rect: &measure.Rect{X0: cx - 10, Y0: cy - 10, X1: cx + 10, Y1: cy + 10}})
	drawn := measure.CloneList(ws.cur.Measurements)
	ws.saveSession()
	st, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if st.Mode().Perm()&0o077 != 0 {
		t.Errorf("the session file is %v, want it private", st.Mode().Perm())
	}
	place := ws.view.place()

	w2 := a.NewWindow("Spotloom test 2")
	ws2 := New(a, w2, Options{SessionFile: path})
	w2.Resize(fyne.NewSize(1280, 800))
	fresh := false
	ws2.Start(func() { fresh = true })
	if fresh || w2.Canvas().Overlays().Top() == nil {
		t.Fatal("unsaved tuning in the session was not offered back")
	}
	ws2.resume = nil
	s, r, ok, err := loadSession(path)
	if err != nil || !ok {
		t.Fatalf("session: ok %v, %v", ok, err)
	}
	ws2.resume = &s
	ws2.OpenDemoWithRecipe(&r)
	ws2.Wait()
	if d := ws2.cur.Recipe.Sweep.DelayDeg; d == nil || *d != 9.5 {
		t.Errorf("resumed delay %v, want 9.5", d)
	}
	if got := ws2.view.place(); got != place {
		t.Errorf("resumed view %+v, want %+v", got, place)
	}
	if !ws2.Modified() {
		t.Error("resumed tuning is not marked as unsaved")
	}
	if !measure.SameList(ws2.cur.Measurements, drawn) || len(ws2.measures.taken) != 1 || ws2.measures.taken[0].Err != nil {
		t.Errorf("resumed measurements %+v (%+v), want %+v", ws2.cur.Measurements, ws2.measures.taken, drawn)
	}
}

// TestSourcePanelAsksThroughItsActions: the source panel works alone, with
// actions of the test's own in place of a window; choosing the index
// channel for the detector asks for one edit, which swaps the two roles
// of the recipe given to it (the demo's channels: 0 detector, 1 index,
// 2 position, by sampledata's own channel order).
func TestSourcePanelAsksThroughItsActions(t *testing.T) {
	test.NewTempApp(t)
	rec, err := sampledata.Demo()
	if err != nil {
		t.Fatal(err)
	}
	var edits []string
	r := sampledata.DemoRecipe()
	opened := ""
	p := newSourcePanel(sourceActions{
		edit: func(name string, f func(*recipe.Recipe)) {
			edits = append(edits, name)
			f(&r)
		},
		openRecent: func(path string) { opened = path },
		choose:     func() {}, rawLayout: func() {}, load: func() {}, save: func() {},
	}, []string{"/data/a.wav"})
	p.showCapture(rec, "", "")
	p.showRoles(r)
	if p.detector.Selected != p.options[0] || p.index.Selected != p.options[1] {
		t.Fatalf("roles shown %q / %q, want channels 0 and 1", p.detector.Selected, p.index.Selected)
	}
	p.detector.SetSelected(p.options[1])
	if len(edits) != 1 || edits[0] != "channel roles" {
		t.Fatalf("the panel asked for edits %q, want one of the channel roles", edits)
	}
	if d, i, pos := roleChannels(rec, r); d != 1 || i != 0 || pos != 2 {
		t.Errorf("roles %d/%d/%d after the edit, want 1/0/2", d, i, pos)
	}
	p.recent.SetSelected("/data/a.wav")
	if opened != "/data/a.wav" {
		t.Errorf("choosing a recent capture opened %q", opened)
	}
}
