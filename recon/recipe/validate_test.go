package recipe_test

import (
	"errors"
	"math"
	"runtime"
	"strings"
	"testing"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

// heapGrowth runs f and returns the bytes it allocated.
func heapGrowth(f func()) uint64 {
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	f()
	runtime.ReadMemStats(&after)
	return after.TotalAlloc - before.TotalAlloc
}

// A recipe with thousands of bad points and megabyte-long values gives a
// short error in bounded memory: one line per key, values cut to
// strictjson.QuoteLimit characters, the rest counted.
func TestValidateErrorStaysShortOnHugeBadRecipe(t *testing.T) {
	r := recipe.Default()
	const n = 100_000
	r.Rows.Calibration = make([][2]float64, n) // every level 0: n-1 repeats
	r.Sweep.Law = recipe.Law(strings.Repeat("spiral", 200_000))
	r.Sweep.Table = make([][2]float64, n)
	for i := range r.Sweep.Table {
		r.Sweep.Table[i] = [2]float64{math.NaN(), 1}
	}
	r.Sweep.ApertureOffsetsDeg = make([]float64, n)
	for i := range r.Sweep.ApertureOffsetsDeg {
		r.Sweep.ApertureOffsetsDeg[i] = 1000
	}
	var err error
	alloc := heapGrowth(func() { err = r.Validate() })
	if err == nil {
		t.Fatal("a recipe full of bad points validates")
	}
	msg := err.Error()
	if len(msg) > 4000 {
		t.Errorf("error is %d bytes long; want a few lines: %.300s", len(msg), msg)
	}
	// The lists themselves take n·16 bytes; the check may sort an index of
	// them, but not hold a message per point or per pair.
	if alloc > 32<<20 {
		t.Errorf("Validate allocated %d MB", alloc>>20)
	}
	for _, want := range []string{
		`"rows.calibration" points 0 and 1 have the same level 0: each level needs one mm value (and 99,998 more points repeat a level)`,
		`"sweep.table" point 0 is [NaN, 1]: expected finite numbers (and 99,999 more points with problems)`,
		`"sweep.aperture_offsets_deg" value 0 is 1000`,
		`"sweep.law" is "spiralspiral`,
		`… (1,200,000 characters)`,
	} {
		if !strings.Contains(msg, want) {
			t.Errorf("error does not say %q:\n%s", want, msg)
		}
	}
	// One *KeyError per key, not per point.
	if k := strings.Count(msg, "\n") + 1; k > 12 {
		t.Errorf("error has %d lines", k)
	}
}

// Long lists validate in n·log n: a million-point calibration and table
// finish (the old pairwise repeat check needed 5e11 comparisons).
// BenchmarkValidateCalibration gives the figure.
func TestValidateMillionPointLists(t *testing.T) {
	r := recipe.Default()
	r.Rows.Calibration = ramp(1_000_000)
	r.Image.PitchMM = 0
	if err := r.Validate(); err != nil {
		t.Fatalf("a long increasing calibration is refused: %.300v", err)
	}
	r.Sweep.Law = "table"
	r.Sweep.Table = make([][2]float64, 1_000_000)
	for i := range r.Sweep.Table {
		f := float64(i) / float64(len(r.Sweep.Table))
		r.Sweep.Table[i] = [2]float64{f, 200*f - 100}
	}
	if err := r.Validate(); err != nil {
		t.Fatalf("a long table is refused: %.300v", err)
	}
	// A repeat deep inside, out of order, is still found.
	r.Rows.Calibration[777_777][0] = r.Rows.Calibration[3][0]
	err := r.Validate()
	if err == nil || !strings.Contains(err.Error(), "points 3 and 777777 have the same level") {
		t.Errorf("repeat not named: %v", err)
	}
}

// ramp is an n-point calibration with rising levels (volts) and mm.
func ramp(n int) [][2]float64 {
	c := make([][2]float64, n)
	for i := range c {
		c[i] = [2]float64{float64(i) * 1e-3, float64(i) * 4e-4}
	}
	return c
}

func BenchmarkValidateCalibration(b *testing.B) {
	r := recipe.Default()
	r.Rows.Calibration = ramp(100_000)
	// Shuffle deterministically, so the sort has work to do.
	for i := range r.Rows.Calibration {
		j := (i * 7919) % len(r.Rows.Calibration)
		r.Rows.Calibration[i], r.Rows.Calibration[j] = r.Rows.Calibration[j], r.Rows.Calibration[i]
	}
	b.ReportAllocs()
	for b.Loop() {
		if err := r.Validate(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(r.Rows.Calibration))*float64(b.N)/b.Elapsed().Seconds(), "points/s")
}

// Numbers whose products overflow, and pitches that make a frame of
// billions or of a handful of pixels, are refused by the recipe check
// before any work, naming the key.
func TestValidateRefusesOverflowingNumbers(t *testing.T) {
	for _, c := range []struct {
		edit func(r *recipe.Recipe)
		want string
	}{
		{func(r *recipe.Recipe) { r.Sweep.DistanceMM = 1e308 }, `"sweep.distance_mm" is 1e+308`},
		{func(r *recipe.Recipe) { r.Sweep.DistanceMM = math.Inf(1) }, `"sweep.distance_mm" is +Inf`},
		{func(r *recipe.Recipe) { r.Image.PitchMM = 1e-300 }, `"image.pitch_mm" is 1e-300: the field (267.9 mm wide) would be 2.68e+302 pixels across`},
		{func(r *recipe.Recipe) { r.Image.PitchMM = 1e-5 }, `more than a frame can hold`},
		{func(r *recipe.Recipe) { r.Image.PitchMM = 100 }, `"image.pitch_mm" is 100: the field (267.9 mm wide) would be only 3 pixels across`},
		{func(r *recipe.Recipe) { r.Image.PitchMM = 1e308 }, `"image.pitch_mm" is 1e+308`},
		{func(r *recipe.Recipe) { r.Rows.Source = "even"; r.Rows.SpeedMMS = recipe.Float(1e308) }, `"rows.speed_mm_s" is 1e+308`},
		{func(r *recipe.Recipe) { r.Rows.Source = "steps"; r.Rows.MMPerStep = recipe.Float(-1e300) }, `"rows.mm_per_step" is -1e+300`},
		{func(r *recipe.Recipe) { r.Rows.Calibration[1][1] = 1e308 }, `"rows.calibration" point 1 has mm 1e+308`},
		{func(r *recipe.Recipe) { r.Rows.CarrierHz = recipe.Float(1e300) }, `"rows.carrier_hz" is 1e+300`},
		{func(r *recipe.Recipe) { r.Rows.StepsHysteresis = recipe.Float(-0.1) }, `"rows.steps_hysteresis" is -0.1`},
		{func(r *recipe.Recipe) { r.Rows.StrokesHysteresisMM = recipe.Float(0) }, `"rows.strokes_hysteresis_mm" is 0`},
		{func(r *recipe.Recipe) { r.Rows.PulseAway = recipe.Float(0) }, `"rows.pulse_away" is 0`},
		{func(r *recipe.Recipe) { r.Rows.PulseRest = recipe.Float(math.NaN()) }, `"rows.pulse_rest" is NaN`},
		{func(r *recipe.Recipe) { r.Rows.StepsThreshold = recipe.Float(math.Inf(1)) }, `"rows.steps_threshold" is +Inf`},
		{func(r *recipe.Recipe) { r.Sweep.DelayDeg = recipe.Float(1e300) }, `"sweep.delay_deg" is 1e+300`},
		{func(r *recipe.Recipe) { r.Sweep.SinePeriodS = recipe.Float(1e300) }, `"sweep.sine_period_s" is 1e+300`},
		{func(r *recipe.Recipe) {
			r.Sweep.Law, r.Sweep.Table = "table", [][2]float64{{0, -1e308}, {1, 1e308}}
		}, `"sweep.table" point 0 has x_mm -1e+308`},
	} {
		r := recipe.Default()
		c.edit(&r)
		err := r.Validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Validate: %v\nwant %q", err, c.want)
		}
		var ke *recipe.KeyError
		if err != nil && !errors.As(err, &ke) {
			t.Errorf("%v is not a *KeyError", err)
		}
	}
	// The bounds leave real rigs alone: a 10 m stand-off and a 10 µm pitch
	// on a 2 mm table sweep are fine.
	r := recipe.Default()
	r.Sweep.DistanceMM, r.Image.PitchMM = 10_000, 0
	if err := r.Validate(); err != nil {
		t.Error(err)
	}
	r = recipe.Default()
	r.Sweep.Law, r.Sweep.Table, r.Image.PitchMM = "table", [][2]float64{{0, -1}, {1, 1}}, 0.01
	if err := r.Validate(); err != nil {
		t.Error(err)
	}
}

