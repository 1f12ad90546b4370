package recon

import (
	"math"
	"math/rand/v2"
	"testing"
)

// glow applies the afterglow the simulator models, y[n] = a·y[n−1] +
// (1−a)·x[n] with a = exp(−1/(fs·τ)), settled on x[0].
func glow(x []float32, tauS, fs float64) []float32 {
	a := math.Exp(-1 / (fs * tauS))
	out := make([]float32, len(x))
	y := float64(x[0])
	for i, v := range x {
		y = a*y + (1-a)*float64(v)
		out[i] = float32(y)
	}
	return out
}

// A short afterglow, whose exact inverse stays within the noise bound, is
// undone exactly (the inverse system of a first-order recursion, Oppenheim
// & Schafer §5.2).
func TestUndoAfterglowIsExactWithinTheBound(t *testing.T) {
	const fs = 96000
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float32, 4096)
	for i := range x {
		x[i] = float32(rng.Float64())
	}
	tau := 20e-6
	if _, b := afterglowFilter(tau, fs); b != 0 {
		t.Fatalf("20 µs at 96 kHz is regularised (b %g)", b)
	}
	back := undoAfterglow(glow(x, tau, fs), tau, fs)
	for i := range x {
		if math.Abs(float64(back[i]-x[i])) > 1e-4 {
			t.Fatalf("sample %d: %g back, %g in", i, back[i], x[i])
		}
	}
}

// A long afterglow is regularised: the white-noise gain of the restoration
// is the bound (Parseval: the root of the summed squared impulse response,
// computed here by running the filter on an impulse, against the closed
// form), and a step comes back as the residual single pole b.
func TestUndoAfterglowBoundsTheNoise(t *testing.T) {
	const fs = 96000
	tau := 300e-6
	a, b := afterglowFilter(tau, fs)
	if !(b > 0 && b < a) {
		t.Fatalf("a %g, b %g: want 0 < b < a", a, b)
	}
	impulse := make([]float32, 20000)
	impulse[1] = 1
	h := undoAfterglow(impulse, tau, fs)
	sum := 0.0
	for _, v := range h {
		sum += float64(v) * float64(v)
	}
	if g := math.Sqrt(sum); math.Abs(g-afterglowNoiseGain)/afterglowNoiseGain > 1e-3 || math.Abs(restorationGain(a, b)-g)/g > 1e-3 {
		t.Errorf("noise gain %.4f by the impulse response, %.4f closed form, bound %d", g, restorationGain(a, b), afterglowNoiseGain)
	}
	step := make([]float32, 400)
	for i := 100; i < len(step); i++ {
		step[i] = 1
	}
	out := undoAfterglow(glow(step, tau, fs), tau, fs)
	for i := 100; i < len(step); i++ {
		want := 1 - math.Pow(b, float64(i-100+1))
		if math.Abs(float64(out[i])-want) > 1e-3 {
			t.Fatalf("step sample %d: %g, a residual pole b gives %g", i, out[i], want)
		}
	}
}
