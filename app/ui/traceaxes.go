package ui

import (
	"math"
	"strconv"
)

// niceStep is the tick spacing of an axis that spans span units with about
// want ticks: 1, 2 or 5 times a power of ten, the usual choice of chart
// axes (common practice, no published source).
func niceStep(span float64, want int) float64 {
	if !(span > 0) || math.IsInf(span, 0) || want < 1 {
		return 0
	}
	raw := span / float64(want)
	decade := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5} {
		if m*decade >= raw {
			return m * decade
		}
	}
	return 10 * decade
}

// axisTicks are the multiples of niceStep(hi−lo, want) from lo to hi.
func axisTicks(lo, hi float64, want int) []float64 {
	return ticksEvery(lo, hi, niceStep(hi-lo, want))
}

// ticksEvery are the multiples of step from lo to hi.
func ticksEvery(lo, hi, step float64) []float64 {
	if !(step > 0) {
		return nil
	}
	var ticks []float64
	for k := math.Ceil(lo/step - 1e-9); k*step <= hi+1e-9*step; k++ {
		v := k * step
		if v == 0 {
			v = 0 // no "-0"
		}
		ticks = append(ticks, v)
	}
	return ticks
}

// laneTicks are the ticks of a lane's voltage axis from lo to hi and
// which of them carry a label, so labels stand at least least apart (the
// span a label's height takes): the finest round step that keeps every
// tick's label so, or, when the lane is too short for two labels that
// far apart at any step that gives two ticks, the coarsest step that does
// with labels on ticks that far apart, starting from the lowest, and on
// the highest whatever. So every lane reads a scale and an offset. It
// returns the step.
func laneTicks(lo, hi, least float64) (ticks []float64, labelled []bool, step float64) {
	span := hi - lo
	if !(span > 0) {
		return nil, nil, 0
	}
	step = niceStep(least, 1)
	ticks = ticksEvery(lo, hi, step)
	for k := 2; len(ticks) < 2 && k <= 20; k++ {
		step = niceStep(span, k)
		ticks = ticksEvery(lo, hi, step)
	}
	labelled = make([]bool, len(ticks))
	last := math.Inf(-1)
	for i, t := range ticks {
		if t-last >= least*(1-1e-9) {
			labelled[i], last = true, t
		}
	}
	if n := len(ticks); n >= 2 && !labelled[n-1] {
		// The highest takes the place of the label below it.
		for i := n - 2; i > 0; i-- {
			if labelled[i] {
				labelled[i] = false
				break
			}
		}
		labelled[n-1] = true
	}
	return ticks, labelled, step
}

// tickLabel writes v with as many decimals as the step needs.
func tickLabel(v, step float64) string {
	decimals := 0
	if step > 0 && step < 1 {
		decimals = int(math.Ceil(-math.Log10(step) - 1e-9))
	}
	s := strconv.FormatFloat(v, 'f', decimals, 64)
	if s == "-0" || (len(s) > 1 && s[0] == '-' && strconv.FormatFloat(math.Abs(v), 'f', decimals, 64) == strconv.FormatFloat(0, 'f', decimals, 64)) {
		s = s[1:]
	}
	return s
}

// sampleAt is the sample of a channel nearest to time ts (seconds from the
// capture's start), and false outside the capture.
func sampleAt(samples []float32, rateHz, ts float64) (float64, bool) {
	if rateHz <= 0 || len(samples) == 0 || math.IsNaN(ts) {
		return 0, false
	}
	i := math.Round(ts * rateHz)
	if i < 0 || i > float64(len(samples)-1) {
		return 0, false
	}
	return float64(samples[int(i)]), true
}
