package ui

import (
	"math"
	"testing"

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
