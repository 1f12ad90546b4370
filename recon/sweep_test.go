package recon

import (
	"context"
	"math"
	"slices"
	"strings"
	"testing"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// Flat projection against the closed form x = D·tan θ, angular against the
// arc length x = D·θ (θ in radians).
func TestProjection(t *testing.T) {
	for _, th := range []float64{-15, -7.5, 0, 3, 12.5} {
		want := 500 * math.Tan(th*math.Pi/180)
		if got := Project("flat", 500, th); math.Abs(got-want) > 1e-9 {
			t.Errorf("flat %g°: %g, want %g", th, got, want)
		}
		if got := Project("angular", 500, th); math.Abs(got-500*th*math.Pi/180) > 1e-9 {
			t.Errorf("angular %g°: %g", th, got)
		}
	}
	// 10° at 500 mm: 500·tan 10° = 88.163 mm (tan 10° = 0.176327, from
	// a table of tangents).
	if got := Project("flat", 500, 10); math.Abs(got-88.163) > 0.001 {
		t.Errorf("flat 10° at 500 mm = %g, want 88.163", got)
	}
	// The lookup table used by gridding matches the closed form.
	m, err := lawMap(recipe.Sweep{Law: "uniform", FieldDeg: 30, Projection: "flat", DistanceMM: 500})
	if err != nil {
		t.Fatal(err)
	}
	for th := -15.0; th <= 15; th += 0.37 {
		if d := math.Abs(m.x(th) - 500*math.Tan(th*math.Pi/180)); d > 1e-5 {
			t.Errorf("table at %g° is %g mm off", th, d)
		}
	}
}

// sineRecording is a resonant mirror: one index pulse per period P at the
// phase where φ = −delay, beam angle (field/2)·sin φ, flat projection, the
// head moving at a steady speed over bright dots.
func sineRecording(rate, periodS, fieldDeg, delayDeg, distance, seconds, speed float64, scene func(x, y float64) float64) *capture.Recording {
	n := int(rate * seconds)
	det := make([]float32, n)
	idx := make([]float32, n)
	for i := range det {
		t := float64(i) / rate
		cyc := t / periodS
		ph := 360*(cyc-math.Floor(cyc)) - delayDeg
		theta := fieldDeg / 2 * math.Sin(ph*math.Pi/180)
		x := distance * math.Tan(theta*math.Pi/180)
		det[i] = float32(scene(x, speed*t))
		// Index pulse: edges ramped over 4 samples centred on the true
		// edge time (the start of each period), high for 5 % of it.
		f := cyc - math.Floor(cyc)
		if f > 0.5 {
			f--
		}
		d := f * periodS * rate // samples from the edge
		idx[i] = float32(math.Min(math.Max(math.Min(d/4+0.5, (0.05*periodS*rate-d)/4+0.5), 0), 1))
	}
	return &capture.Recording{SampleRateHz: rate, Channels: []capture.Channel{
		{Name: "detector", Samples: det}, {Name: "index", Samples: idx},
	}}
}

func sineRecipe(fieldDeg, distance, speed float64) recipe.Recipe {
	r := recipe.Default()
	r.Channels = recipe.Channels{Detector: "0", Index: "1"}
	r.Sweep.Law = "sine"
	r.Sweep.FieldDeg = fieldDeg
	r.Sweep.DistanceMM = distance
	r.Rows.Source = "even"
	r.Rows.SpeedMMS = recipe.Float(speed)
	r.Signal.Baseline = "none"
	return r
}

// The sine law reproduces a mirror of known period, swing and delay: the
// dots land where they are, forward and backward lines agree, the period
// and the delay are found.
func TestSineLaw(t *testing.T) {
	const period, delay = 2e-3, 12.0
	// Dots shifted 5 mm off the field axis, so the scene is not its own
	// mirror image (see TestSineSymmetricScene).
	dots := dotScene(20, 3)
	scene := func(x, y float64) float64 { return dots(x-5, y) }
	rec := sineRecording(200e3, period, 40, delay, 300, 1.2, 100, scene)
	s := NewSession(rec)
	res, err := s.Build(context.Background(), sineRecipe(40, 300, 100), nil)
	if err != nil {
		t.Fatal(err)
	}
	if p := *res.Recipe.Sweep.SinePeriodS; math.Abs(p-period) > 1e-7 {
		t.Errorf("period %g s, want %g", p, period)
	}
	if d := res.Report.DelayDeg; math.Abs(d-delay) > 0.3 {
		t.Errorf("delay %g°, want %g°", d, delay)
	}
	if math.Abs(res.Report.LineRateHz-2/period) > 1 {
		t.Errorf("line rate %g Hz, want %g (two lines per period)", res.Report.LineRateHz, 2/period)
	}
	// x extent: ±D·tan(keep·field/2).
	half := 300 * math.Tan(0.9*20*math.Pi/180)
	f := res.Frames[0]
	if end := f.OriginXMM + float64(f.Width-1)*f.PitchXMM; f.OriginXMM > -half || end < half || math.Abs(f.OriginXMM+end) > 1e-9 {
		t.Errorf("frame spans x = %g … %g mm, want ±%g centred", f.OriginXMM, end, half)
	}
	rms, sx, sy, n := dotFit(t, f, 20, 0.6)
	t.Logf("sine: %d dots, rms %.3f, scale %.4f %.4f", n, rms, sx, sy)
	if rms > 0.3 || math.Abs(sx-1) > 0.005 || math.Abs(sy-1) > 0.005 {
		t.Errorf("sine law dots: rms %.3f mm, scale %.4f %.4f", rms, sx, sy)
	}
	if res.Lines[1].Aperture != 1 || res.Lines[0].Aperture != 0 {
		t.Errorf("forward/backward lines not marked: %+v %+v", res.Lines[0], res.Lines[1])
	}
}

// The table law with a table measured from the flat projection of the
// wheel (61 points, fraction of line from the index edge → x) reproduces
// the geometry of the uniform law.
func TestTableLaw(t *testing.T) {
	rig := baseRig()
	r := rig.recipe()
	r.Sweep.Law = "table"
	spacing := 90.0
	for i := 0; i <= 60; i++ {
		theta := -rig.fieldDeg/2 + rig.fieldDeg*float64(i)/60
		f := (theta + rig.fieldDeg/2 + rig.delayDeg) / spacing
		r.Sweep.Table = append(r.Sweep.Table, [2]float64{f, rig.distanceMM * math.Tan(theta*math.Pi/180)})
	}
	res, err := NewSession(rig.recording()).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Report.DelayDeg != 0 {
		t.Errorf("a table is measured from the index edge: delay %g, want 0", res.Report.DelayDeg)
	}
	f := res.Frames[0]
	half := rig.distanceMM * math.Tan(15*math.Pi/180)
	if end := f.OriginXMM + float64(f.Width-1)*f.PitchXMM; f.OriginXMM > -half || end < half || math.Abs(f.OriginXMM+end) > 1e-9 {
		t.Errorf("frame spans x = %g … %g mm, want ±%g centred", f.OriginXMM, end, half)
	}
	rms, sx, sy, _ := dotFit(t, f, 20, 0.6)
	if rms > 0.3 || math.Abs(sx-1) > 0.005 || math.Abs(sy-1) > 0.005 {
		t.Errorf("table law dots: rms %.3f mm, scale %.4f %.4f", rms, sx, sy)
	}
}

// Reverse mirrors the columns: the frame of a reversed build is the
// left-right mirror of the plain one.
func TestReverse(t *testing.T) {
	rig := baseRig()
	s := NewSession(rig.recording())
	plain, err := s.Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	r := rig.recipe()
	r.Sweep.Reverse = true
	rev, err := s.Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	a, b := plain.Frames[0], rev.Frames[0]
	if a.Width != b.Width || a.Height != b.Height {
		t.Fatalf("sizes %d×%d and %d×%d", a.Width, a.Height, b.Width, b.Height)
	}
	for row := 0; row < a.Height; row += 7 {
		for col := 0; col < a.Width; col += 5 {
			va, _ := a.At(col, row)
			vb, _ := b.At(a.Width-1-col, row)
			if math.Abs(float64(va-vb)) > 1e-4 {
				t.Fatalf("(%d,%d): %g, mirrored %g", col, row, va, vb)
			}
		}
	}
}

// A scene that is its own mirror image across the field cannot tell the
// sine delay from the same ±90°: the build keeps the one nearer 0° and
// says so.
func TestSineSymmetricScene(t *testing.T) {
	rec := sineRecording(200e3, 2e-3, 40, 12, 300, 1.2, 100, dotScene(20, 3))
	res, err := NewSession(rec).Build(context.Background(), sineRecipe(40, 300, 100), nil)
	if err != nil {
		t.Fatal(err)
	}
	if d := res.Report.DelayDeg; math.Abs(d-12) > 0.3 {
		t.Errorf("delay %g°, want 12°", d)
	}
	if !strings.Contains(strings.Join(res.Report.Warnings, " "), "could also be about -7") {
		t.Errorf("no warning about the mirrored delay: %q", res.Report.Warnings)
	}
}

// TestDelayWithWrongFieldAngle: a recipe whose field_deg is too small (a
// default left in place) must not hide the beam-off stretch. A wheel of 8
// apertures (45° apart) sweeping 40° leaves only 5° of beam-off; with the
// recipe saying 30°, the delay is still found (the synthetic rig's own
// delay, a closed-form input) and the mismatch is reported.
func TestDelayWithWrongFieldAngle(t *testing.T) {
	w := baseRig()
	w.apertures, w.fieldDeg, w.delayDeg, w.pulseDeg = 8, 40, 2.5, 1
	w.scene = func(x, y float64) float64 { return 0.05 } // a dim, even sheet
	rec := w.recording()
	r := w.recipe()
	r.Sweep.FieldDeg = 30
	res, err := NewSession(rec).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if d := res.Report.DelayDeg; math.Abs(d-w.delayDeg) > 0.2 {
		t.Errorf("delay %.3f°, the rig's %.3f°", d, w.delayDeg)
	}
	warned := false
	for _, m := range res.Report.Warnings {
		warned = warned || strings.Contains(m, "beam-on stretch lasts")
	}
	if !warned {
		t.Errorf("no field mismatch warning: %q", res.Report.Warnings)
	}
}

// TestNegativeDetectorWithoutPhotonNoise: a negative-going detector whose
// noise is additive only (the same with the beam on and off, as in a
// hand-made synthetic capture) gives the profile nothing to tell its
// polarity by; signal.invert then says which way it goes, and with it the
// delay is the rig's own (a closed-form input).
func TestNegativeDetectorWithoutPhotonNoise(t *testing.T) {
	w := baseRig()
	w.apertures, w.fieldDeg, w.delayDeg = 6, 30, 5 // beam on exactly half of each line
	w.scene = func(x, y float64) float64 {
		c := math.Cos(x / 40)
		return -0.4 - 0.4*c*c
	}
	r := w.recipe()
	r.Signal.Invert = true
	res, err := NewSession(w.recording()).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if d := res.Report.DelayDeg; math.Abs(d-w.delayDeg) > 0.2 {
		t.Errorf("delay %.3f°, the rig's %.3f°", d, w.delayDeg)
	}
	if slices.Contains(res.Report.Warnings, WarnNegativeDetector) {
		t.Errorf("warned about invert with invert on: %q", res.Report.Warnings)
	}
}

// TestDelayWithDarkBarsInTheField: dark parts of the scene that sit at the
// same place on every line (the holes of a dot grid under a head that has
// hardly moved) pull the mean line down to the beam-off level inside the
// field; they must not cut the field short. The delay is the rig's own.
func TestDelayWithDarkBarsInTheField(t *testing.T) {
	w := baseRig()
	w.apertures, w.fieldDeg, w.delayDeg = 6, 30, 9
	w.scene = func(x, y float64) float64 {
		for _, hole := range [][2]float64{{-95, -88}, {-20, -14}, {30, 35}, {70, 74}} {
			if x > hole[0] && x < hole[1] {
				return 0.06 // a hole: well below half-way to the beam-off level
			}
		}
		return 0.3
	}
	res, err := NewSession(w.recording()).Build(context.Background(), w.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if d := res.Report.DelayDeg; math.Abs(d-w.delayDeg) > 0.2 {
		t.Errorf("delay %.3f°, the rig's %.3f°", d, w.delayDeg)
	}
}
