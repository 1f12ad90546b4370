package recipe

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
)

// KeyError is one invalid recipe value: the dotted key and what is wrong,
// including the values that are allowed.
type KeyError struct {
	Key string // e.g. "sweep.law"
	Msg string // e.g. `is "spiral": allowed values are uniform, sine, table`
}

func (e *KeyError) Error() string { return fmt.Sprintf("recipe key %q %s", e.Key, e.Msg) }

// Validate checks every value of the recipe. The error (nil when the recipe
// is usable) lists every problem, one *KeyError each, joined with
// errors.Join; each names the key and the allowed values.
func (r Recipe) Validate() error {
	var errs []error
	bad := func(key, format string, args ...any) {
		errs = append(errs, &KeyError{Key: key, Msg: fmt.Sprintf(format, args...)})
	}
	oneOf := func(key, v string, allowed []string) {
		if !slices.Contains(allowed, v) {
			bad(key, "is %q: allowed values are %s", v, strings.Join(allowed, ", "))
		}
	}
	finite := func(key string, p *float64) bool {
		if p != nil && (math.IsNaN(*p) || math.IsInf(*p, 0)) {
			bad(key, "is %g: expected a finite number or null", *p)
			return false
		}
		return p != nil
	}

	if r.Format != RecipeFormat {
		bad("format", "is %q: expected %q", r.Format, RecipeFormat)
	}

	// timing
	oneOf("timing.edge", r.Timing.Edge, Edges)
	finite("timing.threshold", r.Timing.Threshold)
	if finite("timing.hysteresis", r.Timing.Hysteresis) && *r.Timing.Hysteresis < 0 {
		bad("timing.hysteresis", "is %g: expected 0 or more (volts), or null for automatic", *r.Timing.Hysteresis)
	}

	// sweep
	s := r.Sweep
	if s.Apertures < 1 || s.Apertures > 360 {
		bad("sweep.apertures", "is %d: expected a whole number from 1 to 360", s.Apertures)
	}
	oneOf("sweep.law", s.Law, Laws)
	if s.Law != "sine" && s.Apertures >= 1 && r.Timing.PulsesPerRev != 1 && r.Timing.PulsesPerRev != s.Apertures {
		bad("timing.pulses_per_rev", "is %d: allowed values are %d (one pulse per aperture, sweep.apertures) or 1 (one pulse per revolution)", r.Timing.PulsesPerRev, s.Apertures)
	}
	if !(s.FieldDeg > 0) || s.FieldDeg >= 360 || math.IsInf(s.FieldDeg, 0) {
		bad("sweep.field_deg", "is %g: expected an angle above 0° and below 360°", s.FieldDeg)
	} else {
		if s.Projection == "flat" && s.FieldDeg >= 180 && s.Law != "table" {
			bad("sweep.field_deg", "is %g° with projection flat: a flat projection needs a field below 180°; use projection angular", s.FieldDeg)
		}
		if s.Law == "uniform" && s.Apertures >= 1 {
			spacing := 360 / float64(s.Apertures)
			if s.FieldDeg > spacing {
				bad("sweep.field_deg", "is %g° but %d apertures are %g° apart: the field must not be wider than the aperture spacing; check field_deg and apertures", s.FieldDeg, s.Apertures, spacing)
			}
		}
	}
	finite("sweep.delay_deg", s.DelayDeg)
	if n := len(s.ApertureOffsetsDeg); n != 0 && n != s.Apertures && s.Law != "sine" {
		bad("sweep.aperture_offsets_deg", "has %d values: expected none or one per aperture (%d)", n, s.Apertures)
	}
	for i, v := range s.ApertureOffsetsDeg {
		if math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > 90 {
			bad("sweep.aperture_offsets_deg", "value %d is %g: expected degrees between -90 and 90", i, v)
		}
	}
	oneOf("sweep.projection", s.Projection, Projections)
	if !(s.DistanceMM > 0) || math.IsInf(s.DistanceMM, 0) {
		bad("sweep.distance_mm", "is %g: expected a distance above 0 mm", s.DistanceMM)
	}
	if finite("sweep.sine_period_s", s.SinePeriodS) && !(*s.SinePeriodS > 0) {
		bad("sweep.sine_period_s", "is %g: expected a period above 0 s, or null for the measured index period", *s.SinePeriodS)
	}
	if s.Law == "sine" && !(s.SineKeep > 0 && s.SineKeep <= 1) {
		bad("sweep.sine_keep", "is %g: expected a fraction above 0 and at most 1 (0.9 keeps 90 %% of the swing)", s.SineKeep)
	}
	if s.Law == "table" || len(s.Table) > 0 {
		if len(s.Table) < 2 && s.Law == "table" {
			bad("sweep.table", "has %d points: law table needs two or more [fraction_of_line, x_mm] points", len(s.Table))
		}
		for i, p := range s.Table {
			if math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0) {
				bad("sweep.table", "point %d is [%g, %g]: expected finite numbers", i, p[0], p[1])
			} else if p[0] < 0 || p[0] > 1 {
				bad("sweep.table", "point %d has fraction_of_line %g: expected 0 to 1", i, p[0])
			} else if i > 0 && !(p[0] > s.Table[i-1][0]) {
				bad("sweep.table", "point %d has fraction_of_line %g after %g: fractions must increase", i, p[0], s.Table[i-1][0])
			}
		}
	}

	// rows
	w := r.Rows
	oneOf("rows.source", w.Source, RowSources)
	if w.Source == "position" || w.Source == "tone" {
		if len(w.Calibration) < 2 {
			bad("rows.calibration", "has %d points: source %s needs two or more [level, mm] points", len(w.Calibration), w.Source)
		}
	}
	for i, p := range w.Calibration {
		if math.IsNaN(p[0]) || math.IsNaN(p[1]) || math.IsInf(p[0], 0) || math.IsInf(p[1], 0) {
			bad("rows.calibration", "point %d is [%g, %g]: expected finite numbers", i, p[0], p[1])
		}
		for j := 0; j < i; j++ {
			if w.Calibration[j][0] == p[0] {
				bad("rows.calibration", "points %d and %d have the same level %g: each level needs one mm value", j, i, p[0])
			}
		}
	}
	if finite("rows.carrier_hz", w.CarrierHz) && !(*w.CarrierHz > 0) {
		bad("rows.carrier_hz", "is %g: expected a frequency above 0 Hz, or null for the strongest tone", *w.CarrierHz)
	}
	if finite("rows.mm_per_step", w.MMPerStep) && *w.MMPerStep == 0 {
		bad("rows.mm_per_step", "is 0: expected the head travel per step pulse in mm (negative to count down)")
	}
	if w.Source == "steps" {
		if w.MMPerStep == nil {
			bad("rows.mm_per_step", "is null: source steps needs the head travel per step pulse in mm")
		}
	}
	if finite("rows.speed_mm_s", w.SpeedMMS) && *w.SpeedMMS == 0 {
		bad("rows.speed_mm_s", "is 0: expected the head speed in mm/s (negative for a downward pass)")
	}
	oneOf("rows.strokes", w.Strokes, StrokeModes)

	// signal, image
	oneOf("signal.baseline", r.Signal.Baseline, Baselines)
	if c := r.Signal.ACCornerHz; math.IsNaN(c) || math.IsInf(c, 0) || c < 0 || c > 1000 {
		bad("signal.ac_corner_hz", "is %g: expected 0 (DC coupled) or the high-pass corner in Hz, up to 1000", c)
	}
	if math.IsNaN(r.Image.PitchMM) || r.Image.PitchMM < 0 || math.IsInf(r.Image.PitchMM, 0) {
		bad("image.pitch_mm", "is %g: expected a pixel size above 0 mm, or 0 for automatic", r.Image.PitchMM)
	}
	if r.Image.FillGapsPx < 0 || r.Image.FillGapsPx > 16 {
		bad("image.fill_gaps_px", "is %d: expected 0 (no filling) to 16 pixels", r.Image.FillGapsPx)
	}
	return errors.Join(errs...)
}
