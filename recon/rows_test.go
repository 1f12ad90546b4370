package recon

import (
	"context"
	"math"
	"testing"

	"spotloom/recon/recipe"
)

// Savitzky & Golay 1964, table of convolution weights: the 5-point
// quadratic smoothing filter is (−3, 12, 17, 12, −3)/35, and the 7-point
// one is (−2, 3, 6, 7, 6, 3, −2)/21.
func TestSavitzkyGolayPublishedWeights(t *testing.T) {
	for _, c := range []struct {
		half int
		want []float64
		norm float64
	}{
		{2, []float64{-3, 12, 17, 12, -3}, 35},
		{3, []float64{-2, 3, 6, 7, 6, 3, -2}, 21},
	} {
		w, err := SavitzkyGolay(c.half, 2, 0)
		if err != nil {
			t.Fatal(err)
		}
		for i := range w {
			if math.Abs(w[i]-c.want[i]/c.norm) > 1e-12 {
				t.Errorf("%d points: weight %d is %g, want %g/%g", 2*c.half+1, i, w[i], c.want[i], c.norm)
			}
		}
	}
	// A quadratic passes through the smoother unchanged, ends included.
	y := make([]float64, 40)
	for i := range y {
		x := float64(i)
		y[i] = 0.3*x*x - 2*x + 5
	}
	for i, v := range smoothSG(y, 3) {
		if math.Abs(v-y[i]) > 1e-9 {
			t.Fatalf("quadratic changed at %d: %g, want %g", i, v, y[i])
		}
	}
}

// A potentiometer fed with a 3 kHz sine and read AC-coupled: the peak
// amplitude carries the position. The carrier is found as the strongest
// tone and the rows follow the head.
func TestToneRows(t *testing.T) {
	rig := baseRig()
	rec := rig.recording()
	pos := rec.Channels[2].Samples
	const fc = 3000.0
	for i := range pos {
		tm := float64(i) / rig.rateHz
		amp := rig.positionV0 + rig.voltsPerMM*rig.y(tm)
		pos[i] = float32(amp*math.Sin(2*math.Pi*fc*tm) + 0.05)
	}
	r := rig.recipe()
	r.Rows.Source = "tone"
	res, err := NewSession(rec).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got := *res.Recipe.Rows.CarrierHz; math.Abs(got-fc) > 1 {
		t.Errorf("carrier %g Hz, want %g", got, fc)
	}
	worst := 0.0
	for _, l := range res.Lines[2 : len(res.Lines)-2] {
		want := rig.y((l.FieldStartS + l.FieldEndS) / 2)
		worst = math.Max(worst, math.Abs(l.YMM-want))
	}
	if worst > 0.3 {
		t.Errorf("tone rows up to %.3f mm from the true head position", worst)
	}
}

// Step pulses of 0.5 mm each: rows count them.
func TestStepRows(t *testing.T) {
	rig := baseRig()
	rec := rig.recording()
	steps := make([]float32, rec.Frames())
	const mmPerStep = 0.5
	last := math.Floor(rig.y(0) / mmPerStep)
	for i := range steps {
		k := math.Floor(rig.y(float64(i)/rig.rateHz) / mmPerStep)
		if k != last {
			for j := i; j < min(i+10, len(steps)); j++ {
				steps[j] = 3.3
			}
			last = k
		}
	}
	rec.Channels[2].Samples = steps
	r := rig.recipe()
	r.Rows.Source = "steps"
	r.Channels.Position = ""
	r.Channels.Steps = "2"
	r.Rows.MMPerStep = recipe.Float(mmPerStep)
	res, err := NewSession(rec).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	y0 := rig.y(0)
	for _, l := range res.Lines {
		want := rig.y((l.FieldStartS+l.FieldEndS)/2) - y0
		if math.Abs(l.YMM-want) > mmPerStep {
			t.Errorf("line %d: %.3f mm, head moved %.3f mm", l.Number, l.YMM, want)
		}
	}
}

// Reversals split the capture into strokes; split makes a frame each.
func TestStrokesSplit(t *testing.T) {
	rig := baseRig()
	rig.seconds = 3
	rig.y = func(t float64) float64 { return 40 + 30*math.Sin(2*math.Pi*t/2.4) } // reversals at 0.6 s and 1.8 s
	r := rig.recipe()
	r.Rows.Strokes = "split"
	res, err := NewSession(rig.recording()).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Report.Strokes != 3 || len(res.Frames) != 3 {
		t.Fatalf("%d strokes, %d frames; want 3 and 3", res.Report.Strokes, len(res.Frames))
	}
	for i, f := range res.Frames {
		if f.Stroke != i {
			t.Errorf("frame %d is stroke %d", i, f.Stroke)
		}
		if f.Report.Columns != f.Width || f.Report.Rows != f.Height || !(f.Report.Coverage > 0.9) {
			t.Errorf("frame %d report %d × %d coverage %g, frame %d × %d", i, f.Report.Columns, f.Report.Rows, f.Report.Coverage, f.Width, f.Height)
		}
		// docs/pipeline.md "Build report": origin_x_mm, origin_y_mm are the
		// centre of pixel column 0 / row 0.
		if f.Report.OriginXMM != f.OriginXMM || f.Report.OriginYMM != f.OriginYMM {
			t.Errorf("frame %d report origin %g, %g mm, frame's %g, %g mm", i, f.Report.OriginXMM, f.Report.OriginYMM, f.OriginXMM, f.OriginYMM)
		}
	}
	if o := res.Frames[0]; res.Report.OriginXMM != o.OriginXMM || res.Report.OriginYMM != o.OriginYMM {
		t.Errorf("build report origin %g, %g mm, first frame's %g, %g mm", res.Report.OriginXMM, res.Report.OriginYMM, o.OriginXMM, o.OriginYMM)
	}
	// The automatic reversal hysteresis is the larger of 2 % of the travel
	// (60 mm, the sine's peak to peak: 1.2 mm) and six times the smoothed
	// position's noise, which this clean sensor keeps far below that; the
	// resolved recipe gives it.
	if h := res.Recipe.Rows.StrokesHysteresisMM; h == nil || math.Abs(*h-1.2) > 0.02 {
		t.Errorf("resolved rows.strokes_hysteresis_mm %v, want 1.2 mm (2 %% of 60 mm)", h)
	}
	// One given in the recipe is used: more than the travel finds no
	// reversal; one well inside it the same two.
	for _, c := range []struct {
		hyst    float64
		strokes int
	}{{70, 1}, {5, 3}} {
		r := r.Clone()
		r.Rows.StrokesHysteresisMM = &c.hyst
		res, err := NewSession(rig.recording()).Build(context.Background(), r, nil)
		if err != nil {
			t.Fatal(err)
		}
		if res.Report.Strokes != c.strokes || len(res.Frames) != c.strokes || *res.Recipe.Rows.StrokesHysteresisMM != c.hyst {
			t.Errorf("hysteresis %g mm: %d strokes, %d frames, resolved %g; want %d", c.hyst, res.Report.Strokes, len(res.Frames), *res.Recipe.Rows.StrokesHysteresisMM, c.strokes)
		}
	}
}
