package recon

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// pulseTrain is a noisy two-level signal with flat stretches, NaN samples
// and a stretch that sits inside the trigger's hysteresis band, placed so
// that some of them straddle the cuts between workers.
func pulseTrain(n int, seed uint64) []float32 {
	rng := rand.New(rand.NewPCG(seed, 1))
	x := make([]float32, n)
	for i := range x {
		level := float32(0)
		if (i/37)%3 == 0 {
			level = 1
		}
		x[i] = level + float32(0.08*rng.NormFloat64())
	}
	// A flat run across the middle (a cut for 2 workers) and one at the end.
	for i := n/2 - 500; i < n/2+700; i++ {
		x[i] = 0.25
	}
	for i := n - 300; i < n; i++ {
		x[i] = 1
	}
	// Inside the band (threshold 0.5, hysteresis 0.2) across the cut for 3.
	for i := n/3 - 40; i < n/3+90; i++ {
		x[i] = 0.52
	}
	x[n/4] = float32(math.NaN())
	x[n/4+1] = float32(math.NaN())
	return x
}

// The split scans are checked against the serial scan, an independent
// single pass over the same samples: the results must be identical, for
// any number of workers, because each span starts in the serial state.
func TestSplitScansMatchSerial(t *testing.T) {
	ctx := context.Background()
	for _, n := range []int{10_000, 100_003} {
		x := pulseTrain(n, uint64(n))
		for _, rising := range []bool{true, false} {
			tr := newTrigger(0.5, 0.2, rising)
			high := tr.sign*x[0] > tr.t
			want, err := tr.scan(ctx, x, 0, len(x), high, nil)
			if err != nil {
				t.Fatal(err)
			}
			if len(want) < 10 {
				t.Fatalf("n=%d rising=%v: only %d edges in the test signal", n, rising, len(want))
			}
			for _, w := range []int{2, 3, 7, 64} {
				got, err := rawEdgesSplit(ctx, x, tr, high, w)
				if err != nil {
					t.Fatal(err)
				}
				// NaN == NaN here: an edge next to a NaN sample is NaN in both.
				same := slices.EqualFunc(got, want, func(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) })
				if !same {
					t.Errorf("n=%d rising=%v workers=%d: %d edges, serial %d", n, rising, w, len(got), len(want))
				}
			}
		}
		for _, minLen := range []int{2, 100, 1000} {
			want, wantTotal := flatRunsSerial(x, minLen)
			for _, w := range []int{2, 3, 7, 64} {
				got, total := flatRunsSplit(x, minLen, w)
				if total != wantTotal || !slices.Equal(got, want) {
					t.Errorf("n=%d minLen=%d workers=%d: %d runs (%d kept), serial %d (%d kept)", n, minLen, w, total, len(got), wantTotal, len(want))
				}
			}
		}
	}
}

// A channel that holds one value throughout is one run however it is cut,
// and the kept runs stop at maxFlatRuns across the workers' lists.
func TestSplitFlatRunsWholeAndCap(t *testing.T) {
	x := make([]float32, 50_000)
	runs, total := flatRunsSplit(x, 10, 4)
	if total != 1 || len(runs) != 1 || runs[0].stretch != (stretch{0, len(x)}) {
		t.Fatalf("all-zero channel: %d runs %v, want one over [0, %d)", total, runs, len(x))
	}
	// Runs of 3 equal samples: len/3 runs of length 3 (closed form).
	for i := range x {
		x[i] = float32(i / 3)
	}
	x = x[:3*(len(x)/3)]
	runs, total = flatRunsSplit(x, 3, 5)
	if total != len(x)/3 || len(runs) != maxFlatRuns {
		t.Fatalf("%d runs (%d kept), want %d (%d kept)", total, len(runs), len(x)/3, maxFlatRuns)
	}
	for i, r := range runs {
		if r.stretch != (stretch{3 * i, 3*i + 3}) {
			t.Fatalf("run %d is %v, want [%d, %d)", i, r.stretch, 3*i, 3*i+3)
		}
	}
}
