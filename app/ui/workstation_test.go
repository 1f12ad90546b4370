package ui

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"github.com/go-audio/wav"
	"golang.org/x/image/tiff"
	"gonum.org/v1/gonum/stat"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// newTestWorkstation opens the demo in a headless window.
func newTestWorkstation(t testing.TB) (*Workstation, fyne.Window) {
	t.Helper()
	a := test.NewTempApp(t)
	a.Settings().SetTheme(Theme())
	w := a.NewWindow("Spotloom test")
	ws := New(a, w, Options{})
	w.Resize(fyne.NewSize(1280, 800))
	ws.OpenDemo()
	ws.Wait()
	if ws.result == nil || len(ws.result.Frames) == 0 {
		t.Fatalf("the demo did not build: %s", ws.Problem())
	}
	return ws, w
}

func framePixels(f *recon.Frame) []float32 { return append([]float32(nil), f.Pix...) }

// grey returns the luminance of the pixel at (x,y), 0..255.
func grey(img image.Image, x, y int) float64 {
	r, g, b, _ := img.At(x, y).RGBA()
	return (0.299*float64(r) + 0.587*float64(g) + 0.114*float64(b)) / 257
}

func TestDemoShowsNonBlankFrame(t *testing.T) {
	ws, w := newTestWorkstation(t)
	f := ws.view.Frame()
	if f == nil {
		t.Fatal("the view shows no frame")
	}
	if ws.result.Report.Coverage < 0.5 {
		t.Errorf("coverage %.2f, want most of the demo frame covered", ws.result.Report.Coverage)
	}
	img := w.Canvas().Capture()
	// AbsolutePositionForObject leaves out the canvas's inset.
	inset, _ := w.Canvas().InteractiveArea()
	pos := fyne.CurrentApp().Driver().AbsolutePositionForObject(ws.view).Add(inset)
	size := ws.view.Size()
	scale := float64(img.Bounds().Dx()) / float64(w.Canvas().Size().Width)

	// Sample the screen at the centre of every fourth frame pixel and set
	// it beside the frame's own tone-mapped value. The view is right when
	// the two agree; the check uses gonum's correlation, not our code.
	ws.view.mu.Lock()
	zoom, cx, cy := float64(ws.view.zoom), ws.view.centreX, ws.view.centreY
	ws.view.mu.Unlock()
	var onScreen, expected []float64
	for row := 0; row < f.Height; row += 4 {
		for col := 0; col < f.Width; col += 4 {
			v, ok := f.At(col, row)
			if !ok {
				continue
			}
			xmm := f.OriginXMM + float64(col)*f.PitchXMM
			ymm := f.OriginYMM - float64(row)*f.PitchYMM
			ux := float64(pos.X) + float64(size.Width)/2 + (xmm-cx)*zoom
			uy := float64(pos.Y) + float64(size.Height)/2 - (ymm-cy)*zoom
			px, py := int(ux*scale), int(uy*scale)
			// Leave out the corner under the scale bar.
			if !image.Pt(px, py).In(img.Bounds()) || uy > float64(pos.Y+size.Height)-40 {
				continue
			}
			onScreen = append(onScreen, grey(img, px, py))
			expected = append(expected, 255*ws.cur.Tone.Map(v))
		}
	}
	if len(onScreen) < 500 {
		t.Fatalf("only %d frame pixels on screen", len(onScreen))
	}
	if sd := stat.StdDev(onScreen, nil); sd < 15 {
		t.Errorf("the frame on screen has a standard deviation of %.1f grey levels: it looks blank", sd)
	}
	if r := stat.Correlation(onScreen, expected, nil); r < 0.99 {
		t.Errorf("screen and frame correlate at r=%.3f, want ≥ 0.99", r)
	}
}

