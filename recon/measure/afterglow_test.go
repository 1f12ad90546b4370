package measure

import (
	"math"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// A phosphor afterglow of 300 µs smears the card's near-vertical edges
// along the sweep; signal.afterglow_us 300 (or null, estimated from the
// decay after the field) restores them to within 10 % of the MTF50 of the
// same scene scanned without afterglow. MTF50 is measured by the ISO
// 12233:2017 slanted-edge method (Edge, e-SFR) on the edges that run
// cross-scan; the captures carry photon and amplifier noise, so the
// regularised inverse must not drown the edge in noise.
func TestAfterglowRestoresEdgeSharpness(t *testing.T) {
	clean := sampledata.DemoRig()
	clean.Detector.AfterglowS = 0
	clean.Wheel.ApertureErrorsDeg = make([]float64, clean.Wheel.ApertureCount)
	glowing := clean
	glowing.Detector.AfterglowS = 300e-6
	// mtf50 is the mean MTF50 of the card's near-vertical edges, and the
	// afterglow the build resolved.
	mtf50 := func(rig sampledata.Rig, afterglowUS *float64) (float64, float64) {
		t.Helper()
		f, truth := simulateFrame(t, rig, "edge-card", false, func(r *recipe.Recipe) {
			r.Signal.AfterglowUS = afterglowUS
			// The delay is automatic, found on the detector as the
			// recipe restores it.
			r.Sweep.DelayDeg = nil
		})
		sum, n := 0.0, 0
		for _, e := range truth.Features {
			if e.Kind != "edge" {
				continue
			}
			res, err := Edge(f, Rect{e.XMM - 30, e.YMM - 25, e.XMM + 30, e.YMM + 25})
			if err != nil || res.Orientation != EdgeAlongY || math.IsNaN(res.MTF50LPMM) {
				continue
			}
			sum += res.MTF50LPMM
			n++
		}
		if n == 0 {
			return math.NaN(), *f.Recipe.Signal.AfterglowUS
		}
		return sum / float64(n), *f.Recipe.Signal.AfterglowUS
	}
	ref, _ := mtf50(clean, recipe.Float(0))
	blurred, _ := mtf50(glowing, recipe.Float(0))
	restored, _ := mtf50(glowing, recipe.Float(300))
	estimated, us := mtf50(glowing, nil)
	t.Logf("MTF50 along the sweep: %.4f lp/mm without afterglow, %.4f with 300 µs, %.4f restored, %.4f restored with the estimate %.1f µs",
		ref, blurred, restored, estimated, us)
	if math.IsNaN(ref) {
		t.Fatal("no near-vertical edge measured without afterglow")
	}
	// Unrestored, the smear (about 7 mm of exponential tail at the field
	// edge) is so long that the edge may not be measurable at all.
	if blurred > 0.8*ref {
		t.Errorf("the afterglow hardly blurs (MTF50 %.4f against %.4f): the test shows nothing", blurred, ref)
	}
	if !(math.Abs(restored-ref) <= 0.1*ref) {
		t.Errorf("restored MTF50 %.4f lp/mm, %.4f without afterglow: want within 10 %%", restored, ref)
	}
	// The estimate sees the amplifier's low-pass (8 µs) on top of the
	// afterglow: within 10 % of 300 µs.
	if math.Abs(us-300) > 30 {
		t.Errorf("estimated afterglow %.1f µs, the rig's is 300 µs", us)
	}
	if !(math.Abs(estimated-ref) <= 0.1*ref) {
		t.Errorf("MTF50 %.4f lp/mm with the estimated afterglow, %.4f without afterglow: want within 10 %%", estimated, ref)
	}
}
