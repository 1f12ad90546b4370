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

// A NaN sample makes the channel's range NaN, as the standard library's
// slices.Min and slices.Max do ("If the slice contains a NaN, the result
// is NaN", package slices), wherever it lies: in a block's first or last
// lane, in the tail after the last block, in either worker's share; and
// the sums of intervals away from it stay those of the samples. A block
// that holds +Inf and −Inf (its sum NaN, no sample NaN) keeps its infinite
// range. Without NaNs the range is slices.Min and slices.Max.
func TestChannelStatsNaN(t *testing.T) {
	n := minSplitSamples + 3*statsBlock + 77
	nb := n / statsBlock
	cases := []struct {
		name string
		at   []int
		inf  bool
	}{
		{"none", nil, false},
		{"first lane of the first block", []int{0}, false},
		{"last lane of a block", []int{5*statsBlock - 1}, false},
		{"second worker's share", []int{n - 2*statsBlock + 3}, false},
		{"tail", []int{n - 1}, false},
		{"+Inf and -Inf in one block", nil, true},
	}
	for _, c := range cases {
		rng := rand.New(rand.NewPCG(5, 6))
		x := make([]float32, n)
		for i := range x {
			x[i] = float32(0.3 + 0.2*rng.NormFloat64())
		}
		for _, i := range c.at {
			x[i] = float32(math.NaN())
		}
		if c.inf {
			x[7*statsBlock+1], x[7*statsBlock+2] = float32(math.Inf(1)), float32(math.Inf(-1))
		}
		st, err := newChannelStats(context.Background(), x)
		if err != nil {
			t.Fatal(err)
		}
		wantLo, wantHi := slices.Min(x), slices.Max(x)
		same := func(a, b float32) bool { return a == b || a != a && b != b }
		if !same(st.lo, wantLo) || !same(st.hi, wantHi) {
			t.Errorf("%s: range %g…%g, want %g…%g", c.name, st.lo, st.hi, wantLo, wantHi)
		}
		if len(c.at) > 0 && !(st.lo != st.lo && st.hi != st.hi) {
			t.Errorf("%s: range %g…%g, want NaN", c.name, st.lo, st.hi)
		}
		// An interval of whole blocks before the first NaN or infinity.
		end := nb * statsBlock
		for _, i := range c.at {
			end = min(end, i/statsBlock*statsBlock)
		}
		if c.inf {
			end = 7 * statsBlock
		}
		if end > 0 {
			wide := make([]float64, end)
			for i := range wide {
				wide[i] = float64(x[i])
			}
			if got, want := st.sum(x, 0, end), floats.Sum(wide); math.Abs(got-want) > 1e-10*math.Max(1, math.Abs(want)) {
				t.Errorf("%s: sum of [0, %d) = %.12g, want %.12g", c.name, end, got, want)
			}
		}
	}
}
