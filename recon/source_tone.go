package recon

import (
	"context"
	"errors"
	"math"

	"spotloom/recon/recipe"
)

// toneSource is the peak amplitude of a carrier tone on the position
// channel (a potentiometer fed with a sine wave, read by an AC-coupled
// sound card), demodulated by toneAmplitude and mapped to mm by
// rows.calibration.
type toneSource struct{}

func (toneSource) find(ctx context.Context, rec rowsInput, p rowsParams, res *rowsResult) (*rowsResult, error) {
	levels, blockLen, carrier, err := toneAmplitude(rec, p.CarrierHz)
	if err != nil {
		return nil, err
	}
	res.blockLen, res.carrier = blockLen, carrier
	return levelRows(ctx, rec, p, res, levels)
}

func (toneSource) channel(ch channels) int { return ch.position }

func (toneSource) needs() string { return "position" }

func (toneSource) readsTone() bool { return true }

func (toneSource) fromTiming(*recipe.Recipe, *timingResult, float64) []string { return nil }

func (toneSource) liveNull(r recipe.Recipe) string {
	if r.Rows.CarrierHz == nil {
		return "rows.carrier_hz"
	}
	if r.Channels.Position.IsSet() && r.Channels.Position == r.Channels.Index {
		// The tone on the index channel: the pulses are told from it by
		// their levels (liveShared).
		switch {
		case r.Rows.PulseRest == nil:
			return "rows.pulse_rest"
		case r.Rows.PulseAway == nil:
			return "rows.pulse_away"
		}
	}
	return ""
}

func (toneSource) liveLevels(r recipe.Recipe, rateHz float64) liveLevels {
	return toneLevels{newToneDemod(*r.Rows.CarrierHz, rateHz)}
}

// toneLevels reads a live tone: a block's level is the tone's amplitude
// over the window around it, final once the window is whole; the blocks
// before the first whole window take its level.
type toneLevels struct{ d *toneDemod }

func (t toneLevels) blockLen() int { return t.d.blockLen }

func (t toneLevels) final(x []float32, n int, levels []float64) []float64 {
	x = x[:n]
	first, last := toneWholeBlocks(n, t.d.blockLen)
	if last < first {
		return levels
	}
	for j := len(levels); j <= last; j++ {
		levels = append(levels, t.d.block(x, j))
	}
	for j := 0; j < first; j++ {
		levels[j] = levels[first]
	}
	return levels
}

func (t toneLevels) all(x []float32, n, nb int, levels []float64) []float64 {
	x = x[:n]
	first, last := toneWholeBlocks(n, t.d.blockLen)
	if last < first {
		levels = nil
		for j := 0; j < nb; j++ {
			levels = append(levels, t.d.block(x, j))
		}
	}
	for len(levels) < nb {
		levels = append(levels, levels[last])
	}
	return levels
}

// minToneShare is the least share of a window's weight that must lie
// outside the pulses for its block to get a tone amplitude of its own.
const minToneShare = 0.3

// maskedToneBlocks is the amplitude of the tone at ω (radians per sample)
// in each block of x, a channel that carries index pulses over the sample
// spans pulses too: a weighted least-squares fit (window hann, two blocks
// long, centred on the block) of c·cos ωs + d·sin ωs + e + g·u (u a ramp
// across the window, for a level that drifts after a pulse) to the
// samples outside the pulses, whose amplitude is √(c² + d²). Over a whole
// window with no pulse it measures what toneDemod.block does; with a pulse in
// it, the fit is not disturbed by the samples left out, as a mixing sum
// would be. A block whose window is mostly pulse takes the amplitude
// interpolated between its neighbours.
func maskedToneBlocks(x []float32, blockLen int, hann []float64, w float64, pulses [][2]int) ([]float64, error) {
	inPulse := make([]bool, len(x))
	for _, p := range pulses {
		for i := max(p[0], 0); i < min(p[1], len(x)); i++ {
			inPulse[i] = true
		}
	}
	out := make([]float64, (len(x)+blockLen-1)/blockLen)
	for j := range out {
		out[j] = maskedToneBlock(x, inPulse, 0, j, blockLen, hann, w)
	}
	if !interpolateNaN(out) {
		return nil, errNoToneStretch
	}
	return out, nil
}

// errNoToneStretch is maskedToneBlocks' error when no block has a tone
// amplitude of its own.
var errNoToneStretch = errors.New("the index pulses leave no stretch of the tone long enough to measure its amplitude")

// maskedToneBlock is the amplitude of block j (maskedToneBlocks), NaN when
// its window is mostly pulse; inPulse[s−off] tells whether sample s is in
// a pulse, for every sample of the block's window.
func maskedToneBlock(x []float32, inPulse []bool, off, j, blockLen int, hann []float64, w float64) float64 {
	rot := complex(math.Cos(w), math.Sin(w))
	c := j*blockLen + blockLen/2
	a, b := max(c-blockLen, 0), min(c+blockLen, len(x))
	fit := toneFit{w: w}
	z := complex(math.Cos(w*float64(a)), math.Sin(w*float64(a)))
	total, kept := 0.0, 0.0
	for s := a; s < b; s++ {
		h := hann[s-(c-blockLen)]
		total += h
		if !inPulse[s-off] {
			kept += h
			fit.addBasis(float64(x[s]), [4]float64{real(z), imag(z), 1, float64(s-c) / float64(blockLen)}, h)
		}
		z *= rot
	}
	if kept >= minToneShare*total {
		if coef, ok := fit.solve(false); ok {
			return math.Hypot(coef[0], coef[1])
		}
	}
	return math.NaN()
}

// interpolateNaN replaces NaN values by linear interpolation between the nearest
// values on either side (the nearest one at the ends); false when all are
// NaN.
func interpolateNaN(v []float64) bool {
	last := -1
	for i, x := range v {
		if math.IsNaN(x) {
			continue
		}
		switch {
		case last < 0:
			for k := 0; k < i; k++ {
				v[k] = x
			}
		case i > last+1:
			for k := last + 1; k < i; k++ {
				v[k] = v[last] + (x-v[last])*float64(k-last)/float64(i-last)
			}
		}
		last = i
	}
	if last < 0 {
		return false
	}
	for k := last + 1; k < len(v); k++ {
		v[k] = v[last]
	}
	return true
}

func (toneSource) liveY(recipe.Recipe, float64) liveY { return nil }