// horizontalShift finds the whole-pixel lag that best lines up the middle
// third of frame b with frame a (normalised cross-correlation).
func horizontalShift(a, b *recon.Frame, maxLag int) int {
	best, bestScore := 0, math.Inf(-1)
	x0, x1 := a.Width/3, 2*a.Width/3
	for lag := -maxLag; lag <= maxLag; lag++ {
		var xs, ys []float64
		for row := 0; row < a.Height; row++ {
			for col := x0; col < x1; col++ {
				va, okA := a.At(col, row)
				vb, okB := b.At(col+lag, row)
				if okA && okB {
					xs, ys = append(xs, float64(va)), append(ys, float64(vb))
				}
			}
		}
		if len(xs) < 100 {
			continue
		}
		if s := stat.Correlation(xs, ys, nil); s > bestScore {
			best, bestScore = lag, s
		}
	}
	return best
}

func TestDelayControlChangesImage(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	before := ws.result.Frames[0]
	pixBefore := framePixels(before)
	d0 := ws.result.Report.DelayDeg
	const stepDeg = 1.5
	ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.4f", d0+stepDeg))
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatalf("the delay change was refused: %s", p)
	}
	got := ws.result.Recipe.Sweep.DelayDeg
	if got == nil || math.Abs(*got-(d0+stepDeg)) > 1e-3 {
		t.Fatalf("the build used delay %v, want %.4f", got, d0+stepDeg)
	}
	after := ws.view.Frame()
	if after == before {
		t.Fatal("the view still shows the old frame")
	}
	if sameExtent(before, after) {
		changed := 0
		for i, v := range after.Pix {
			if math.Abs(float64(v-pixBefore[i])) > 1e-6 {
				changed++
			}
		}
		if changed < len(pixBefore)/10 {
			t.Errorf("only %d of %d pixels changed", changed, len(pixBefore))
		}
	}
	// Closed form: turning the wheel's delay by Δ turns every beam by Δ, so
	// at the middle of the field (θ ≈ 0) the scene moves by D·tan Δ on a
	// flat plane, D·Δ (radians) with the angular projection.
	r := ws.result.Recipe
	delta := stepDeg * math.Pi / 180
	wantMM := r.Sweep.DistanceMM * delta
	if r.Sweep.Projection == "flat" {
		wantMM = r.Sweep.DistanceMM * math.Tan(delta)
	}
	wantPx := wantMM / after.PitchXMM
	lag := horizontalShift(before, after, int(2*wantPx)+3)
	if math.Abs(math.Abs(float64(lag))-wantPx) > 2 {
		t.Errorf("the image moved %d px for a %.1f° delay change, want about %.1f px (D·tan Δ)", lag, stepDeg, wantPx)
	}
}

func TestUndoRestoresSettingsAndImage(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	r0 := cloneRecipe(ws.cur.Recipe)
	pix0 := framePixels(ws.result.Frames[0])
	d0 := ws.result.Report.DelayDeg
	ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.4f", d0+2))
	ws.Wait()
	pix1 := framePixels(ws.result.Frames[0])
	if !ws.hist.canUndo() {
		t.Fatal("the change left nothing to undo")
	}
	ws.Undo()
	ws.Wait()
	if !sameRecipe(ws.cur.Recipe, r0) {
		t.Errorf("undo left recipe\n%s\nwant\n%s", ws.cur.Recipe.JSON(), r0.JSON())
	}
	if !equalPix(ws.result.Frames[0].Pix, pix0) {
		t.Error("undo did not bring the first image back")
	}
	if math.Abs(ws.controls.number(ctlDelay).value-d0) > 1e-6 {
		t.Errorf("the delay control shows %.4f after undo, want %.4f", ws.controls.number(ctlDelay).value, d0)
	}
	ws.Redo()
	ws.Wait()
	if !equalPix(ws.result.Frames[0].Pix, pix1) {
		t.Error("redo did not bring the changed image back")
	}
}

func equalPix(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] && !(math.IsNaN(float64(a[i])) && math.IsNaN(float64(b[i]))) {
			return false
		}
	}
	return true
}

