package recon

import (
	"context"
	"fmt"
	"math"

	"gonum.org/v1/gonum/interp"

	"spotloom/recon/recipe"
)

// tableLaw is a measured sweep: sweep.table gives x in mm at fractions of
// the line from its index edge, interpolated piecewise linearly (gonum's
// interp.PiecewiseLinear). The line variable u is that fraction.
type tableLaw struct{}

func (tableLaw) xMap(s recipe.Sweep, sign float64) (*sweepMap, error) {
	if len(s.Table) < 2 {
		return nil, fmt.Errorf("sweep.table has %d points: law table needs two or more [fraction_of_line, x_mm] points", len(s.Table))
	}
	xs := make([]float64, len(s.Table))
	ys := make([]float64, len(s.Table))
	for i, p := range s.Table {
		xs[i], ys[i] = p[0], p[1]
	}
	var pl interp.PiecewiseLinear
	if err := pl.Fit(xs, ys); err != nil {
		return nil, fmt.Errorf("sweep.table: %v; fractions must increase", err)
	}
	lo, hi := xs[0], xs[len(xs)-1]
	m := newSweepMap(lo, hi, func(u float64) float64 { return sign * pl.Predict(math.Min(math.Max(u, lo), hi)) })
	m.extent([2]float64{lo, hi})
	return m, nil
}

func (tableLaw) linesPerIndex() int { return 1 }

func (tableLaw) fieldFraction(s recipe.Sweep) float64 {
	if len(s.Table) < 2 {
		return 0
	}
	return s.Table[len(s.Table)-1][0] - s.Table[0][0]
}

func (tableLaw) place(s recipe.Sweep, lt lineTiming, i int, delay, _ float64, add lineAdder) {
	spacing := apertureSpacingDeg(s)
	f0, f1 := s.Table[0][0], s.Table[len(s.Table)-1][0]
	d := (delay + apertureOffset(s, lt.aperture)) / spacing
	at := func(f float64) float64 { return lt.edge + (f+d)*lt.period }
	add(i, lt.aperture, lt.edge, lt.period, at(f0), at(f1), f0, 1/lt.period, lt.repaired)
}

// estimateDelay is zero: a measured table is written against the index
// edge.
func (tableLaw) estimateDelay(context.Context, *timingResult, []float32, recipe.Sweep, bool, float64) (delayFound, error) {
	return delayFound{}, nil
}

func (tableLaw) hasBeamOff() bool { return true }

func (tableLaw) isWheel() bool { return true }

// dutyTellsApertures is false: the table, not field_deg, gives the part
// of the line inside the field.
func (tableLaw) dutyTellsApertures() bool { return false }

func (tableLaw) fromTiming(*recipe.Sweep, *timingResult, float64) {}

func (tableLaw) liveNull(recipe.Sweep) string { return "" }
