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
	h := newHighPassUndo(cornerHz, rateHz)
	h.run(x, y)
	return x
}

// highPassUndo is undoHighPass with its state kept, so a capture can be
// corrected a block at a time as it is recorded, with the same result.
type highPassUndo struct {
	wcdt, leak     float64
	integral, prev float64
	started        bool
}

func newHighPassUndo(cornerHz, rateHz float64) *highPassUndo {
	dt := 1 / rateHz
	wc := 2 * math.Pi * cornerHz
	return &highPassUndo{wcdt: wc * dt, leak: 1 - wc*dt/1000}
}

// run writes the corrected y into x (len(x) == len(y)).
func (h *highPassUndo) run(x, y []float32) {
	for i, yv := range y {
		v := float64(yv)
		if !h.started {
			x[i] = yv
			h.prev, h.started = v, true
			continue
		}
		h.integral = h.integral*h.leak + h.wcdt*(v+h.prev)/2
		x[i] = float32(v + h.integral)
		h.prev = v
	}
}