func TestBrokenFileShowsDialog(t *testing.T) {
	ws, w := newTestWorkstation(t)
	shown := ws.result
	settingsBefore := ws.cur.clone()

	// A WAV whose header promises a data chunk the file does not hold.
	var buf bytes.Buffer
	buf.WriteString("RIFF\x24\x08\x00\x00WAVEfmt \x10\x00\x00\x00\x01\x00\x03\x00\x80\xbb\x00\x00\x00\x65\x04\x00\x06\x00\x10\x00data\x00\x08\x00\x00\x01\x02")
	path := filepath.Join(t.TempDir(), "broken.wav")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	// An independent reader agrees the file cannot be decoded.
	if f, err := os.Open(path); err == nil {
		d := wav.NewDecoder(f)
		if pcm, err := d.FullPCMBuffer(); err == nil && pcm != nil && len(pcm.Data) >= 3*0x800/6 {
			t.Fatalf("go-audio/wav decoded the broken file in full (%d samples)", len(pcm.Data))
		}
		f.Close()
	}

	ws.OpenFile(path, nil)
	ws.Wait()
	if !strings.Contains(ws.Problem(), "broken.wav") {
		t.Errorf("problem %q does not name the file", ws.Problem())
	}
	if w.Canvas().Overlays().Top() == nil {
		t.Error("no dialog is shown")
	}
	if ws.result != shown || !sameSettings(ws.cur, settingsBefore) {
		t.Error("the image or the settings changed after a failed open")
	}
}

func TestRecipeThatDoesNotFitIsRefused(t *testing.T) {
	ws, w := newTestWorkstation(t)
	shown := ws.result
	before := ws.cur.clone()
	bad := cloneRecipe(ws.cur.Recipe)
	bad.Channels.Detector = "9" // the demo has three channels
	path := filepath.Join(t.TempDir(), "wrong.recipe.json")
	if err := os.WriteFile(path, bad.JSON(), 0o644); err != nil {
		t.Fatal(err)
	}
	ws.LoadRecipe(path)
	ws.Wait()
	if ws.Problem() == "" || w.Canvas().Overlays().Top() == nil {
		t.Fatal("no dialog for a recipe naming a missing channel")
	}
	if ws.result != shown || !sameSettings(ws.cur, before) {
		t.Error("the image or the settings changed after a refused recipe")
	}
	if ws.hist.canUndo() {
		t.Error("a refused recipe left an undo step")
	}
}

func TestExportWritesCalibratedTIFFAndAsksBeforeReplacing(t *testing.T) {
	ws, w := newTestWorkstation(t)
	f := ws.result.Frames[0]
	path := filepath.Join(t.TempDir(), "demo.tiff")
	plan := exportPlan(path, []*recon.Frame{f}, exportOptions(ws))
	ws.runExport(plan)
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatalf("export failed: %s", p)
	}
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	// Decode with x/image/tiff, an independent reader.
	img, err := tiff.Decode(bytes.NewReader(data))
	if err != nil {
		t.Fatalf("x/image/tiff cannot read the export: %v", err)
	}
	if b := img.Bounds(); b.Dx() != f.Width || b.Dy() != f.Height {
		t.Errorf("export is %v, frame is %d×%d", b, f.Width, f.Height)
	}
	if _, err := os.Stat(strings.TrimSuffix(path, ".tiff") + ".recipe.json"); err != nil {
		t.Errorf("no recipe beside the export: %v", err)
	}
	if w.Canvas().Overlays().Top() != nil {
		t.Fatal("a dialog is open before the second export")
	}
	ws.runExport(exportPlan(path, []*recon.Frame{f}, exportOptions(ws)))
	ws.Wait()
	if w.Canvas().Overlays().Top() == nil {
		t.Error("exporting over an existing file did not ask first")
	}
}

func exportOptions(ws *Workstation) (o export.Options) {
	o.Depth, o.Tone, o.ScaleBarMM, o.Compression = 16, ws.cur.Tone, -1, "deflate"
	return o
}

