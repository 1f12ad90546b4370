package recipe

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"spotloom/internal/strictjson"
)

// KeyError is one invalid recipe value: the dotted key and what is wrong,
// including the values that are allowed.
type KeyError struct {
	Key string // e.g. "sweep.law"
	Msg string // e.g. `is "spiral": allowed values are uniform, sine, table`
}

func (e *KeyError) Error() string {
	return fmt.Sprintf("recipe key %s %s", strictjson.Quote(e.Key), e.Msg)
}

// Bounds on recipe values. They are far beyond any real rig; their job is
// to refuse, before any work, numbers whose products would overflow or
// whose frame could not be held in memory.
const (
	// MaxFramePixels bounds the size of one frame (4096 × 4096).
	MaxFramePixels = 16 << 20
	// maxLengthMM bounds every length and position in the recipe: 10 km.
	maxLengthMM = 1e7
	// maxSpeedMMS bounds the head speed: 10 km/s.
	maxSpeedMMS = 1e7
	// maxFrequencyHz bounds rows.carrier_hz (the highest capture rate).
	maxFrequencyHz = 1e10
	// maxPeriodS bounds sweep.sine_period_s: a day.
	maxPeriodS = 86400
	// minFrameSide is the fewest pixels across the field that still make a
	// picture; fewer is a pitch far too coarse for the field.
	minFrameSide = 4
)

// Validate checks every value of the recipe. The error (nil when the recipe
// is usable) lists every problem, one *KeyError each, joined with
// errors.Join; each names the key and the allowed values. A list key with
// many bad points gets one error that names the first and counts the rest,
// so the message stays short whatever the input; the checks are linear or
// n·log n in the length of the lists.
func (r Recipe) Validate() error {
	c := &checker{}
	if r.Format != RecipeFormat {
		c.bad("format", "is %s: expected %q", strictjson.Quote(r.Format), RecipeFormat)
	}
	r.checkTiming(c)
	geometry := r.checkSweep(c)
	r.checkRows(c)
	r.checkSignalAndImage(c, geometry)
	return errors.Join(c.errs...)
}

// checker collects the errors of a recipe check, in the order found.
type checker struct{ errs []error }

func (c *checker) bad(key, format string, args ...any) {
	c.errs = append(c.errs, &KeyError{Key: key, Msg: fmt.Sprintf(format, args...)})
}

func (c *checker) oneOf(key, v string, allowed []string) {
	if !slices.Contains(allowed, v) {
		c.bad(key, "is %s: allowed values are %s", strictjson.Quote(v), strings.Join(allowed, ", "))
	}
}

func (c *checker) mode(err error) {
	if err != nil {
		c.errs = append(c.errs, err)
	}
}

// finite reports whether p is set, saying so when it is set but not
// finite (and then reporting false).
func (c *checker) finite(key string, p *float64) bool {
	if p != nil && (math.IsNaN(*p) || math.IsInf(*p, 0)) {
		c.bad(key, "is %g: expected a finite number or null", *p)
		return false
	}
	return p != nil
}

func (r Recipe) checkTiming(c *checker) {
	c.oneOf("timing.edge", r.Timing.Edge, Edges)
	c.finite("timing.threshold", r.Timing.Threshold)
	if c.finite("timing.hysteresis", r.Timing.Hysteresis) && *r.Timing.Hysteresis < 0 {
		c.bad("timing.hysteresis", "is %g: expected 0 or more (volts), or null for automatic", *r.Timing.Hysteresis)
	}
}

// sweepGeometry says which parts of the sweep passed, so the frame's
// width can be checked from them.
type sweepGeometry struct{ field, distance, table bool }

