package recon

import (
	"context"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// A two-input sound card carries the index pulses and the position tone on
// one channel (channels.position naming channels.index, rows.source tone).
// The two are told apart by what they are: the tone is one narrow line of
// the spectrum well above the line rate, the pulses are short and sharp.
// The pulses are timed on the channel with the tone taken out by a notch
// at the carrier; the tone's amplitude is fitted to the samples outside
// the pulses (toneLevelsMasked), so neither leaks into the other.

// notchBandwidthFraction is the notch's −3 dB bandwidth as a fraction of
// the carrier: wide enough to take the tone's amplitude changes (a head
// moves the level over tens of milliseconds at the fastest) and a small
// error in the carrier's frequency, narrow enough that the pulse energy it
// also takes out rings at a few per cent of the pulse height.
const notchBandwidthFraction = 1.0 / 30

// pulseGuardS is how far on either side of a pulse the tone fit leaves
// samples out: the pulse's own rise and fall and the notch's ringing
// right next to an edge.
const pulseGuardS = 50e-6

// sharedIndex is a channel carrying the index pulses and a carrier tone,
// taken apart: the pulses with the tone notched out, their two levels, and
// the sample spans the pulses (with a guard) cover, sorted.
type sharedIndex struct {
	carrierHz  float64
	pulses     []float32
	otsu       OtsuResult
	rest, away float64 // automatic levels (pulseLevels)
	guard      int
	mu         sync.Mutex
	spans      *memo[[][2]int] // [first, end) samples of each pulse, by rest and away
}

// notchCoefficients are the coefficients of a second-order IIR notch at
// fc with −3 dB bandwidth bw (R. Bristow-Johnson, "Cookbook formulae for
// audio EQ biquad filter coefficients", notch): b = [1, −2 cos ω0, 1],
// a = [1+α, −2 cos ω0, 1−α] with ω0 = 2π fc/fs and α = sin ω0 / (2Q),
// Q = fc/bw; returned normalised by a0.
func notchCoefficients(fc, bw, rateHz float64) (b, a [3]float64) {
	w0 := 2 * math.Pi * fc / rateHz
	alpha := math.Sin(w0) / (2 * fc / bw)
	a0 := 1 + alpha
	c := math.Cos(w0)
	return [3]float64{1 / a0, -2 * c / a0, 1 / a0}, [3]float64{1, -2 * c / a0, (1 - alpha) / a0}
}

// notchZeroPhase filters x through the notch forward, then backward, so
// that the result has no phase shift (an edge keeps its time) and the
// notch's attenuation twice. A notch meeting a tone that starts abruptly
// rings at the tone's amplitude for a few ring-down times, so each end is
// extended by seven ring-down times (1/(π·bw) each: the notch's poles
// decay as exp(−π·bw·t)) of the tone itself, fitted to the
// first and last stretch of the capture (toneAtEnd): the filter meets the
// capture in its steady state.
func notchZeroPhase(x []float32, fc, bw, rateHz float64) []float32 {
	n := len(x)
	// (No longer than the capture: a notch ringing for longer than that
	// was asked for a carrier a capture cannot hold.)
	pad, fit := notchEnds(fc, bw, rateHz)
	pad = min(pad, n)
	ext := make([]float64, n+2*pad)
	w := 2 * math.Pi * fc / rateHz
	head, tail := toneAtEnd(x, 0, min(fit, n), w), toneAtEnd(x, max(n-fit, 0), n, w)
	for i := range pad {
		ext[pad-1-i] = head.at(float64(-1 - i))
		ext[pad+n+i] = tail.at(float64(n + i))
	}
	for i, v := range x {
		ext[pad+i] = float64(v)
	}
	b, a := notchCoefficients(fc, bw, rateHz)
	biquad := func(at func(int) *float64) {
		var x1, x2, y1, y2 float64
		for i := range ext {
			p := at(i)
			x0 := *p
			y0 := b[0]*x0 + b[1]*x1 + b[2]*x2 - a[1]*y1 - a[2]*y2
			x2, x1, y2, y1 = x1, x0, y1, y0
			*p = y0
		}
	}
	biquad(func(i int) *float64 { return &ext[i] })
	biquad(func(i int) *float64 { return &ext[len(ext)-1-i] })
	out := make([]float32, n)
	for i := range out {
		out[i] = float32(ext[pad+i])
	}
	return out
}

// notchEnds are how far notchZeroPhase extends a recording at each end
// (seven of the notch's ring-down times, 1/(π·bw)) and how many samples
// at each end the tone of the extension is fitted to (eight carrier
// periods, at least 16). The live build (liveShared) uses the same.
func notchEnds(fc, bw, rateHz float64) (pad, fit int) {
	return int(math.Ceil(7 * rateHz / (math.Pi * bw))), max(int(math.Ceil(8*rateHz/fc)), 16)
}

// toneAtEnd fits a steady tone c·cos ωs + d·sin ωs + e to samples [a, b)
// of x, leaving out the samples of pulses: after a first fit of all of
// them, those more than four times the median deviation from it (a pulse
// among them; mostly noise otherwise) are left out of a second.
func toneAtEnd(x []float32, a, b int, w float64) steadyTone {
	first := toneFit{w: w}
	for s := a; s < b; s++ {
		first.add(float64(x[s]), s, 1)
	}
	tone, _ := first.steady()
	dev := make([]float64, 0, b-a)
	for s := a; s < b; s++ {
		dev = append(dev, math.Abs(float64(x[s])-tone.at(float64(s))))
	}
	limit := 4 * median(append([]float64(nil), dev...))
	second := toneFit{w: w}
	for s := a; s < b; s++ {
		if dev[s-a] <= limit {
			second.add(float64(x[s]), s, 1)
		}
	}
	if t, ok := second.steady(); ok {
		return t
	}
	return tone
}

// toneFit accumulates a weighted least-squares fit of samples to
// c·cos ωs + d·sin ωs + e + g·u, where u is a ramp across the samples: a
// tone of known frequency ω (radians per sample) whose amplitude and phase
// are sought, on a level that may drift (an AC-coupled input recovering
// from a pulse).
type toneFit struct {
	w   float64
	ata [4][4]float64
	atb [4]float64
	n   int
}

// add takes sample value v at sample s with weight h, for a steady fit.
func (f *toneFit) add(v float64, s int, h float64) {
	ws := f.w * float64(s)
	f.addBasis(v, [4]float64{math.Cos(ws), math.Sin(ws), 1, 0}, h)
}

func (f *toneFit) addBasis(v float64, basis [4]float64, h float64) {
	for i, bi := range basis {
		f.atb[i] += h * bi * v
		for j := i; j < 4; j++ {
			f.ata[i][j] += h * bi * basis[j]
		}
	}
	f.n++
}

// solve returns the fitted coefficients, or false when the samples do not
// fix them (too few, or all at one phase of the tone). With steady set the
// drift term is left out.
func (f *toneFit) solve(steady bool) ([4]float64, bool) {
	m := 4
	if steady {
		m = 3
	}
	var coef [4]float64
	if f.n < 2*m {
		return coef, false
	}
	sym := mat.NewSymDense(m, nil)
	rhs := mat.NewVecDense(m, nil)
	for i := 0; i < m; i++ {
		rhs.SetVec(i, f.atb[i])
		for j := i; j < m; j++ {
			sym.SetSym(i, j, f.ata[i][j])
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(sym) {
		return coef, false
	}
	if c := chol.Cond(); !(c < 1e10) {
		return coef, false
	}
	var sol mat.VecDense
	if err := chol.SolveVecTo(&sol, rhs); err != nil {
		return coef, false
	}
	for i := 0; i < m; i++ {
		coef[i] = sol.AtVec(i)
	}
	return coef, true
}

// steady returns the fitted tone without drift.
func (f *toneFit) steady() (steadyTone, bool) {
	c, ok := f.solve(true)
	return steadyTone{c[0], c[1], c[2], f.w}, ok
}

// steadyTone is c·cos ωs + d·sin ωs + e at sample s.
type steadyTone struct{ c, d, e, w float64 }

func (t steadyTone) at(s float64) float64 {
	return t.c*math.Cos(t.w*s) + t.d*math.Sin(t.w*s) + t.e
}

// pulseLevels are the resting level of a tone-free index signal x with
// the two levels o (the level most samples sit at) and a quarter of the
// step between the two levels: rows.pulse_rest and rows.pulse_away when
// left automatic.
func pulseLevels(x []float32, o OtsuResult) (rest, away float64) {
	above := 0
	for _, v := range x {
		if float64(v) > o.Threshold {
			above++
		}
	}
	rest = o.LowMean
	if 2*above > len(x) {
		rest = o.HighMean
	}
	return rest, 0.25 * math.Abs(o.HighMean-o.LowMean)
}

// pulseSpans returns the stretches where the tone-free index signal is
// away from its resting level rest by more than away, each widened by
// guard samples on either side and merged where they meet. A sample s
// lies in a span exactly when some sample within guard of it (s−guard to
// s+guard) is away from rest, which the live build uses (liveShared).
func pulseSpans(x []float32, rest, away float64, guard int) [][2]int {
	var spans [][2]int
	for i := 0; i < len(x); {
		if !isAway(x[i], rest, away) {
			i++
			continue
		}
		j := i
		for j < len(x) && isAway(x[j], rest, away) {
			j++
		}
		a, b := max(i-guard, 0), min(j+guard, len(x))
		if k := len(spans) - 1; k >= 0 && a <= spans[k][1] {
			spans[k][1] = b
		} else {
			spans = append(spans, [2]int{a, b})
		}
		i = j
	}
	return spans
}

// isAway reports whether v is away from the resting level (pulseSpans).
func isAway(v float32, rest, away float64) bool { return math.Abs(float64(v)-rest) > away }

// pulseGuard is pulseGuardS in samples.
func pulseGuard(rateHz float64) int { return max(2, int(math.Ceil(pulseGuardS*rateHz))) }

// spansFor returns the pulse spans of sh at the levels rest and away
// (nil: automatic), kept in the session's usual memo for the last few
// level pairs.
func (sh *sharedIndex) spansFor(rest, away *float64) (float64, float64, [][2]int) {
	r, a := sh.rest, sh.away
	if rest != nil {
		r = *rest
	}
	if away != nil {
		a = *away
	}
	sh.mu.Lock()
	defer sh.mu.Unlock()
	sp, _ := cachedStage(sh.spans, nil, "", [2]float64{r, a}, func() ([][2]int, error) {
		return pulseSpans(sh.pulses, r, a, sh.guard), nil
	})
	return r, a, sp
}

// sharedParams key the taken-apart channel.
type sharedParams struct {
	Channel   int
	CarrierHz float64
}

// sharedChannel takes channel ch, carrying the index pulses and a tone at
// carrierHz, apart (cached by both).
func (s *Session) sharedChannel(ctx context.Context, ch int, carrierHz float64) (*sharedIndex, error) {
	return cachedStage(s.shared, s.runs, "shared", sharedParams{ch, carrierHz}, func() (*sharedIndex, error) {
		rate := s.rec.SampleRateHz
		x := s.rec.Channels[ch].Samples
		if err := checkCarrier(carrierHz, rate, len(x)); err != nil {
			return nil, err
		}
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		pulses := notchZeroPhase(x, carrierHz, carrierHz*notchBandwidthFraction, rate)
		o := Otsu(pulses)
		rest, away := pulseLevels(pulses, o)
		return &sharedIndex{carrierHz: carrierHz, pulses: pulses, otsu: o, rest: rest, away: away, guard: pulseGuard(rate),
			spans: newMemo[[][2]int](4)}, nil
	})
}