func TestSnapshotRendersWindow(t *testing.T) {
	img, err := Snapshot("", nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() < int(SnapshotSize.Width) || b.Dy() < int(SnapshotSize.Height) {
		t.Errorf("snapshot is %v, want at least %v", b, SnapshotSize)
	}
	var g []float64
	for y := 0; y < img.Bounds().Dy(); y += 7 {
		for x := 0; x < img.Bounds().Dx(); x += 7 {
			g = append(g, grey(img, x, y))
		}
	}
	if sd := stat.StdDev(g, nil); sd < 10 {
		t.Errorf("snapshot looks blank (sd %.1f)", sd)
	}
}

func TestAboutShowsSafetyCaution(t *testing.T) {
	ws, w := newTestWorkstation(t)
	ws.ShowAbout()
	top := w.Canvas().Overlays().Top()
	if top == nil {
		t.Fatal("no About dialog")
	}
	markup := test.RenderObjectToMarkup(top)
	// The version line sits beside the caution; its libraries are checked
	// in TestVersionFromBuildInfo (a test binary of this package records none).
	for _, want := range []string{"ionising radiation", "dosimetry", "controls no source", BuildVersion().String()} {
		if !strings.Contains(markup, want) {
			t.Errorf("the About text lacks %q", want)
		}
	}
}

func TestFailedExportShowsDialogAndKeepsState(t *testing.T) {
	ws, w := newTestWorkstation(t)
	shown, before := ws.result, ws.cur.clone()
	dir := filepath.Join(t.TempDir(), "missing-folder")
	path := filepath.Join(dir, "frame.tiff")
	ws.runExport(exportPlan(path, ws.result.Frames, exportOptions(ws)))
	ws.Wait()
	if !strings.Contains(ws.Problem(), "Cannot export") || w.Canvas().Overlays().Top() == nil {
		t.Errorf("no dialog for an export into a missing folder (problem %q)", ws.Problem())
	}
	// The standard library sees no file and no folder left behind.
	if _, err := os.Stat(dir); !os.IsNotExist(err) {
		t.Errorf("the failed export left %s behind (%v)", dir, err)
	}
	if ws.result != shown || !sameSettings(ws.cur, before) {
		t.Error("a failed export changed the image or the settings")
	}
}

func TestExportPlanNumbersPNGFrames(t *testing.T) {
	frames := []*recon.Frame{{}, {}, {}}
	plan := exportPlan("/x/scan.png", frames, export.Options{})
	if len(plan) != 3 || plan[0].path != "/x/scan-1.png" || plan[2].path != "/x/scan-3.png" {
		t.Errorf("PNG plan %v", plan)
	}
	if plan := exportPlan("/x/scan.tiff", frames, export.Options{}); len(plan) != 1 || len(plan[0].frames) != 3 {
		t.Errorf("a TIFF export of 3 frames should be one file of 3 pages, got %v", plan)
	}
}

func TestThresholdControlReachesTheEngine(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	lines := ws.result.Report.Lines
	_, idx, _ := ws.roleChannels(ws.result.Recipe)
	span := channelRange(ws.rec, idx)
	// Any threshold between the index pulse's low and high levels crosses
	// every pulse once, so the number of lines cannot change; at 30 % and
	// 70 % of the swing both levels are well clear of the noise.
	for _, frac := range []float64{0.3, 0.7} {
		level := span[0] + frac*(span[1]-span[0])
		ws.controls.number(ctlThreshold).typed(fmt.Sprintf("%.5f", level))
		ws.Wait()
		if p := ws.Problem(); p != "" {
			t.Fatalf("threshold %.3f refused: %s", level, p)
		}
		if got := ws.result.Report.Threshold; math.Abs(got-level) > 1e-4 {
			t.Errorf("the build used threshold %.5f, want %.5f", got, level)
		}
		if got := ws.result.Report.Lines; got != lines {
			t.Errorf("threshold at %.0f %% of the swing found %d lines, the automatic one %d", 100*frac, got, lines)
		}
	}
}

// slowEngine builds the first time and then waits for cancellation, like a
// build too long to sit through.
type slowEngine struct {
	Engine
	builds  int
	started chan struct{}
}

func (e *slowEngine) Build(ctx context.Context, r recipe.Recipe, progress func(string, float64)) (*Result, error) {
	e.builds++
	if e.builds == 1 {
		return e.Engine.Build(ctx, r, progress)
	}
	e.started <- struct{}{}
	<-ctx.Done()
	return nil, ctx.Err()
}

// demoWithEngine opens the demo in a window of size whose engine is the
// session engine as wrap wraps it.
func demoWithEngine(t testing.TB, size fyne.Size, wrap func(Engine) Engine) *Workstation {
	t.Helper()
	a := test.NewTempApp(t)
	a.Settings().SetTheme(Theme())
	w := a.NewWindow("Spotloom test")
	ws := New(a, w, Options{NewEngine: func(rec *capture.Recording) Engine { return wrap(NewSessionEngine(rec)) }})
	w.Resize(size)
	ws.OpenDemo()
	ws.Wait()
	if ws.result == nil {
		t.Fatalf("demo did not open: %s", ws.Problem())
	}
	return ws
}

func TestCancelKeepsImageAndSettings(t *testing.T) {
	slow := &slowEngine{started: make(chan struct{}, 1)}
	ws := demoWithEngine(t, fyne.NewSize(1280, 800), func(e Engine) Engine { slow.Engine = e; return slow })
	w := ws.win
	if !ws.cancel.Disabled() || !ws.menuStop.Disabled {
		t.Error("Stop is enabled with nothing running")
	}
	shown, before := ws.result, ws.cur.clone()
	ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.3f", ws.result.Report.DelayDeg+3))
	<-slow.started
	if !ws.work.busy() {
		t.Fatal("the build is not running")
	}
	if ws.cancel.Disabled() || ws.menuStop.Disabled {
		t.Error("Stop is disabled while a build runs")
	}
	// Esc stops the build when no message is up, even with a list focused
	// (the list hands the key on to the window).
	w.Canvas().Focus(ws.controls.choice(ctlLaw))
	pressKey(w.Canvas(), fyne.KeyEscape)
	ws.Wait()
	if !ws.cancel.Disabled() || !ws.menuStop.Disabled {
		t.Error("Stop is enabled with nothing running")
	}
	if ws.result != shown {
		t.Error("cancelling replaced the image")
	}
	if !sameSettings(ws.cur, before) {
		t.Error("cancelling left the settings of the build that never finished")
	}
	if ws.Problem() != "" || w.Canvas().Overlays().Top() != nil {
		t.Errorf("cancelling is not a problem, got %q", ws.Problem())
	}
}

// TestApertureControlReachesTheEngine: the aperture count turns the line
// rate into wheel speed. Closed form: rev/min = 60 · line rate / apertures
// with one index pulse per aperture, so telling the window 4 apertures for
// the demo's 6-aperture wheel reads 6/4 of its speed, and 6 restores it.
func TestApertureControlReachesTheEngine(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	rep := ws.result.Report
	if ws.result.Recipe.Sweep.Apertures != 6 {
		t.Fatalf("demo recipe has %d apertures, want the demo rig's 6", ws.result.Recipe.Sweep.Apertures)
	}
	for _, n := range []int{4, 6} {
		ws.controls.number(ctlApertures).typed(fmt.Sprint(n))
		ws.Wait()
		if p := ws.Problem(); p != "" {
			t.Fatalf("%d apertures refused: %s", n, p)
		}
		r := ws.result.Recipe
		if r.Sweep.Apertures != n || r.Timing.PulsesPerRev != n {
			t.Fatalf("recipe has %d apertures, %d pulses per rev; want %d and %d", r.Sweep.Apertures, r.Timing.PulsesPerRev, n, n)
		}
		want := 60 * rep.LineRateHz / float64(n)
		if got := ws.result.Report.RPMMean; math.Abs(got-want) > 0.002*want {
			t.Errorf("%d apertures: %.2f rev/min, want 60·%.3f/%d = %.2f", n, got, rep.LineRateHz, n, want)
		}
	}
	if got := ws.result.Report.RPMMean; math.Abs(got-rep.RPMMean) > 1e-6*rep.RPMMean {
		t.Errorf("back at 6 apertures: %.4f rev/min, first build %.4f", got, rep.RPMMean)
	}
}

// TestTextWithoutRateAsksForIt: a logger export with no time column cannot
// be read until its rate is known. The window asks for the rate instead of
// showing a bare error, and the capture opens once a rate is given.
func TestTextWithoutRateAsksForIt(t *testing.T) {
	ws, w := newTestWorkstation(t)
	shown := ws.result
	// 0.3 s at 20 kHz: a 50 Hz line rate index (10 % duty), a detector that
	// is on for half of each line, and a slow position ramp.
	var b strings.Builder
	b.WriteString("detector,index,position\n")
	const rate = 20000.0
	for i := 0; i < 6000; i++ {
		phase := math.Mod(float64(i)/rate*50, 1)
		idx, det := 0.0, 0.01
		if phase < 0.1 {
			idx = 5
		}
		if phase > 0.3 && phase < 0.8 {
			det = 1 + 0.5*math.Sin(40*phase)
		}
		fmt.Fprintf(&b, "%.4f,%.1f,%.5f\n", det, idx, 0.5+float64(i)/6000)
	}
	path := filepath.Join(t.TempDir(), "logger.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := capture.Open(path, capture.Options{}); !errors.Is(err, capture.ErrNoSampleRate) {
		t.Fatalf("capture.Open: %v, want an error wrapping ErrNoSampleRate", err)
	}
	ws.OpenFile(path, nil)
	ws.Wait()
	if w.Canvas().Overlays().Top() == nil || !strings.Contains(ws.stage.Text, "sample rate") {
		t.Fatalf("no rate question: status %q", ws.stage.Text)
	}
	if ws.result != shown {
		t.Fatal("the image changed before the rate was given")
	}
	// What the form's Open button does with 20000 typed in.
	ws.openWith(path, capture.Options{SampleRateHz: rate}, nil)
	ws.Wait()
	if ws.rec == nil || ws.rec.SampleRateHz != rate || ws.sourcePath != path {
		t.Fatalf("capture not opened with the rate given: %v", ws.Problem())
	}
}

// TestSignalInvertNegatesTheFrame: inverting the detector signal negates
// every baseline-removed sample, and gridding is linear in the samples, so
// every covered pixel of the new frame is the negative of the old one
// (closed form: grid(−x) = −grid(x)).
func TestSignalInvertNegatesTheFrame(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	before := ws.result.Frames[0]
	pix := framePixels(before)
	ws.controls.toggle(ctlPolarity).SetChecked(true)
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatalf("invert refused: %s", p)
	}
	after := ws.result.Frames[0]
	if !ws.result.Recipe.Signal.Invert || !sameExtent(before, after) {
		t.Fatalf("invert %v, same extent %v", ws.result.Recipe.Signal.Invert, sameExtent(before, after))
	}
	var worst, scale float64
	for i, v := range after.Pix {
		if !after.Covered[i] {
			continue
		}
		worst = math.Max(worst, math.Abs(float64(v+pix[i])))
		scale = math.Max(scale, math.Abs(float64(pix[i])))
	}
	if worst > 1e-5*scale {
		t.Errorf("inverted frame differs from the negated one by up to %g (frame scale %g)", worst, scale)
	}
}

