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
	step := niceStep(hi-lo, want)
	if step == 0 {
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
