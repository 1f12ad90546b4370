package recon

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats"
)

// The whole-channel statistics give the range of the samples and the sum
// of any interval: checked against the standard library's slices.Min and
// slices.Max and gonum's floats.Sum over the same samples, on a channel
// long enough to be shared between the workers and with a tail shorter
// than one block.
func TestChannelStatsAgainstDirectSums(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	x := make([]float32, minSplitSamples+3*statsBlock+77)
	for i := range x {
		x[i] = float32(0.8 + 0.1*rng.NormFloat64()) // a detector with an offset
	}
	x[len(x)-1] = 5 // the range must include the tail after the last block
	st, err := newChannelStats(context.Background(), x)
	if err != nil {
		t.Fatal(err)
	}
	if st.lo != slices.Min(x) || st.hi != slices.Max(x) {
		t.Errorf("range %g…%g, want %g…%g", st.lo, st.hi, slices.Min(x), slices.Max(x))
	}
	wide := make([]float64, len(x))
	for i, v := range x {
		wide[i] = float64(v)
	}
	for range 200 {
		a := rng.IntN(len(x))
		b := a + rng.IntN(len(x)-a+1)
		got, want := st.sum(x, a, b), floats.Sum(wide[a:b])
		// float64 sums of at most a million float32 values: far below
		// one part in 1e10 apart.
		if math.Abs(got-want) > 1e-10*math.Max(1, math.Abs(want)) {
			t.Fatalf("sum of [%d, %d) = %.12g, want %.12g", a, b, got, want)
		}
	}
}

// Runs planted in a channel whose other samples all differ are found
// exactly: those of minLen samples or more, wherever they start (at the
// first sample, at the last, across the samples the scan looks at), and
// none shorter.
func TestFlatRunsFindPlantedRuns(t *testing.T) {
	for _, minLen := range []int{2, 7, 8, 1000} {
		x := make([]float32, 20*minLen+13)
		for i := range x {
			x[i] = float32(i) // no two equal
		}
		type planted struct{ from, to int }
		plant := []planted{
			{0, minLen},                         // at the start, just long enough
			{2*minLen + 1, 3*minLen + 1},        // just long enough, off the grid
			{4*minLen + 3, 5*minLen + 2},        // one short
			{6*minLen - 1, 9*minLen + 5},        // long
			{9*minLen + 5, 10*minLen + 6},       // right after the last, another value
			{15 * minLen, 15*minLen + minLen/2}, // far too short
			{len(x) - minLen, len(x)},           // at the end
		}
		var want []flatRun
		for k, p := range plant {
			for i := p.from; i < p.to; i++ {
				x[i] = float32(-1 - k)
			}
			if p.to-p.from >= minLen {
				want = append(want, flatRun{stretch{p.from, p.to}, float32(-1 - k)})
			}
		}
		got, total := flatRunsSerial(x, minLen)
		if total != len(want) || !slices.Equal(got, want) {
			t.Errorf("minLen %d: %d runs %v, want %v", minLen, total, got, want)
		}
	}
}