// TestEvenSpeedControl: with rows at an even speed the frame spans speed ×
// capture duration in y (closed form: rows = v·T / pitch, within the grid's
// edge rows), and a new speed rescales it.
func TestEvenSpeedControl(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	ws.controls.choice(ctlRows).SetSelected(rowsSourceNames[3])
	ws.Wait()
	for _, v := range []float64{10, 20} {
		ws.controls.number(ctlSpeed).typed(fmt.Sprint(v))
		ws.Wait()
		if p := ws.Problem(); p != "" {
			t.Fatalf("speed %g refused: %s", v, p)
		}
		r := ws.result.Recipe
		if r.Rows.Source != "even" || r.Rows.SpeedMMS == nil || *r.Rows.SpeedMMS != v {
			t.Fatalf("rows %+v, want even at %g mm/s", r.Rows, v)
		}
		f := ws.result.Frames[0]
		lines := ws.result.Lines
		span := v * (lines[len(lines)-1].FieldEndS - lines[0].FieldStartS)
		if want := span / f.PitchYMM; math.Abs(float64(f.Height)-want) > 3 {
			t.Errorf("%g mm/s: frame %d rows high, want about v·T/pitch = %.1f", v, f.Height, want)
		}
	}
}

// TestNewCaptureStartsFresh: a capture opened after the demo does not take
// the demo's aperture offsets or calibration. With nothing known about it,
// the first build's findings set the aperture count (6: the demo rig's
// wheel, which the simulated file was made with) and a calibration that
// spans the position levels seen.
func TestNewCaptureStartsFresh(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	ws.controls.offsets[2].typed("1.5")
	ws.Wait()
	rig := sampledata.DemoRig()
	rec, _, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 8, DurationS: 8})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := capture.WriteWAV(&buf, rec, "int16"); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "grid.wav")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	ws.OpenFile(path, nil)
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatalf("open: %s", p)
	}
	r := ws.result.Recipe
	if r.Sweep.Apertures != 6 {
		t.Errorf("apertures %d, want the 6 the beam-on stretch implies", r.Sweep.Apertures)
	}
	for _, o := range r.Sweep.ApertureOffsetsDeg {
		if o == 1.5 {
			t.Errorf("the demo's offsets were carried over: %v", r.Sweep.ApertureOffsetsDeg)
		}
	}
	lv := ws.result.Report.PositionLevels
	cal := r.Rows.Calibration
	if len(lv) != 2 || len(cal) != 2 || math.Abs(cal[0][0]-lv[0]) > 1e-9 || math.Abs(cal[1][0]-lv[1]) > 1e-9 {
		t.Errorf("calibration %v does not span the levels seen %v", cal, lv)
	}
}

