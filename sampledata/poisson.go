package sampledata

import (
	"math"
	"math/rand/v2"
)

// poissonSampler draws Poisson-distributed counts. Below 10 it
// uses inversion by sequential search; from 10 up, the transformed
// rejection method with squeeze of W. Hörmann, "The transformed rejection
// method for generating Poisson random variables", Insurance: Mathematics
// and Economics 12 (1993) 39–45 (algorithm PTRS), whose constants are used
// as published.
//
// The sampler remembers exp(−λ) of the last small mean, since the beam-off
// stretches draw with one mean over and over.
type poissonSampler struct {
	rng              *rand.Rand
	lastMean, expNeg float64
}

func (s *poissonSampler) next(lambda float64) float64 {
	rng := s.rng
	switch {
	case !(lambda > 0):
		return 0
	case lambda < 10:
		if lambda != s.lastMean {
			s.lastMean, s.expNeg = lambda, math.Exp(-lambda)
		}
		u := rng.Float64()
		p := s.expNeg
		cdf := p
		k := 0.0
		for u > cdf {
			k++
			p *= lambda / k
			cdf += p
			if p < 1e-300 && cdf >= 1-1e-15 {
				break
			}
		}
		return k
	}
	slam := math.Sqrt(lambda)
	loglam := math.Log(lambda)
	b := 0.931 + 2.53*slam
	a := -0.059 + 0.02483*b
	invAlpha := 1.1239 + 1.1328/(b-3.4)
	vr := 0.9277 - 3.6224/(b-2)
	for {
		u := rng.Float64() - 0.5
		v := rng.Float64()
		us := 0.5 - math.Abs(u)
		k := math.Floor((2*a/us+b)*u + lambda + 0.43)
		if us >= 0.07 && v <= vr {
			return k
		}
		if k < 0 || (us < 0.013 && v > us) {
			continue
		}
		lg, _ := math.Lgamma(k + 1)
		if math.Log(v)+math.Log(invAlpha)-math.Log(a/(us*us)+b) <= -lambda+k*loglam-lg {
			return k
		}
	}
}
