package recon

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestSplatRunIsThePlainBilinearSplat checks the row-by-row kernel against
// the definition of the bilinear kernel (each sample's weights
// (1−fx)(1−fy), fx(1−fy), (1−fx)fy, fx·fy on its four pixels, splatPoint),
// on random lines that cross rows and run off the table's ends. Expected:
// equal to 1e-7 relative (closed form: the moments are exact sums; the
// fixed-point table position moves a sample by under 1e-8 pixel).
func TestSplatRunIsThePlainBilinearSplat(t *testing.T) {
	m := newSweepMap(-1, 1, func(u float64) float64 { return 100 * math.Tan(0.4*u) })
	g := newFrameGrid(m, 100, 60, -50, 0, 1)
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 50; trial++ {
		n := 200 + rng.IntN(2000)
		det := make([]float32, n)
		for k := range det {
			det[k] = float32(rng.Float64())
		}
		span := float64(lutSize-1) * (0.5 + 0.6*rng.Float64())
		lg := lineOnGrid{pu0: -3 + 10*rng.Float64(), dpu: span / float64(n),
			v0: 5 + 40*rng.Float64(), dv: (rng.Float64() - 0.5) * 10 / float64(n),
			base0: 0.1 * rng.Float64(), slope: 1e-5 * rng.Float64()}
		got := make([]float64, 2*g.cols*g.rows)
		want := make([]float64, 2*g.cols*g.rows)
		g.splatRun(got, det, 0, lg, -1)
		for k := range det {
			fk := float64(k)
			value := -(float64(det[k]) - (lg.base0 + lg.slope*fk))
			g.splatPoint(want, g.colAt(lg.pu0+lg.dpu*fk), lg.v0+lg.dv*fk, value)
		}
		for i := range got {
			if math.Abs(got[i]-want[i]) > 1e-7*(1+math.Abs(want[i])) {
				t.Fatalf("trial %d: entry %d is %.12g, the plain splat gives %.12g", trial, i, got[i], want[i])
			}
		}
	}
}
