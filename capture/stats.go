package capture

import "math"

// Stats summarises one channel's samples.
type Stats struct {
	Min, Max, Mean, RMS float64
}

// Stats computes the minimum, maximum, mean and root-mean-square of the
// channel's samples, summing in float64. An empty channel gives zeros.
func (c Channel) Stats() Stats {
	var a statsAccumulator
	a.add(c.Samples)
	return a.stats()
}

// statsAccumulator gathers Stats block by block, in order, so a stream
// gives exactly what the whole channel gives. A NaN or infinite sample is
// counted and taken as 0, as the readers store it.
type statsAccumulator struct {
	n          int
	lo, hi     float64
	sum, sumSq float64
	nonFinite  int
}

func (a *statsAccumulator) add(x []float32) {
	for _, v := range x {
		f := float64(v)
		if f-f != 0 { // NaN or ±Inf
			a.nonFinite++
			f = 0
		}
		if a.n == 0 {
			a.lo, a.hi = f, f
		}
		a.n++
		a.sum += f
		a.sumSq += f * f
		// Plain comparisons: f is finite here, and math.Min's care for
		// NaN and -0 costs a third of the loop.
		if f < a.lo {
			a.lo = f
		}
		if f > a.hi {
			a.hi = f
		}
	}
}

func (a *statsAccumulator) stats() Stats {
	if a.n == 0 {
		return Stats{}
	}
	n := float64(a.n)
	return Stats{Min: a.lo, Max: a.hi, Mean: a.sum / n, RMS: math.Sqrt(a.sumSq / n)}
}
