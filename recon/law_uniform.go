package recon

import (
	"context"

	"spotloom/recon/recipe"
)

// uniformLaw is a constant angular rate: a spinning collimator wheel or
// polygon. The line variable u is the beam angle θ in degrees from the
// centre of the field.
type uniformLaw struct{}

func (uniformLaw) xMap(s recipe.Sweep, sign float64) (*sweepMap, error) {
	half := s.FieldDeg / 2
	m := newSweepMap(-half, half, func(u float64) float64 { return sign * Project(s.Projection, s.DistanceMM, u) })
	m.extent([2]float64{-half, half})
	return m, nil
}

func (uniformLaw) linesPerIndex() int { return 1 }

func (uniformLaw) fieldFraction(s recipe.Sweep) float64 { return s.FieldDeg / apertureSpacingDeg(s) }

func (uniformLaw) place(s recipe.Sweep, lt lineTiming, i int, delay, _ float64, add lineAdder) {
	spacing := apertureSpacingDeg(s)
	half := s.FieldDeg / 2
	d := delay + apertureOffset(s, lt.aperture)
	// α(s) = (s−e)/T·spacing; θ = α − d − F/2.
	at := func(theta float64) float64 { return lt.edge + (theta+d+half)/spacing*lt.period }
	add(i, lt.aperture, lt.edge, lt.period, at(-half), at(half), -half, spacing/lt.period, lt.repaired)
}

func (uniformLaw) estimateDelay(ctx context.Context, t *timingResult, det []float32, s recipe.Sweep, invert bool, _ float64) (delayFound, error) {
	var d delayFound
	var err error
	d.DelayDeg, d.Negative, d.AperturesSeen, d.Warnings, err = estimateDelay(ctx, t, det, s, invert)
	return d, err
}

func (uniformLaw) hasBeamOff() bool { return true }

func (uniformLaw) isWheel() bool { return true }

func (uniformLaw) dutyTellsApertures() bool { return true }

func (uniformLaw) fromTiming(*recipe.Sweep, *timingResult, float64) {}

func (uniformLaw) liveNull(recipe.Sweep) string { return "" }
