package recon

import (
	"context"
	"math"
	"strings"
	"testing"
)

// A baseline that drifts by 0.5 V over the capture (and a slow 0.2 V
// wander) is taken out line by line: the background of the scene reads
// its true 0.2 V above the beam-off level everywhere.
func TestBaselineFollowsDrift(t *testing.T) {
	rig := baseRig()
	rec := rig.recording()
	det := rec.Channels[0].Samples
	for i := range det {
		tm := float64(i) / rig.rateHz
		det[i] += float32(0.25*tm + 0.2*math.Sin(2*math.Pi*tm/1.3))
	}
	res, err := NewSession(rec).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	f := res.Frames[0]
	// Background pixels: away from every dot (dots every 20 mm, radius 3).
	worst := 0.0
	for row := 2; row < f.Height-2; row++ {
		y := f.OriginYMM - float64(row)*f.PitchYMM
		for col := 2; col < f.Width-2; col++ {
			x := f.OriginXMM + float64(col)*f.PitchXMM
			dx, dy := x-20*math.Round(x/20), y-20*math.Round(y/20)
			if math.Hypot(dx, dy) < 6 {
				continue
			}
			v, _ := f.At(col, row)
			worst = math.Max(worst, math.Abs(float64(v)-0.2))
		}
	}
	// The drift is linear between beam-off intervals 25 ms apart to well
	// under 1 mV; the noise (2 mV per sample) averages over a pixel.
	if worst > 0.01 {
		t.Errorf("background off by up to %.4f V after baseline removal", worst)
	}
}

// invert turns the signal over around its baseline. (The delay is held at
// the first build's: on this synthetic detector, with no photon noise to
// tell its polarity by, signal.invert would also tell the delay estimate
// which way the beam-on stretch goes.)
func TestInvert(t *testing.T) {
	rig := baseRig()
	s := NewSession(rig.recording())
	a, err := s.Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	r := rig.recipe()
	r.Sweep.DelayDeg = a.Recipe.Sweep.DelayDeg
	r.Signal.Invert = true
	b, err := s.Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range a.Frames[0].Pix {
		if math.Abs(float64(v+b.Frames[0].Pix[i])) > 1e-6 {
			t.Fatalf("pixel %d: %g and inverted %g", i, v, b.Frames[0].Pix[i])
		}
	}
}

// A detector that saturates is reported.
func TestClippingReported(t *testing.T) {
	rig := baseRig()
	rec := rig.recording()
	det := rec.Channels[0].Samples
	for i := range det {
		det[i] = min(det[i], 0.8) // dots reach 1.1 V: they clip
	}
	res, err := NewSession(rec).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	w := strings.Join(res.Report.Warnings, " ")
	if !strings.Contains(w, "the detector clipped on") {
		t.Errorf("no clipping warning: %q", res.Report.Warnings)
	}
	// Without clipping, no warning.
	res, err = NewSession(rig.recording()).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(strings.Join(res.Report.Warnings, " "), "clipped") {
		t.Errorf("clipping reported on a clean capture: %q", res.Report.Warnings)
	}
}

// A head that jumps further between two lines than image.max_gap_mm (here
// automatic: four times the 1.5 mm spacing while the head moves, 6 mm)
// leaves rows without data (not stretched lines) and says where.
func TestFastMotionLeavesGaps(t *testing.T) {
	rig := baseRig()
	// 30 mm/s, then 400 mm/s from 1.0 s to 1.2 s: lines 20 mm apart.
	rig.y = func(t float64) float64 {
		switch {
		case t < 1:
			return 30 * t
		case t < 1.2:
			return 30 + 400*(t-1)
		}
		return 110 + 30*(t-1.2)
	}
	res, err := NewSession(rig.recording()).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	w := strings.Join(res.Report.Warnings, " ")
	if !strings.Contains(w, "image.max_gap_mm (6 mm) from one line to the next between 1.0 s and 1.") || !strings.Contains(w, "rows have gaps") {
		t.Errorf("warnings %q", res.Report.Warnings)
	}
	f := res.Frames[0]
	// The rows between two fast lines hold no data; slow parts are full.
	empty := 0
	for row := 0; row < f.Height; row++ {
		if _, ok := f.At(f.Width/2, row); !ok {
			empty++
			if y := f.OriginYMM - float64(row)*f.PitchYMM; y < 30 || y > 110 {
				t.Errorf("row %d (y %.1f mm) empty outside the fast stretch", row, y)
			}
		}
	}
	if empty < 40 {
		t.Errorf("only %d empty rows in an 80 mm stretch scanned every 20 mm", empty)
	}
	if res.Report.Coverage > 0.8 {
		t.Errorf("coverage %.2f, want the gaps counted", res.Report.Coverage)
	}
}

