package ui

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// The ranges kept as blocks arrive are each channel's smallest and largest
// sample (slices.Min and slices.Max of the Go standard library over the
// whole channel), and the feed's peaks each channel's largest |sample|
// since the last take (math.Abs), a NaN taken by no comparison.
func TestLiveRangesAndPeaksPerChannel(t *testing.T) {
	const nch = 3
	rng := rand.New(rand.NewPCG(5, 6))
	chans := make([][]float32, nch)
	var ranges [][2]float64
	feed := newLiveFeed(nch)
	for _, frames := range []int{1, 500, 37, 2000} {
		block := make([]float32, nch*frames)
		for i := range block {
			block[i] = float32(rng.NormFloat64() * float64(1+i%nch))
			chans[i%nch] = append(chans[i%nch], block[i])
		}
		ranges = widenRanges(ranges, block, nch)
		feed.push(block)
		feed.push([]float32{float32(math.NaN()), 0, 0, 70}) // a NaN, and a part frame, which is not taken
		_, peak, _, _ := feed.take()
		for c := range nch {
			if lo, hi := slices.Min(chans[c]), slices.Max(chans[c]); ranges[c] != [2]float64{float64(lo), float64(hi)} {
				t.Errorf("channel %d after %d samples: range %v, want [%v %v]", c, len(chans[c]), ranges[c], lo, hi)
			}
			want := 0.0
			for i := c; i < len(block); i += nch {
				want = math.Max(want, math.Abs(float64(block[i])))
			}
			if float64(peak[c]) != want {
				t.Errorf("channel %d, block of %d frames: peak %v, want %v", c, frames, peak[c], want)
			}
		}
	}
}