func (r Recipe) checkSweep(c *checker) sweepGeometry {
	s := r.Sweep
	if s.Apertures < 1 || s.Apertures > 360 {
		c.bad("sweep.apertures", "is %d: expected a whole number from 1 to 360", s.Apertures)
	}
	_, err := ParseLaw(string(s.Law))
	c.mode(err)
	if s.Law != LawSine && s.Apertures >= 1 && r.Timing.PulsesPerRev != 1 && r.Timing.PulsesPerRev != s.Apertures {
		c.bad("timing.pulses_per_rev", "is %d: allowed values are %d (one pulse per aperture, sweep.apertures) or 1 (one pulse per revolution)", r.Timing.PulsesPerRev, s.Apertures)
	}
	g := sweepGeometry{field: s.checkField(c), table: true}
	if c.finite("sweep.delay_deg", s.DelayDeg) && math.Abs(*s.DelayDeg) >= 360 {
		c.bad("sweep.delay_deg", "is %g: expected degrees of wheel rotation above -360 and below 360, or null for automatic", *s.DelayDeg)
	}
	if n := len(s.ApertureOffsetsDeg); n != 0 && n != s.Apertures && s.Law != LawSine {
		c.bad("sweep.aperture_offsets_deg", "has %d values: expected none or one per aperture (%d)", n, s.Apertures)
	}
	offsets := listCheck{key: "sweep.aperture_offsets_deg", noun: "values"}
	for i, v := range s.ApertureOffsetsDeg {
		if math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > 90 {
			offsets.add("value %d is %g: expected degrees between -90 and 90", i, v)
		}
	}
	c.errs = offsets.appendTo(c.errs)
	c.oneOf("sweep.projection", s.Projection, Projections)
	if !(s.DistanceMM > 0) || s.DistanceMM > maxLengthMM {
		c.bad("sweep.distance_mm", "is %g: expected a distance above 0 mm and at most %g mm (10 km)", s.DistanceMM, float64(maxLengthMM))
	} else {
		g.distance = true
	}
	if c.finite("sweep.sine_period_s", s.SinePeriodS) && !(*s.SinePeriodS > 0 && *s.SinePeriodS <= maxPeriodS) {
		c.bad("sweep.sine_period_s", "is %g: expected a period above 0 s and at most %d s, or null for the measured index period", *s.SinePeriodS, maxPeriodS)
	}
	if s.Law == LawSine && !(s.SineKeep > 0 && s.SineKeep <= 1) {
		c.bad("sweep.sine_keep", "is %g: expected a fraction above 0 and at most 1 (0.9 keeps 90 %% of the swing)", s.SineKeep)
	}
	if s.Law == LawTable || len(s.Table) > 0 {
		g.table = s.checkTable(c)
	}
	return g
}

// checkField checks sweep.field_deg against the projection and the
// aperture spacing, reporting whether the frame's width can follow from it.
func (s Sweep) checkField(c *checker) bool {
	if !(s.FieldDeg > 0) || s.FieldDeg >= 360 || math.IsInf(s.FieldDeg, 0) {
		c.bad("sweep.field_deg", "is %g: expected an angle above 0° and below 360°", s.FieldDeg)
		return false
	}
	ok := true
	if s.Projection == "flat" && s.FieldDeg >= 180 && s.Law != LawTable {
		c.bad("sweep.field_deg", "is %g° with projection flat: a flat projection needs a field below 180°; use projection angular", s.FieldDeg)
		ok = false
	}
	if s.Law == LawUniform && s.Apertures >= 1 {
		spacing := 360 / float64(s.Apertures)
		if s.FieldDeg > spacing {
			c.bad("sweep.field_deg", "is %g° but %d apertures are %g° apart: the field must not be wider than the aperture spacing; check field_deg and apertures", s.FieldDeg, s.Apertures, spacing)
		}
	}
	return ok
}

// checkTable checks sweep.table's points, reporting whether they are
// usable.
func (s Sweep) checkTable(c *checker) bool {
	ok := true
	if len(s.Table) < 2 && s.Law == LawTable {
		c.bad("sweep.table", "has %d points: law table needs two or more [fraction_of_line, x_mm] points", len(s.Table))
		ok = false
	}
	table := listCheck{key: "sweep.table", noun: "points"}
	for i, p := range s.Table {
		if math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0) {
			table.add("point %d is [%g, %g]: expected finite numbers", i, p[0], p[1])
		} else if p[0] < 0 || p[0] > 1 {
			table.add("point %d has fraction_of_line %g: expected 0 to 1", i, p[0])
		} else if math.Abs(p[1]) > maxLengthMM {
			table.add("point %d has x_mm %g: expected at most %g mm either side of the centre", i, p[1], float64(maxLengthMM))
		} else if i > 0 && !(p[0] > s.Table[i-1][0]) {
			table.add("point %d has fraction_of_line %g after %g: fractions must increase", i, p[0], s.Table[i-1][0])
		}
	}
	c.errs = table.appendTo(c.errs)
	return ok && table.count == 0
}

