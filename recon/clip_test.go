package recon

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The clipping table must give, for any span of samples, what a scan of
// the span's samples gives: the count of samples away from the extremes
// equal to the one before, and whether three extreme samples in a row lie
// in it. The reference here is that definition read sample by sample (and
// clipScan, the scan the first gridding uses); the samples are coarsely
// quantised, clip at both ends in runs of one to five, and carry NaNs.
func TestClipTableMatchesScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	const n = 20000
	const hi, lo = 3, -3
	test := make([]float32, n)
	det := make([]float32, n)
	for j := 0; j < n; {
		switch r := rng.IntN(20); {
		case r == 0: // a clipped run
			v := float32(hi)
			if rng.IntN(2) == 0 {
				v = lo
			}
			for k := rng.IntN(5) + 1; k > 0 && j < n; k-- {
				test[j], det[j] = v, v
				j++
			}
		case r == 1:
			test[j], det[j] = float32(math.NaN()), float32(math.NaN())
			j++
		default:
			v := float32(rng.IntN(5) - 2)
			test[j], det[j] = v, v+float32(rng.IntN(2))*0.5 // det differs from test, as a corrected copy does
			j++
		}
	}
	// The definition, sample by sample.
	reference := func(a, b int) (bool, int) {
		ext := func(j int) bool { return test[j] >= hi || test[j] <= lo }
		clipped, ties := false, 0
		for j := a; j < b; j++ {
			if j >= a+2 && ext(j) && ext(j-1) && ext(j-2) {
				clipped = true
			}
			if j > a && !ext(j) && det[j] == det[j-1] {
				ties++
			}
		}
		return clipped, ties
	}
	ct := newClipTable(test, det, hi, lo)
	for trial := 0; trial < 3000; trial++ {
		a := rng.IntN(n)
		b := a + rng.IntN(min(n-a, 600)+1)
		wantC, wantT := reference(a, b)
		gotC, gotT := ct.span(a, b)
		scanC, scanT := clipScan(test[a:b], det[a:b], hi, lo)
		if gotC != wantC || gotT != wantT || scanC != wantC || scanT != wantT {
			t.Fatalf("span [%d, %d): table (%v, %d), scan (%v, %d), definition (%v, %d)", a, b, gotC, gotT, scanC, scanT, wantC, wantT)
		}
	}
}