// fill_gaps_px fills holes up to that many pixels, and no wider.
func TestFillGaps(t *testing.T) {
	f := &Frame{Width: 1, Height: 9, Pix: make([]float32, 9), Covered: make([]bool, 9)}
	set := func(i int, v float32) { f.Pix[i], f.Covered[i] = v, true }
	set(0, 1)
	set(3, 4) // hole of 2: filled linearly
	set(8, 9) // hole of 4: stays
	fillGaps(f, 2, 2)
	for i, want := range []float32{1, 2, 3, 4} {
		if !f.Covered[i] || math.Abs(float64(f.Pix[i]-want)) > 1e-6 {
			t.Errorf("pixel %d: %v %g, want %g", i, f.Covered[i], f.Pix[i], want)
		}
	}
	for i := 4; i < 8; i++ {
		if f.Covered[i] {
			t.Errorf("pixel %d filled across a hole wider than 2", i)
		}
	}
}

// strokes first keeps the first pass only.
func TestStrokesFirst(t *testing.T) {
	rig := baseRig()
	rig.seconds = 3
	rig.y = func(t float64) float64 { return 40 + 30*math.Sin(2*math.Pi*t/2.4) }
	r := rig.recipe()
	r.Rows.Strokes = "first"
	res, err := NewSession(rig.recording()).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	f := res.Frames[0]
	// The first stroke runs up to 70 mm (t = 0.6 s) from the first line's
	// position (40 mm at t = 0, about 42.5 mm when the first field opens).
	top := f.OriginYMM
	bottom := f.OriginYMM - float64(f.Height-1)*f.PitchYMM
	if len(res.Frames) != 1 || top < 69 || top > 71.5 || bottom > 43 || bottom < 38.5 {
		t.Errorf("first stroke frame spans y %.1f … %.1f mm, want 40 … 70", bottom, top)
	}
}

// TestLongRestsKeepTheGapLimit: a hand scan that rests for most of the
// capture (the position wavering by ±0.05 mm, as a sensor does) and then
// moves at 30 mm/s. The automatic image.max_gap_mm follows the working
// speed: closed form 4 × 30 mm/s ÷ 20 lines/s = 6 mm, so the moving lines,
// 1.5 mm apart, are filled with no gap warning. (Taking "moving" against
// the mean spacing let the wavering count as motion and set the limit
// near 0.2 mm, striping the whole stroke.)
func TestLongRestsKeepTheGapLimit(t *testing.T) {
	rig := baseRig()
	rig.seconds = 10
	rig.y = func(t float64) float64 {
		if t < 8 {
			return 10 + 0.05*math.Sin(2*math.Pi*3.7*t)
		}
		return 10 + 30*(t-8)
	}
	r := rig.recipe()
	r.Image.PitchMM = 0.5
	res, err := NewSession(rig.recording()).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got := *res.Recipe.Image.MaxGapMM; math.Abs(got-6) > 1 {
		t.Errorf("automatic max_gap_mm %.3g mm, want about 6 mm (4 line spacings while moving)", got)
	}
	for _, w := range res.Report.Warnings {
		if strings.Contains(w, "rows have gaps") {
			t.Errorf("warning %q on a stroke whose lines are 1.5 mm apart", w)
		}
	}
}