func (r Recipe) checkRows(c *checker) {
	w := r.Rows
	_, err := ParseRowSource(string(w.Source))
	c.mode(err)
	if w.Source.ReadsPosition() {
		if len(w.Calibration) < 2 {
			c.bad("rows.calibration", "has %d points: source %s needs two or more [level, mm] points", len(w.Calibration), w.Source)
		}
	}
	if ch := r.Channels; ch.Position.IsSet() && ch.Position == ch.Index && w.Source != SourceTone {
		c.bad("channels.position", "names the index channel (%s) with rows.source %s: only a tone can share the index channel (rows.source tone, a two-input sound card), since a DC level cannot be told from the pulses", strictjson.Quote(string(ch.Index)), w.Source)
	}
	c.errs = checkCalibration(w.Calibration).appendTo(c.errs)
	if c.finite("rows.carrier_hz", w.CarrierHz) && !(*w.CarrierHz > 0 && *w.CarrierHz <= maxFrequencyHz) {
		c.bad("rows.carrier_hz", "is %g: expected a frequency above 0 Hz and at most %g Hz, or null for the strongest tone", *w.CarrierHz, float64(maxFrequencyHz))
	}
	if c.finite("rows.mm_per_step", w.MMPerStep) && (*w.MMPerStep == 0 || math.Abs(*w.MMPerStep) > maxLengthMM) {
		c.bad("rows.mm_per_step", "is %g: expected the head travel per step pulse in mm, not 0 and at most %g (negative to count down)", *w.MMPerStep, float64(maxLengthMM))
	}
	c.finite("rows.steps_threshold", w.StepsThreshold)
	if c.finite("rows.strokes_hysteresis_mm", w.StrokesHysteresisMM) && *w.StrokesHysteresisMM <= 0 {
		c.bad("rows.strokes_hysteresis_mm", "is %g: expected more than 0 mm, or null for automatic", *w.StrokesHysteresisMM)
	}
	if c.finite("rows.steps_hysteresis", w.StepsHysteresis) && *w.StepsHysteresis < 0 {
		c.bad("rows.steps_hysteresis", "is %g: expected 0 or more (the steps channel's unit), or null for automatic", *w.StepsHysteresis)
	}
	c.finite("rows.pulse_rest", w.PulseRest)
	if c.finite("rows.pulse_away", w.PulseAway) && !(*w.PulseAway > 0) {
		c.bad("rows.pulse_away", "is %g: expected how far from rows.pulse_rest a pulse goes before the tone is left out, above 0 (the index channel's unit), or null for automatic", *w.PulseAway)
	}
	if w.Source == SourceSteps {
		if w.MMPerStep == nil {
			c.bad("rows.mm_per_step", "is null: source steps needs the head travel per step pulse in mm")
		}
	}
	if c.finite("rows.speed_mm_s", w.SpeedMMS) && (*w.SpeedMMS == 0 || math.Abs(*w.SpeedMMS) > maxSpeedMMS) {
		c.bad("rows.speed_mm_s", "is %g: expected the head speed in mm/s, not 0 and at most %g (negative for a downward pass)", *w.SpeedMMS, float64(maxSpeedMMS))
	}
	c.oneOf("rows.strokes", w.Strokes, StrokeModes)
}

func (r Recipe) checkSignalAndImage(c *checker, g sweepGeometry) {
	s := r.Sweep
	c.oneOf("signal.baseline", r.Signal.Baseline, Baselines)
	if hz := r.Signal.ACCornerHz; math.IsNaN(hz) || math.IsInf(hz, 0) || hz < 0 || hz > 1000 {
		c.bad("signal.ac_corner_hz", "is %g: expected 0 (DC coupled) or the high-pass corner in Hz, up to 1000", hz)
	}
	pitch := r.Image.PitchMM
	if math.IsNaN(pitch) || pitch < 0 || pitch > maxLengthMM {
		c.bad("image.pitch_mm", "is %g: expected a pixel size above 0 mm and at most %g mm, or 0 for automatic", pitch, float64(maxLengthMM))
	} else if pitch > 0 && g.field && g.distance && g.table && slices.Contains(Laws, s.Law) && slices.Contains(Projections, s.Projection) {
		// The frame's width follows from the recipe alone: check it
		// before any work allocates it.
		cols := s.WidthMM()/pitch + 1
		switch {
		case cols > MaxFramePixels:
			c.bad("image.pitch_mm", "is %g: the field (%.4g mm wide) would be %.3g pixels across, more than a frame can hold (%d pixels): raise pitch_mm", pitch, s.WidthMM(), cols, MaxFramePixels)
		case cols < minFrameSide:
			c.bad("image.pitch_mm", "is %g: the field (%.4g mm wide) would be only %d pixels across: lower pitch_mm (at most %.3g for %d pixels), or 0 for automatic", pitch, s.WidthMM(), int(cols), s.WidthMM()/(minFrameSide-1), minFrameSide)
		}
	}
	if r.Image.FillGapsPx < 0 || r.Image.FillGapsPx > 16 {
		c.bad("image.fill_gaps_px", "is %d: expected 0 (no filling) to 16 pixels", r.Image.FillGapsPx)
	}
	if c.finite("signal.afterglow_us", r.Signal.AfterglowUS) && !(*r.Signal.AfterglowUS >= 0 && *r.Signal.AfterglowUS <= 1e6) {
		c.bad("signal.afterglow_us", "is %g: expected 0 (no afterglow) or the decay time constant in µs, up to 1000000, or null to estimate it", *r.Signal.AfterglowUS)
	}
	if c.finite("image.max_gap_mm", r.Image.MaxGapMM) && !(*r.Image.MaxGapMM >= 0 && *r.Image.MaxGapMM <= maxLengthMM) {
		c.bad("image.max_gap_mm", "is %g: expected the widest gap between lines to fill, 0 to %g mm, or null for automatic", *r.Image.MaxGapMM, float64(maxLengthMM))
	}
}

