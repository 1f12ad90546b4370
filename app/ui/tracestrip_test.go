package ui

import (
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// showEveryLine paints the strip at the first, middle and last line of the
// result, where the window reaches before the capture's start or past its
// end.
func showEveryLine(t *testing.T, ws *Workstation, what string) {
	t.Helper()
	if ws.result == nil || len(ws.result.Lines) == 0 {
		return
	}
	for _, i := range []int{0, len(ws.result.Lines) / 2, len(ws.result.Lines) - 1} {
		ws.strip.ShowLine(i)
		ws.win.Canvas().Capture() // paints the strip's raster
		if from, to := ws.strip.Window(); !(to > from) || to-from > 1 {
			t.Errorf("%s, line %d: the strip shows %.4f…%.4f s, want a span of one line", what, i, from, to)
		}
	}
}

// TestTraceStripSurvivesEverySweepLawAndRowsSource chooses every sweep law
// and every rows source in the window and paints the strip each time.
// Before the fix, "resonant mirror (sine)" panicked in the strip with a
// negative slice bound: its lines have no baseline and share their edges,
// so the window began at 0 s and reached before the first sample.
func TestTraceStripSurvivesEverySweepLawAndRowsSource(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	for i, key := range lawKeys {
		ws.change("sweep law", func(r *recipe.Recipe) {
			r.Sweep.Law = key
			if key == "table" {
				// A plain linear table: the uniform law written out.
				r.Sweep.Table = [][2]float64{{0, -200}, {1, 200}}
			}
		})
		ws.Wait()
		if ws.problem != "" {
			t.Logf("%s: %s", lawNames[i], ws.problem)
		}
		showEveryLine(t, ws, lawNames[i])
	}
	ws.change("sweep law", func(r *recipe.Recipe) { r.Sweep.Law = "uniform" })
	ws.Wait()
	for i, key := range rowsSourceKeys {
		ws.problem = ""
		ws.change("rows source", func(r *recipe.Recipe) {
			r.Rows.Source = key
			r.Rows.SpeedMMS = recipe.Float(20)
			r.Rows.MMPerStep = recipe.Float(0.5)
		})
		ws.Wait()
		if ws.problem != "" {
			t.Logf("%s: %s", rowsSourceNames[i], ws.problem)
		}
		showEveryLine(t, ws, rowsSourceNames[i])
	}
}

// TestTraceStripPaintsWindowsOutsideTheCapture paints windows that start
// before the first sample, end after the last, or cover no sample at all.
func TestTraceStripPaintsWindowsOutsideTheCapture(t *testing.T) {
	test.NewTempApp(t)
	const rate = 1000.0
	samples := make([]float32, 100) // 0.1 s
	for i := range samples {
		samples[i] = float32(i % 10)
	}
	rec := &capture.Recording{SampleRateHz: rate, Channels: []capture.Channel{
		{Name: "det", Samples: samples}, {Name: "idx", Samples: samples},
	}}
	lines := []Line{
		{EdgeS: 0, FieldStartS: -0.02, FieldEndS: 0.01},                                             // before the start
		{EdgeS: 0.05, FieldStartS: 0.05, FieldEndS: 0.07, BaselineStartS: 0.04, BaselineEndS: 0.05}, // inside
		{EdgeS: 0.099, FieldStartS: 0.1, FieldEndS: 0.3},                                            // past the end
		{EdgeS: 5, FieldStartS: 5, FieldEndS: 5.01},                                                 // no sample at all
	}
	strip := NewTraceStrip()
	strip.SetData(rec, 0, 1, -1, lines, math.NaN())
	r := test.TempWidgetRenderer(t, strip).(*traceRenderer)
	for i := range lines {
		strip.ShowLine(i)
		for _, w := range []int{2, 3, 640, 4001} {
			img := r.paint(w, 120)
			if img.Bounds().Dx() != w {
				t.Errorf("line %d at width %d: painted %d columns", i, w, img.Bounds().Dx())
			}
		}
	}
}

// TestColumnSamples checks the samples a screen column covers against the
// closed form: column x of w spans t0+x·(t1−t0)/w … t0+(x+1)·(t1−t0)/w
// seconds, i.e. floor(rate·t) sample indices, clipped to the capture.
func TestColumnSamples(t *testing.T) {
	const rate, frames = 1000.0, 100
	cases := []struct {
		x, w   int
		t0, t1 float64
		a, b   int
		ok     bool
	}{
		{0, 10, 0, 0.1, 0, 10, true},        // 10 samples per column
		{9, 10, 0, 0.1, 90, 100, true},      // the last column ends at the last sample
		{0, 10, -0.1, 0.1, 0, 0, false},     // −0.1…−0.08 s: before the capture
		{5, 10, -0.1, 0.1, 0, 20, true},     // 0…0.02 s
		{4, 10, -0.1, 0.1, 0, 0, false},     // −0.02…0 s ends where the capture begins
		{9, 10, 0.05, 0.25, 0, 0, false},    // 0.23…0.25 s: after the end
		{2, 10, 0.05, 0.25, 90, 100, true},  // 0.09…0.11 s, clipped at the end
		{0, 1000, 0, 0.01, 0, 1, true},      // many columns per sample: at least one sample
		{3, 4, math.NaN(), 1, 0, 0, false},  // an unknown window covers nothing
		{0, 4, 0, math.Inf(1), 0, 0, false}, // nor does an endless one
		{1, 4, 0, math.Inf(1), 0, 0, false},
	}
	for _, c := range cases {
		a, b, ok := columnSamples(c.x, c.w, c.t0, c.t1, rate, frames)
		if ok != c.ok || (ok && (a != c.a || b != c.b)) {
			t.Errorf("column %d of %d over %g…%g s: got [%d,%d) %v, want [%d,%d) %v", c.x, c.w, c.t0, c.t1, a, b, ok, c.a, c.b, c.ok)
		}
		if ok && !(0 <= a && a < b && b <= frames) {
			t.Errorf("column %d of %d over %g…%g s: [%d,%d) is outside 0…%d", c.x, c.w, c.t0, c.t1, a, b, frames)
		}
	}
}

// TestNiceStep checks the axis steps against hand-worked 1-2-5 choices:
// the smallest of 1, 2, 5 × 10^k at least span/want (common practice for
// chart axes, no published source).
func TestNiceStep(t *testing.T) {
	cases := []struct {
		span float64
		want int
		step float64
	}{
		{10, 5, 2},        // 2 exactly
		{0.9, 3, 0.5},     // 0.3 → 0.5
		{37, 4, 10},       // 9.25 → 10
		{0.0012, 2, 1e-3}, // 6e-4 → 1e-3
		{25, 5, 5},        // 5 exactly
		{0, 3, 0},         // no span, no ticks
	}
	for _, c := range cases {
		if got := niceStep(c.span, c.want); math.Abs(got-c.step) > 1e-12*c.step {
			t.Errorf("niceStep(%g, %d) = %g, want %g", c.span, c.want, got, c.step)
		}
	}
	ticks := axisTicks(-12, 27, 4) // step 10
	want := []float64{-10, 0, 10, 20}
	if fmt.Sprint(ticks) != fmt.Sprint(want) {
		t.Errorf("axisTicks(-12, 27, 4) = %v, want %v", ticks, want)
	}
	for _, c := range []struct {
		v, step float64
		text    string
	}{{0.5, 0.5, "0.5"}, {-0.0000001, 0.1, "0.0"}, {12, 5, "12"}, {0.025, 0.005, "0.025"}} {
		if got := tickLabel(c.v, c.step); got != c.text {
			t.Errorf("tickLabel(%g, %g) = %q, want %q", c.v, c.step, got, c.text)
		}
	}
}

// TestLaneTicksReadEveryLane checks a lane's voltage axis against a
// brute-force search written out here: among the steps 1, 2, 5 × 10^k, the
// number of their multiples in [lo, hi] is ⌊hi/s⌋ − ⌈lo/s⌉ + 1 (a closed
// form). When some step at least least apart leaves two multiples, every
// tick is labelled and the step is the finest such; otherwise two labels
// still stand, on the lowest and highest ticks.
func TestLaneTicksReadEveryLane(t *testing.T) {
	count := func(lo, hi, s float64) int {
		return int(math.Floor(hi/s+1e-9) - math.Ceil(lo/s-1e-9) + 1)
	}
	// The finest 1-2-5 step ≥ least with two multiples in the span, or 0.
	finest := func(lo, hi, least float64) float64 {
		for e := -6; e <= 6; e++ {
			for _, m := range []float64{1, 2, 5} {
				s := m * math.Pow(10, float64(e))
				if s >= least*(1-1e-9) && count(lo, hi, s) >= 2 {
					return s
				}
			}
		}
		return 0
	}
	cases := []struct{ lo, hi, least float64 }{
		{-0.903, 0.672, 0.486}, // the demo's detector at 1366×768
		{-0.903, 0.672, 0.70},  // the same lane at 1024×700: no room for 0.5 apart
		{-0.102, 0.897, 0.31},  // the demo's index
		{0.01, 0.049, 0.002},   // a small detector swing
		{1.2, 1.3, 0.09},       // a steady position far from zero
		{-5, 5, 20},            // a lane far too short
	}
	for _, c := range cases {
		ticks, labelled, step := laneTicks(c.lo, c.hi, c.least)
		labels := 0
		var at []float64
		for i, tk := range ticks {
			if tk < c.lo-1e-12 || tk > c.hi+1e-12 {
				t.Errorf("%+v: tick %g lies outside the lane", c, tk)
			}
			if r := tk / step; math.Abs(r-math.Round(r)) > 1e-6 {
				t.Errorf("%+v: tick %g is not a multiple of the step %g", c, tk, step)
			}
			if labelled[i] {
				labels++
				at = append(at, tk)
			}
		}
		if labels < 2 {
			t.Errorf("%+v: %d labelled ticks (%v), want at least two", c, labels, ticks)
		}
		if len(ticks) != count(c.lo, c.hi, step) {
			t.Errorf("%+v: %d ticks at step %g, the span holds %d", c, len(ticks), step, count(c.lo, c.hi, step))
		}
		if s := finest(c.lo, c.hi, c.least); s > 0 {
			if math.Abs(step-s) > 1e-9*s || labels != len(ticks) {
				t.Errorf("%+v: step %g with %d of %d labelled, want step %g with every tick labelled", c, step, labels, len(ticks), s)
			}
			continue
		}
		if at[0] != ticks[0] || at[len(at)-1] != ticks[len(ticks)-1] {
			t.Errorf("%+v: labels on %v, want the lowest and highest of %v", c, at, ticks)
		}
		for k := 1; k < len(at)-1; k++ {
			if at[k]-at[k-1] < c.least*(1-1e-9) {
				t.Errorf("%+v: labels %g and %g are closer than %g", c, at[k-1], at[k], c.least)
			}
		}
	}
}

// syntheticStrip is a strip over a capture of known signals at 10 kHz:
// the detector a ramp of 3 V/s from 0.5 V, the index a 50 Hz sine of 1 V,
// the position a steady 1.25 V; one line has its edge at 20 ms.
func syntheticStrip(t *testing.T) (*TraceStrip, *capture.Recording) {
	t.Helper()
	test.NewTempApp(t)
	const rate, n = 10000.0, 1000
	det, idx, pos := make([]float32, n), make([]float32, n), make([]float32, n)
	for i := range det {
		ts := float64(i) / rate
		det[i] = float32(0.5 + 3*ts)
		idx[i] = float32(math.Sin(2 * math.Pi * 50 * ts))
		pos[i] = 1.25
	}
	rec := &capture.Recording{SampleRateHz: rate, Channels: []capture.Channel{
		{Name: "det", Unit: "V", Samples: det}, {Name: "idx", Unit: "V", Samples: idx}, {Name: "pos", Unit: "V", Samples: pos},
	}}
	lines := []Line{
		{Number: 0, EdgeS: 0.020, FieldStartS: 0.022, FieldEndS: 0.035, BaselineStartS: 0.036, BaselineEndS: 0.039},
		{Number: 1, EdgeS: 0.040, FieldStartS: 0.042, FieldEndS: 0.055, BaselineStartS: 0.056, BaselineEndS: 0.059},
		{Number: 2, EdgeS: 0.060, FieldStartS: 0.062, FieldEndS: 0.075},
	}
	strip := NewTraceStrip()
	strip.SetData(rec, 0, 1, 2, lines, 0.3)
	strip.ShowLine(0)
	strip.Resize(fyne.NewSize(800, 240))
	return strip, rec
}

// TestTraceCursorsReadDtAndDV places the cursors at 21 ms and 23.5 ms on
// the synthetic capture, where every value is known in closed form.
func TestTraceCursorsReadDtAndDV(t *testing.T) {
	strip, _ := syntheticStrip(t)
	strip.SetCursor(0, 0.0210)
	strip.SetCursor(1, 0.0235)
	rd := strip.Reading()
	// Times from the index edge at 20 ms: 1 ms and 3.5 ms, 2.5 ms apart.
	if math.Abs(rd.AtMS[0]-1) > 1e-9 || math.Abs(rd.AtMS[1]-3.5) > 1e-9 || math.Abs(rd.DtMS-2.5) > 1e-9 {
		t.Errorf("cursors at %.6f and %.6f ms, Δt %.6f ms; want 1, 3.5 and 2.5", rd.AtMS[0], rd.AtMS[1], rd.DtMS)
	}
	// Detector ramp: ΔV = 3 V/s × 2.5 ms = 7.5 mV (closed form).
	if !rd.HasDV[0] || math.Abs(rd.DV[0]-0.0075) > 1e-6 {
		t.Errorf("detector ΔV %.7f V, want 0.0075 V", rd.DV[0])
	}
	// Index sine: sin(2π·50·0.0235) − sin(2π·50·0.021) from the standard library.
	wantIdx := math.Sin(2*math.Pi*50*0.0235) - math.Sin(2*math.Pi*50*0.021)
	if !rd.HasDV[1] || math.Abs(rd.DV[1]-wantIdx) > 1e-6 {
		t.Errorf("index ΔV %.7f V, want %.7f V", rd.DV[1], wantIdx)
	}
	if !rd.HasDV[2] || rd.DV[2] != 0 || rd.Value[2][0] != 1.25 {
		t.Errorf("position reads %v with ΔV %v, want 1.25 V and 0", rd.Value[2], rd.DV[2])
	}
	// The readouts say the same in words.
	v := strip.view()
	if s := cursorReadout(v); !strings.Contains(s, "Δt 2.500 ms") {
		t.Errorf("cursor readout %q does not give Δt 2.500 ms", s)
	}
	if s := laneReadout(rd, 0, "V"); !strings.Contains(s, "ΔV 0.0075 V") {
		t.Errorf("detector readout %q does not give ΔV 0.0075 V", s)
	}
	// Cursors keep their place from the edge on another line: on line 1
	// (edge 40 ms) cursor A reads the ramp at 41 ms.
	strip.ShowLine(1)
	rd = strip.Reading()
	if math.Abs(rd.Value[0][0]-(0.5+3*0.041)) > 1e-6 {
		t.Errorf("on line 1 cursor A reads %.6f V, want %.6f V", rd.Value[0][0], 0.5+3*0.041)
	}
	// Past the capture's end (100 ms) a cursor reads nothing.
	strip.SetCursor(1, 0.2)
	if rd = strip.Reading(); rd.Has[0][1] || rd.HasDV[0] {
		t.Errorf("a cursor past the capture reads %v", rd.Value[0][1])
	}
}

// TestTraceStripTapsAndWheel places cursors by tapping and zooms with the
// wheel: a tap at x units lands at from + (x − left)/(plot width) of the
// span shown.
func TestTraceStripTapsAndWheel(t *testing.T) {
	strip, _ := syntheticStrip(t)
	from, to := strip.Window()
	width := float64(strip.Size().Width) - traceLeft - traceRight
	x := float32(traceLeft + 0.25*width)
	strip.Tapped(&fyne.PointEvent{Position: fyne.NewPos(x, 100)})
	strip.TappedSecondary(&fyne.PointEvent{Position: fyne.NewPos(float32(traceLeft+0.75*width), 100)})
	rd := strip.Reading()
	wantA := 1000 * (from + 0.25*(to-from) - 0.020)
	if math.Abs(rd.AtMS[0]-wantA) > 1e-3 || math.Abs(rd.DtMS-500*(to-from)) > 1e-3 {
		t.Errorf("taps put A at %.4f ms and Δt %.4f ms, want %.4f and %.4f", rd.AtMS[0], rd.DtMS, wantA, 500*(to-from))
	}

	// One wheel step in zooms by 1.25 about the pointer.
	strip.Scrolled(&fyne.ScrollEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(x, 100)}, Scrolled: fyne.Delta{DY: 10}})
	zf, zt := strip.Window()
	about := from + 0.25*(to-from)
	if math.Abs((zt-zf)-(to-from)/1.25) > 1e-12 || math.Abs((about-zf)/(zt-zf)-0.25) > 1e-9 {
		t.Errorf("wheel: %.5f…%.5f s from %.5f…%.5f s, want a span 1.25× narrower about %.5f", zf, zt, from, to, about)
	}
	// The zoom is kept from the edge on the next line, and Whole line undoes it.
	strip.ShowLine(1)
	nf, nt := strip.Window()
	if math.Abs((nf-0.040)-(zf-0.020)) > 1e-12 || math.Abs((nt-nf)-(zt-zf)) > 1e-12 {
		t.Errorf("line 1 shows %.5f…%.5f s, want the zoomed span moved by 20 ms", nf, nt)
	}
	strip.ResetTime()
	strip.ShowLine(0)
	if rf, rt := strip.Window(); rf != from || rt != to {
		t.Errorf("after Whole line the strip shows %.5f…%.5f s, want %.5f…%.5f", rf, rt, from, to)
	}
	// Zooming in far stops at 8 samples.
	for range 40 {
		strip.ZoomTime(2, 0.03)
	}
	if f, tt := strip.Window(); math.Abs((tt-f)-8/10000.0) > 1e-12 {
		t.Errorf("deepest zoom shows %.6f s, want 8 samples (0.0008 s)", tt-f)
	}
}

