package capture

import "math"

// Stats summarises one channel's samples.
type Stats struct {
	Min, Max, Mean, RMS float64
}

// Stats computes the minimum, maximum, mean and root-mean-square of the
// channel's samples, summing in float64. An empty channel gives zeros.
func (c Channel) Stats() Stats {
	if len(c.Samples) == 0 {
		return Stats{}
	}
	lo, hi := float64(c.Samples[0]), float64(c.Samples[0])
	var sum, sumSq float64
	for _, v := range c.Samples {
		x := float64(v)
		sum += x
		sumSq += x * x
		lo = math.Min(lo, x)
		hi = math.Max(hi, x)
	}
	n := float64(len(c.Samples))
	return Stats{Min: lo, Max: hi, Mean: sum / n, RMS: math.Sqrt(sumSq / n)}
}
