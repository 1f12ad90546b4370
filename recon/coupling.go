package recon

import "math"

// undoHighPass returns x with a single-pole high-pass of corner cornerHz
// undone. A high-pass H(s) = s/(s+ωc) has the inverse 1 + ωc/s, so the
// input is the output plus ωc times its running integral:
//
//	x(t) = y(t) + ωc ∫ y dt
//
// integrated with the trapezoid rule. The integral carries the recorder's
// DC offset as a slow ramp; a leak a thousand times slower than the corner
// keeps it bounded, and the per-line baseline removes what is left.
func undoHighPass(y []float32, cornerHz, rateHz float64) []float32 {
	x := make([]float32, len(y))
	if len(y) == 0 {
		return x
	}
	dt := 1 / rateHz
	wc := 2 * math.Pi * cornerHz
	leak := 1 - wc*dt/1000
	integral := 0.0
	prev := float64(y[0])
	x[0] = y[0]
	for i := 1; i < len(y); i++ {
		v := float64(y[i])
		integral = integral*leak + wc*dt*(v+prev)/2
		x[i] = float32(v + integral)
		prev = v
	}
	return x
}