// TestTracePictureUsesTheStripsInks paints the synthetic strip and finds
// each lane's ink in its lane, the threshold line across the index lane,
// and the paper ground, none of the old yellow/cyan/green on black.
func TestTracePictureUsesTheStripsInks(t *testing.T) {
	strip, _ := syntheticStrip(t)
	img := strip.Picture(800, 240, 1).(*image.NRGBA)
	count := func(c color.NRGBA, y0, y1 int) int {
		n := 0
		for y := y0; y < y1; y++ {
			for x := 0; x < img.Bounds().Dx(); x++ {
				if img.NRGBAAt(x, y) == c {
					n++
				}
			}
		}
		return n
	}
	top, bottom := traceCaptionH, 240-traceAxisH
	laneH := (bottom - top) / 3
	for lane, ink := range traceColours {
		if n := count(ink, top+lane*laneH, top+(lane+1)*laneH); n < 200 {
			t.Errorf("lane %d holds %d pixels of its ink, want its trace drawn", lane, n)
		}
	}
	if img.NRGBAAt(1, 1) != tracePaper {
		t.Errorf("corner is %v, want the paper ground", img.NRGBAAt(1, 1))
	}
	// The threshold (0.3 V on a −1…1 V index lane) is dashed across most
	// of the plot: 8 on, 4 off.
	v := strip.view()
	lo, hi := v.laneRange(1)
	ytop, ybot := top+laneH+6, top+2*laneH-4
	y := ybot - int(math.Round((0.3-lo)/(hi-lo)*float64(ybot-ytop)))
	if n := count(traceThreshold, y, y+1); n < (800-traceLeft-traceRight)/2 {
		t.Errorf("the threshold row holds %d threshold pixels, want over half the plot width", n)
	}
	for _, old := range []color.NRGBA{{R: 0xf2, G: 0xd0, B: 0x4a, A: 0xff}, {R: 0x5c, G: 0xc8, B: 0xf0, A: 0xff}, {R: 0x16, G: 0x18, B: 0x1c, A: 0xff}} {
		if n := count(old, 0, 240); n > 0 {
			t.Errorf("%d pixels of the old palette's %v remain", n, old)
		}
	}
}

// TestSaveTracePicture writes the strip to a PNG at twice its size and
// never replaces a file unasked.
func TestSaveTracePicture(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	path := filepath.Join(t.TempDir(), "traces.png")
	if err := ws.SaveTracePicture(path, false); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f) // the standard library's decoder
	if err != nil {
		t.Fatal(err)
	}
	size := ws.strip.Size()
	if w := img.Bounds().Dx(); w != int(float64(max(size.Width, 900))*tracePictureScale) {
		t.Errorf("picture is %d px wide, want %g", w, float64(max(size.Width, 900))*tracePictureScale)
	}
	if err := ws.SaveTracePicture(path, false); err == nil || !strings.Contains(err.Error(), "exists") {
		t.Errorf("saving over a picture: %v, want a refusal", err)
	}
	if err := ws.SaveTracePicture(strings.TrimSuffix(path, ".png")+".tiff", false); err == nil {
		t.Error("a .tiff name was accepted for a PNG picture")
	}
}
