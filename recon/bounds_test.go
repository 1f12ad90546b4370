package recon

import (
	"context"
	"math"
	"strings"
	"testing"
)

// An extent that overflows int (here 5e307 mm at 1 mm, which int() turns
// into -9.2e18) is refused as too big before anything is allocated,
// instead of wrapping round to a negative or small frame.
func TestGridFrameRefusesOverflowingExtent(t *testing.T) {
	for _, in := range []gridInput{
		{sweep: &sweepMap{xMin: -2.7e307, xMax: 2.7e307}, yTop: 100, yBottom: 0, pitch: 1},
		{sweep: &sweepMap{xMin: 0, xMax: 100}, yTop: math.Inf(1), yBottom: 0, pitch: 1},
		{sweep: &sweepMap{xMin: 0, xMax: 100}, yTop: 100, yBottom: 0, pitch: 1e-300},
		{sweep: &sweepMap{xMin: 0, xMax: math.NaN()}, yTop: 100, yBottom: 0, pitch: 1},
	} {
		_, _, _, err := gridFrame(context.Background(), in)
		if err == nil || !strings.Contains(err.Error(), "more than 16777216 pixels") {
			t.Errorf("x %g..%g, y %g..%g, pitch %g: %v", in.sweep.xMin, in.sweep.xMax, in.yBottom, in.yTop, in.pitch, err)
		}
	}
}
