package ui

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// The ranges kept as blocks arrive are each channel's smallest and largest
// sample (slices.Min and slices.Max of the Go standard library over the
// whole channel), and the peaks each channel's largest |sample| in the
// block (math.Abs), a NaN taken by no comparison; the feed hands over the
// whole frames pushed since the last take.
func TestLiveRangesAndPeaksPerChannel(t *testing.T) {
	const nch = 3
	rng := rand.New(rand.NewPCG(5, 6))
	chans := make([][]float32, nch)
	var ranges [][2]float64
	feed := newLiveFeed(nch)
	pushed := int64(0)
	for _, frames := range []int{1, 500, 37, 2000} {
		block := make([]float32, nch*frames)
		for i := range block {
			block[i] = float32(rng.NormFloat64() * float64(1+i%nch))
			if frames > 1 && i == nch*(frames/2) {
				block[i] = float32(math.NaN())
			}
			chans[i%nch] = append(chans[i%nch], block[i])
		}
		peak := make([]float32, nch)
		ranges = widenRanges(ranges, block, nch, peak)
		feed.push(block)
		feed.push([]float32{1, 2, 3, 70}) // a frame, and a part frame, which is not taken
		taken, total, _ := feed.take()
		pushed += int64(frames) + 1
		bits := func(x []float32) []uint32 {
			out := make([]uint32, len(x))
			for i, v := range x {
				out[i] = math.Float32bits(v)
			}
			return out
		}
		if !slices.Equal(bits(taken), bits(append(slices.Clone(block), 1, 2, 3))) || total != pushed {
			t.Errorf("block of %d frames: took %d samples (%d frames in all), want the block and the whole frame after it (%d frames)", frames, len(taken), total, pushed)
		}
		for c := range nch {
			ch := slices.DeleteFunc(slices.Clone(chans[c]), func(v float32) bool { return v != v })
			if lo, hi := slices.Min(ch), slices.Max(ch); ranges[c] != [2]float64{float64(lo), float64(hi)} {
				t.Errorf("channel %d after %d samples: range %v, want [%v %v]", c, len(chans[c]), ranges[c], lo, hi)
			}
			want := 0.0
			for i := c; i < len(block); i += nch {
				if v := float64(block[i]); v == v {
					want = math.Max(want, math.Abs(v))
				}
			}
			if float64(peak[c]) != want {
				t.Errorf("channel %d, block of %d frames: peak %v, want %v", c, frames, peak[c], want)
			}
		}
	}
}
