package recon

import (
	"context"
	"fmt"

	"spotloom/recon/recipe"
)

// sweepLaw is one sweep law: how time within a line maps to x, and what
// the other stages need to know about it. Each law is one type in its own
// file (law_uniform.go, law_sine.go, law_table.go); lawOf is the only
// place that chooses between them.
type sweepLaw interface {
	// xMap builds the lookup from the line variable u to x in mm, with
	// sign −1 for a reversed sweep.
	xMap(s recipe.Sweep, sign float64) (*sweepMap, error)
	// linesPerIndex is how many lines one index period holds.
	linesPerIndex() int
	// fieldFraction is the share of a line period spent inside the field.
	fieldFraction(s recipe.Sweep) float64
	// place hands add the lines of the i-th index period lt, for a
	// resolved delay (and, for a resonant mirror, its period in samples;
	// 0 = the measured one).
	place(s recipe.Sweep, lt lineTiming, i int, delay, period float64, add lineAdder)
	// estimateDelay finds sweep.delay_deg from the detector folded over
	// the lines.
	estimateDelay(ctx context.Context, t *timingResult, det []float32, s recipe.Sweep, invert bool, period float64) (delayFound, error)
	// hasBeamOff reports whether the beam leaves the field within each
	// line, giving a beam-off stretch for the baseline.
	hasBeamOff() bool
	// isWheel reports whether the sweep is a wheel of apertures: index
	// pulses per aperture or per revolution, aperture offsets, a wheel
	// speed. A resonant mirror is not one.
	isWheel() bool
	// dutyTellsApertures reports whether the beam is on for field_deg of
	// each aperture spacing, so the beam-on fraction tells the aperture
	// count.
	dutyTellsApertures() bool
	// fromTiming fills in the sweep values the law takes from the
	// measured index periods (samples at rateHz) when they are left
	// automatic.
	fromTiming(s *recipe.Sweep, t *timingResult, rateHz float64)
	// liveNull names the key of s that fromTiming fills in and is still
	// null, or "": a live build needs it resolved first.
	liveNull(s recipe.Sweep) string
}

// lineAdder takes one placed line: its number and aperture, its index
// edge and period (samples), where its field starts and ends (fractional
// samples), the law variable u at the start and per sample, and whether
// its edge was repaired.
type lineAdder func(number, aperture int, edge, period, uStartSample, uEndSample, u0, du float64, repaired bool)

// lawOf returns the implementation of a sweep law.
func lawOf(l recipe.Law) (sweepLaw, error) {
	switch l {
	case recipe.LawUniform:
		return uniformLaw{}, nil
	case recipe.LawSine:
		return sineLaw{}, nil
	case recipe.LawTable:
		return tableLaw{}, nil
	}
	return nil, fmt.Errorf("sweep.law %q: allowed values are %s", l, recipe.Allowed(recipe.Laws))
}

// mustLaw is lawOf for a recipe that passed Validate.
func mustLaw(l recipe.Law) sweepLaw {
	law, err := lawOf(l)
	if err != nil {
		return uniformLaw{}
	}
	return law
}

// apertureOffset is sweep.aperture_offsets_deg[k], 0 when not given.
func apertureOffset(s recipe.Sweep, k int) float64 {
	if k < len(s.ApertureOffsetsDeg) {
		return s.ApertureOffsetsDeg[k]
	}
	return 0
}
