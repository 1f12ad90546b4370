package recon

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// TestToneMapClosedForm checks Map against the closed form
// y = clamp((v − (L − W/2)) / W, 0, 1)^(1/γ), inverted as 1 − y.
func TestToneMapClosedForm(t *testing.T) {
	cases := []struct {
		tone Tone
		v    float32
		want float64
	}{
		// Window 0..100 (W = 100, L = 50): linear ramp.
		{Tone{Window: 100, Level: 50, Gamma: 1}, 0, 0},
		{Tone{Window: 100, Level: 50, Gamma: 1}, 25, 0.25},
		{Tone{Window: 100, Level: 50, Gamma: 1}, 100, 1},
		{Tone{Window: 100, Level: 50, Gamma: 1}, -7, 0},  // clipped below
		{Tone{Window: 100, Level: 50, Gamma: 1}, 170, 1}, // clipped above
		// Gamma 2 at a quarter: 0.25^(1/2) = 0.5.
		{Tone{Window: 100, Level: 50, Gamma: 2}, 25, 0.5},
		// Gamma 0.5 at a half: 0.5^2 = 0.25.
		{Tone{Window: 100, Level: 50, Gamma: 0.5}, 50, 0.25},
		// Invert after gamma: 1 − 0.25^(1/2) = 0.5; 1 − 0.1 = 0.9.
		{Tone{Window: 100, Level: 50, Gamma: 2, Invert: true}, 25, 0.5},
		{Tone{Window: 100, Level: 50, Gamma: 1, Invert: true}, 10, 0.9},
		// Negative frame units: window −2..−1, value −1.25 → 0.75.
		{Tone{Window: 1, Level: -1.5, Gamma: 1}, -1.25, 0.75},
		// Zero value: threshold at 0, gamma treated as 1.
		{Tone{}, -0.001, 0},
		{Tone{}, 0, 1},
		// Gamma 2.2 at 0.3: 0.3^(1/2.2).
		{Tone{Window: 10, Level: 5, Gamma: 2.2}, 3, math.Pow(0.3, 1/2.2)},
	}
	for _, c := range cases {
		got := c.tone.Map(c.v)
		if math.Abs(got-c.want) > 1e-12 {
			t.Errorf("%+v.Map(%g) = %.15g, want %.15g", c.tone, c.v, got, c.want)
		}
	}
	if got := (Tone{Window: 1, Level: 0.5, Gamma: 1}).Map(float32(math.NaN())); got != 0 {
		t.Errorf("Map(NaN) = %g, want 0", got)
	}
}

// TestPercentileAgainstGonum compares the quickselect percentile with
// gonum's stat.Quantile (Empirical kind) on sorted data, an independent
// implementation of the same nearest-rank definition.
func TestPercentileAgainstGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{1, 2, 3, 10, 199, 1000, 4097} {
		base := make([]float32, n)
		for i := range base {
			base[i] = float32(math.Round(rng.NormFloat64() * 4)) // many ties
		}
		sorted := make([]float64, n)
		for i, v := range base {
			sorted[i] = float64(v)
		}
		slices.Sort(sorted)
		for _, p := range []float64{0, 0.005, 0.1, 0.5, 0.9, 0.995, 1} {
			work := slices.Clone(base)
			got := float64(percentile(work, p))
			want := stat.Quantile(p, stat.Empirical, sorted, nil)
			if got != want {
				t.Errorf("n=%d p=%g: percentile %g, gonum %g", n, p, got, want)
			}
		}
	}
}

// TestAutoToneRamp: covered values 0..999 once each. Nearest rank
// ceil(0.005·1000) = 5 → value 4; ceil(0.995·1000) = 995 → value 994. So
// the window is 990 wide at level 499 (hand-computed). Uncovered pixels
// (set to huge values) must not count.
func TestAutoToneRamp(t *testing.T) {
	f := &Frame{Width: 1100, Height: 1, Pix: make([]float32, 1100), Covered: make([]bool, 1100)}
	for i := range f.Pix {
		if i < 1000 {
			f.Pix[i] = float32(999 - i)
			f.Covered[i] = true
		} else {
			f.Pix[i] = 1e9
		}
	}
	got := AutoTone(f)
	want := Tone{Window: 990, Level: 499, Gamma: 1}
	if got != want {
		t.Fatalf("AutoTone = %+v, want %+v", got, want)
	}
	if m := got.Map(4); m != 0 {
		t.Errorf("Map(low percentile) = %g, want 0", m)
	}
	if m := got.Map(994); m != 1 {
		t.Errorf("Map(high percentile) = %g, want 1", m)
	}
}

func TestAutoToneDegenerate(t *testing.T) {
	empty := &Frame{Width: 2, Height: 1, Pix: []float32{3, 4}, Covered: []bool{false, false}}
	if got := AutoTone(empty); got.Window <= 0 || got.Gamma != 1 {
		t.Errorf("AutoTone(no data) = %+v, want a positive window", got)
	}
	flat := &Frame{Width: 3, Height: 1, Pix: []float32{7, 7, 7}, Covered: []bool{true, true, true}}
	got := AutoTone(flat)
	if got.Window <= 0 || got.Map(7) != 0.5 {
		t.Errorf("AutoTone(flat 7) = %+v, Map(7) = %g, want a positive window centred on 7", got, got.Map(7))
	}
	if got := AutoTone(nil); got.Window <= 0 {
		t.Errorf("AutoTone(nil) = %+v", got)
	}
}

func BenchmarkAutoTone(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 4))
	const n = 1000 * 1000
	f := &Frame{Width: 1000, Height: 1000, Pix: make([]float32, n), Covered: make([]bool, n)}
	for i := range f.Pix {
		f.Pix[i] = float32(rng.NormFloat64())
		f.Covered[i] = i%10 != 0
	}
	b.SetBytes(4 * n)
	for b.Loop() {
		AutoTone(f)
	}
}