// WidthMM is the width of the field on the target in mm that the sweep
// law gives: 2·D·tan(F/2) for a flat projection, D·F (in radians) for an
// angular one, the span of x_mm for a table; a sine sweep keeps sine_keep
// of its swing. The sweep must be valid.
func (s Sweep) WidthMM() float64 {
	if s.Law == LawTable {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, p := range s.Table {
			lo, hi = math.Min(lo, p[1]), math.Max(hi, p[1])
		}
		return math.Max(hi-lo, 0)
	}
	half := s.FieldDeg / 2
	if s.Law == LawSine {
		half *= math.Min(s.SineKeep, 1)
	}
	t := half * math.Pi / 180
	if s.Projection == "angular" {
		return 2 * s.DistanceMM * t
	}
	return 2 * s.DistanceMM * math.Tan(t)
}

// checkCalibration checks the [level, mm] points of rows.calibration:
// finite numbers within the length bound, and no level given twice. The
// repeat check sorts the levels, so it is n·log n.
func checkCalibration(cal [][2]float64) *listCheck {
	c := &listCheck{key: "rows.calibration", noun: "points"}
	type point struct {
		level float64
		i     int
	}
	order := make([]point, 0, len(cal))
	for i, p := range cal {
		switch {
		case math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0):
			c.add("point %d is [%g, %g]: expected finite numbers", i, p[0], p[1])
		case math.Abs(p[1]) > maxLengthMM:
			c.add("point %d has mm %g: expected at most %g mm either way", i, p[1], float64(maxLengthMM))
		default:
			order = append(order, point{p[0], i})
		}
	}
	// Equal levels stay in file order, so the first repeat named is the
	// one a reader finds first.
	slices.SortFunc(order, func(a, b point) int {
		if c := cmp.Compare(a.level, b.level); c != 0 {
			return c
		}
		return cmp.Compare(a.i, b.i)
	})
	// Name the repeat a reader meets first in the file: the pair whose
	// later point comes earliest.
	repeats := 0
	var first [2]point
	for k := 1; k < len(order); k++ {
		a, b := order[k-1], order[k]
		if a.level != b.level {
			continue
		}
		if repeats == 0 || b.i < first[1].i {
			first = [2]point{a, b}
		}
		repeats++
	}
	if repeats > 0 {
		c.addCounted(fmt.Sprintf("points %d and %d have the same level %g: each level needs one mm value", first[0].i, first[1].i, first[0].level), repeats, "more points repeat a level")
	}
	return c
}

// listCheck gathers the problems of one list key and reports the first
// with a count of the rest, so a list of a million bad points gives one
// short error.
type listCheck struct {
	key, noun string
	first     string
	count     int // problems seen, the first included
	extra     []string
}

func (c *listCheck) add(format string, args ...any) {
	if c.count == 0 {
		c.first = fmt.Sprintf(format, args...)
	}
	c.count++
}

// addCounted records a problem that already stands for more than one: msg
// describes the first, and more (described by what) follow it.
func (c *listCheck) addCounted(msg string, n int, what string) {
	if n <= 0 {
		return
	}
	if n > 1 {
		msg += fmt.Sprintf(" (and %s %s)", strictjson.Count(n-1), what)
	}
	c.extra = append(c.extra, msg)
}

func (c *listCheck) appendTo(errs []error) []error {
	if c.count > 0 {
		msg := c.first
		if c.count > 1 {
			msg += fmt.Sprintf(" (and %s more %s with problems)", strictjson.Count(c.count-1), c.noun)
		}
		errs = append(errs, &KeyError{Key: c.key, Msg: msg})
	}
	for _, m := range c.extra {
		errs = append(errs, &KeyError{Key: c.key, Msg: m})
	}
	return errs
}
