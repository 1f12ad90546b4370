package recon

import (
	"context"
	"math"

	"spotloom/recon/recipe"
)

// sineLaw is a resonant mirror: one index pulse per oscillation period,
// beam angle (field/2)·sin φ with φ = 360°·(t − t_edge)/period − delay, a
// forward line for φ in −90°…90° and a backward one for 90°…270°. The line
// variable u is φ in degrees. The beam never leaves the field.
type sineLaw struct{}

func (sineLaw) xMap(s recipe.Sweep, sign float64) (*sweepMap, error) {
	half := s.FieldDeg / 2
	m := newSweepMap(-90, 270, func(u float64) float64 {
		return sign * Project(s.Projection, s.DistanceMM, half*math.Sin(u*math.Pi/180))
	})
	a := sineKeepDeg(s.SineKeep)
	m.extent([2]float64{-a, a}, [2]float64{180 - a, 180 + a})
	return m, nil
}

func (sineLaw) linesPerIndex() int { return 2 }

func (sineLaw) fieldFraction(s recipe.Sweep) float64 { return sineKeepDeg(s.SineKeep) / 180 }

func (sineLaw) place(s recipe.Sweep, lt lineTiming, i int, delay, period float64, add lineAdder) {
	a := sineKeepDeg(s.SineKeep)
	p := lt.period
	if period > 0 {
		p = period
	}
	du := 360 / p
	// φ(s) = 360(s−e)/P − delay; s(φ) = e + (φ+delay)P/360.
	at := func(phi float64) float64 { return lt.edge + (phi+delay)*p/360 }
	add(2*i, 0, lt.edge, p, at(-a), at(a), -a, du, lt.repaired)
	add(2*i+1, 1, lt.edge, p, at(180-a), at(180+a), 180-a, du, false)
}

func (sineLaw) estimateDelay(ctx context.Context, t *timingResult, det []float32, s recipe.Sweep, _ bool, period float64) (delayFound, error) {
	var d delayFound
	var err error
	d.DelayDeg, d.Warnings, err = estimateSineDelay(ctx, t, det, s, period)
	return d, err
}

func (sineLaw) hasBeamOff() bool { return false }

func (sineLaw) isWheel() bool { return false }

func (sineLaw) dutyTellsApertures() bool { return false }

// fromTiming sets an automatic sweep.sine_period_s to the median measured
// index period.
func (sineLaw) fromTiming(s *recipe.Sweep, t *timingResult, rateHz float64) {
	if s.SinePeriodS != nil {
		return
	}
	periods := make([]float64, len(t.lines))
	for i, l := range t.lines {
		periods[i] = l.period
	}
	s.SinePeriodS = recipe.Float(median(periods) / rateHz)
}

func (sineLaw) liveNull(s recipe.Sweep) string {
	if s.SinePeriodS == nil {
		return "sweep.sine_period_s"
	}
	return ""
}
