package recon

import (
	"context"
	"math"
	"reflect"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// TestDelayChangeMatchesFreshBuild: a delay change in a warm session (one
// that built the automatic delay and other delays before, so it reuses the
// timing, rows and clipping table and re-places only) gives the frame and
// report a fresh session builds with that delay. The frames are compared
// independently of the engine's own bookkeeping: the same coverage, and
// pixel values within 1e-6 of the frame's range (float32 rounding is
// 6e-8 of a value). The delays include one 0.3° late, whose field ends
// after the beam has left.
func TestDelayChangeMatchesFreshBuild(t *testing.T) {
	rec, err := sampledata.Demo()
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	warm := NewSession(rec)
	r, err := warm.Resolve(ctx, sampledata.DemoRecipe())
	if err != nil {
		t.Fatal(err)
	}
	if _, err := warm.Build(ctx, r, nil); err != nil {
		t.Fatal(err)
	}
	base := *r.Sweep.DelayDeg
	for _, dd := range []float64{0.02, -0.05, 0.3, 0.021} {
		rd := r.Clone()
		rd.Sweep.DelayDeg = recipe.Float(base + dd)
		got, err := warm.Build(ctx, rd, nil)
		if err != nil {
			t.Fatalf("delay %+g° in a warm session: %v", dd, err)
		}
		want, err := NewSession(rec).Build(ctx, rd, nil)
		if err != nil {
			t.Fatalf("delay %+g° in a fresh session: %v", dd, err)
		}
		if !reflect.DeepEqual(got.Report, want.Report) {
			t.Errorf("delay %+g°: report in a warm session\n%+v\nin a fresh one\n%+v", dd, got.Report, want.Report)
		}
		if len(got.Frames) != 1 || len(want.Frames) != 1 {
			t.Fatalf("delay %+g°: %d and %d frames, want 1", dd, len(got.Frames), len(want.Frames))
		}
		g, w := got.Frames[0], want.Frames[0]
		if g.Width != w.Width || g.Height != w.Height || g.OriginXMM != w.OriginXMM || g.OriginYMM != w.OriginYMM {
			t.Fatalf("delay %+g°: frame %d × %d at (%g, %g), fresh %d × %d at (%g, %g)", dd, g.Width, g.Height, g.OriginXMM, g.OriginYMM, w.Width, w.Height, w.OriginXMM, w.OriginYMM)
		}
		lo, hi, maxDiff := math.Inf(1), math.Inf(-1), 0.0
		for i := range w.Pix {
			if g.Covered[i] != w.Covered[i] {
				t.Fatalf("delay %+g°: pixel %d covered %v in a warm session, %v in a fresh one", dd, i, g.Covered[i], w.Covered[i])
			}
			if !w.Covered[i] {
				continue
			}
			a, b := float64(g.Pix[i]), float64(w.Pix[i])
			lo, hi = math.Min(lo, b), math.Max(hi, b)
			maxDiff = math.Max(maxDiff, math.Abs(a-b))
		}
		if !(hi > lo) {
			t.Fatalf("delay %+g°: the fresh frame is flat (%g … %g)", dd, lo, hi)
		}
		if maxDiff > 1e-6*(hi-lo) {
			t.Errorf("delay %+g°: pixels differ by up to %g, over 1e-6 of the range %g", dd, maxDiff, hi-lo)
		}
	}
}
