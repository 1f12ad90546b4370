package recon

import (
	"math"
	"testing"
)

// A field placed to end 3.5 samples after the beam left (the delay set a
// little late) must give a step response with no rise at the line's start
// and a fall over its last samples, never a negative count (which sent the
// gridding's first sample index below zero). The detector is an ideal step
// (1 while the beam is on, 0 after), so the fall is the step itself: 1
// before the beam leaves, 0 after (closed form of a chain with no lag).
func TestEdgeResponseFieldPlacedLate(t *testing.T) {
	const (
		lines  = 400
		period = 100.37 // a fraction of a sample, so the field ends fall at every phase
		late   = 3.5    // samples from the beam leaving to the placed field end
	)
	n := int(period*lines) + 200
	det := make([]float32, n)
	var placed []placedLine
	for i := 0; i < lines; i++ {
		start := 50 + float64(i)*period
		end := start + 60.2
		for j := int(math.Ceil(start)); float64(j) < end-late; j++ {
			det[j] = 1
		}
		placed = append(placed, placedLine{first: int(math.Ceil(start)), last: int(math.Floor(end)) + 1, start: start, end: end})
	}
	e := measureEdgeResponse(det, placed)
	if e == nil {
		t.Fatal("no edge response measured from a bright field end")
	}
	if e.rise != 0 {
		t.Errorf("rise = %d samples, want 0: the placed field starts after the beam came on", e.rise)
	}
	// The samples 0 … 3.5 before the placed end are beam-off: four of them.
	if e.fall != int(math.Ceil(late)) {
		t.Errorf("fall = %d samples, want %d", e.fall, int(math.Ceil(late)))
	}
	// Bin centres −3.875 and −3.625 lie before the beam left (−3.5): 1;
	// from −2.5 on every sample is beam-off: 0.
	for _, c := range []struct{ t, want float64 }{{-3.875, 1}, {-2.5, 0}, {-1, 0}} {
		if got := e.at(c.t); math.Abs(got-c.want) > 1e-9 {
			t.Errorf("f(%g) = %g, want %g", c.t, got, c.want)
		}
	}
}
