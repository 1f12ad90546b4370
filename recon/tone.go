package recon

import "math"

// Tone maps frame values to display or export brightness: a window of
// width Window centred on Level (both in frame units, the units of
// Frame.Pix) is stretched to 0..1, then shaped by Gamma and optionally
// inverted.
//
// The zero value is usable: a Window of 0 is a hard threshold at Level and
// a Gamma of 0 means 1 (linear).
type Tone struct {
	Window float64 // width of the value range mapped to 0..1, frame units
	Level  float64 // centre of that range, frame units
	Gamma  float64 // output = linear^(1/Gamma): above 1 lifts the mid-tones
	Invert bool    // bright becomes dark (applied last)
}

// AutoTonePercentLow and AutoTonePercentHigh are the percentiles of the
// covered pixels that AutoTone maps to black and white. Leaving half a
// percent out at either end keeps a few hot or dead pixels from flattening
// the whole frame.
const (
	AutoTonePercentLow  = 0.5
	AutoTonePercentHigh = 99.5
)

// AutoTone returns a linear tone whose window runs from the 0.5th to the
// 99.5th percentile of the frame's covered, finite pixels. Percentiles are
// empirical (nearest rank: the smallest value with at least p·n values at
// or below it). A frame with no data gets the window 0..1; a frame whose
// percentiles coincide gets a window of 1 centred on that value.
func AutoTone(f *Frame) Tone {
	var values []float32
	if f != nil {
		values = make([]float32, 0, len(f.Pix))
		for i, v := range f.Pix {
			if i < len(f.Covered) && f.Covered[i] && !math.IsNaN(float64(v)) && !math.IsInf(float64(v), 0) {
				values = append(values, v)
			}
		}
	}
	if len(values) == 0 {
		return Tone{Window: 1, Level: 0.5, Gamma: 1}
	}
	lo := float64(percentile(values, AutoTonePercentLow/100))
	hi := float64(percentile(values, AutoTonePercentHigh/100))
	if hi <= lo {
		return Tone{Window: 1, Level: lo, Gamma: 1}
	}
	return Tone{Window: hi - lo, Level: (lo + hi) / 2, Gamma: 1}
}

// Map returns the brightness of frame value v, from 0 (black) to 1
// (white). NaN maps to 0.
func (t Tone) Map(v float32) float64 {
	x := float64(v)
	if math.IsNaN(x) {
		return 0
	}
	var linear float64
	if t.Window > 0 {
		linear = (x - (t.Level - t.Window/2)) / t.Window
	} else if x >= t.Level {
		linear = 1
	}
	linear = min(max(linear, 0), 1)
	if t.Gamma > 0 && t.Gamma != 1 && linear > 0 && linear < 1 {
		linear = math.Pow(linear, 1/t.Gamma)
	}
	if t.Invert {
		return 1 - linear
	}
	return linear
}

// percentile returns the empirical p-quantile (0 ≤ p ≤ 1) of values: the
// element of rank ceil(p·n) (1-based, at least 1). It reorders values.
func percentile(values []float32, p float64) float32 {
	k := int(math.Ceil(p*float64(len(values)))) - 1
	k = min(max(k, 0), len(values)-1)
	return selectKth(values, k)
}

// selectKth returns the k-th smallest element (0-based) of values in
// expected linear time (Hoare's quickselect with a three-way partition, so
// frames with many equal values stay fast). It reorders values.
func selectKth(values []float32, k int) float32 {
	lo, hi := 0, len(values)-1
	for lo < hi {
		mid := lo + (hi-lo)/2
		pivot := medianOfThree(values[lo], values[mid], values[hi])
		// Partition into < pivot [lo,lt), == pivot [lt,gt], > pivot (gt,hi].
		lt, i, gt := lo, lo, hi
		for i <= gt {
			switch v := values[i]; {
			case v < pivot:
				values[lt], values[i] = values[i], values[lt]
				lt++
				i++
			case v > pivot:
				values[gt], values[i] = values[i], values[gt]
				gt--
			default:
				i++
			}
		}
		switch {
		case k < lt:
			hi = lt - 1
		case k > gt:
			lo = gt + 1
		default:
			return pivot
		}
	}
	return values[k]
}

func medianOfThree(a, b, c float32) float32 {
	if a > b {
		a, b = b, a
	}
	if b > c {
		b = c
	}
	return max(a, b)
}