// TestMissingLayoutAsksForIt: the window asks for a raw layout whenever
// the reader's error wraps capture.ErrNoLayout, whatever the file is
// called and whatever the message says, and not for other errors that
// mention a layout.
func TestMissingLayoutAsksForIt(t *testing.T) {
	a := test.NewTempApp(t)
	w := a.NewWindow("Spotloom test")
	var openErr error
	ws := New(a, w, Options{Open: func(string, capture.Options) (*capture.Recording, error) { return nil, openErr }})
	openErr = fmt.Errorf("scope dump: %w", capture.ErrNoLayout)
	ws.OpenFile(filepath.Join(t.TempDir(), "scope.dat"), nil)
	ws.Wait()
	if !strings.Contains(ws.stage.Text, "without its layout") {
		t.Fatalf("no layout question for an error wrapping ErrNoLayout: status %q", ws.stage.Text)
	}
	openErr = errors.New("the layout of the bench is unknown")
	ws.OpenFile(filepath.Join(t.TempDir(), "bench.bin"), nil)
	ws.Wait()
	if strings.Contains(ws.stage.Text, "without its layout") {
		t.Fatalf("a layout question for an error that only mentions a layout: status %q", ws.stage.Text)
	}
}

func sameExtent(a, b *recon.Frame) bool {
	return a.Width == b.Width && a.Height == b.Height && a.PitchXMM == b.PitchXMM &&
		a.PitchYMM == b.PitchYMM && a.OriginXMM == b.OriginXMM && a.OriginYMM == b.OriginYMM
}
