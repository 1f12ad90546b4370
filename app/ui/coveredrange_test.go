package ui

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"spotloom/recon"
)

// coveredRange is the smallest and largest covered, finite pixel, as
// slices.Min and slices.Max (Go standard library) find them over exactly
// those pixels; a frame with none gives 0…1.
func TestCoveredRange(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	specials := []float32{float32(math.NaN()), float32(math.Inf(1)), float32(math.Inf(-1)), math.MaxFloat32, -math.MaxFloat32}
	for trial := range 200 {
		n := rng.IntN(40)
		f := &recon.Frame{Pix: make([]float32, n), Covered: make([]bool, n)}
		var finite []float32
		for i := range n {
			v := float32(rng.NormFloat64() * 1e3)
			if rng.IntN(6) == 0 {
				v = specials[rng.IntN(len(specials))]
			}
			f.Pix[i], f.Covered[i] = v, rng.IntN(3) > 0
			if f.Covered[i] && !math.IsNaN(float64(v)) && !math.IsInf(float64(v), 0) {
				finite = append(finite, v)
			}
		}
		lo, hi := coveredRange(f)
		wantLo, wantHi := 0.0, 1.0
		if len(finite) > 0 {
			wantLo, wantHi = float64(slices.Min(finite)), float64(slices.Max(finite))
		}
		if lo != wantLo || hi != wantHi {
			t.Fatalf("trial %d: %v over %v: %g…%g, want %g…%g", trial, f.Pix, f.Covered, lo, hi, wantLo, wantHi)
		}
	}
}