// WidthMM agrees with the engine's projection (recon.Project) at the field
// edges and with the closed form tan 15° = 2 − √3.
func TestSweepWidth(t *testing.T) {
	s := recipe.Default().Sweep // flat, 30°, 500 mm
	closed := 2 * 500 * (2 - math.Sqrt(3))
	if got := s.WidthMM(); math.Abs(got-closed) > 1e-9 {
		t.Errorf("flat width %g, closed form %g", got, closed)
	}
	for _, proj := range recipe.Projections {
		s.Projection = proj
		want := recon.Project(proj, s.DistanceMM, 15) - recon.Project(proj, s.DistanceMM, -15)
		if got := s.WidthMM(); math.Abs(got-want) > 1e-9 {
			t.Errorf("%s width %g, recon.Project gives %g", proj, got, want)
		}
	}
	// A sine sweep keeping 0.9 of its swing spans the projection of ±0.9·F/2.
	s.Law, s.Projection, s.SineKeep = "sine", "angular", 0.9
	if got, want := s.WidthMM(), 500*0.9*30*math.Pi/180; math.Abs(got-want) > 1e-9 {
		t.Errorf("sine width %g, want %g", got, want)
	}
}

// BenchmarkParseLongCalibration parses a recipe holding a 100 000-point
// calibration (about 3 MB of JSON).
func BenchmarkParseLongCalibration(b *testing.B) {
	r := recipe.Default()
	r.Rows.Calibration = ramp(100_000)
	data := r.JSON()
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		if _, err := recipe.Parse(data); err != nil {
			b.Fatal(err)
		}
	}
}
