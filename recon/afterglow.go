package recon

import (
	"context"
	"math"

	"spotloom/recon/recipe"
)

// A phosphor screen keeps glowing after the beam has left a spot: its
// output is the input convolved with exp(−t/τ)/τ, which smears every line
// along the sweep. Sampled (impulse-invariant, input held over each
// sample), the afterglow is the first-order recursion
//
//	y[n] = a·y[n−1] + (1−a)·x[n],  a = exp(−1/(fs·τ)),
//
// whose exact inverse is x[n] = (y[n] − a·y[n−1])/(1−a) (Oppenheim &
// Schafer, "Discrete-Time Signal Processing", §5.2, inverse systems). The
// photon noise enters before the afterglow, so the exact inverse only
// returns it to its own level; noise added after it (the amplifier, the
// ADC) is raised by the inverse's white-noise gain, √(1+a²)/(1−a), which
// grows without bound as τ grows. The restoration therefore follows the
// inverse with a single-pole low-pass y'[n] = b·y'[n−1] + (1−b)·x[n]: a
// Wiener-style trade that leaves a short residual afterglow of time
// constant −1/(fs·ln b) in place of τ, with b the smallest value (the
// sharpest result) whose white-noise gain stays within
// afterglowNoiseGain.

// afterglowNoiseGain bounds the RMS gain of the restoration for white
// noise added after the afterglow (common practice, no published source:
// it keeps amplifier noise well below the photon noise of a detector worth
// imaging with, and costs a 300 µs afterglow at 96 kHz a residual of
// under 15 µs).
const afterglowNoiseGain = 16

// afterglowFilter returns the afterglow's pole a and the regularising
// pole b for a time constant tauS at fs.
func afterglowFilter(tauS, fs float64) (a, b float64) {
	a = math.Exp(-1 / (fs * tauS))
	if restorationGain(a, 0) <= afterglowNoiseGain {
		return a, 0
	}
	lo, hi := 0.0, a
	for range 60 {
		mid := (lo + hi) / 2
		if restorationGain(a, mid) > afterglowNoiseGain {
			lo = mid
		} else {
			hi = mid
		}
	}
	return a, hi
}

// restorationGain is the RMS gain for white noise of the inverse followed
// by the low-pass, H(z) = (1−b)/(1−a) · (1 − a z⁻¹)/(1 − b z⁻¹): its
// impulse response is h0 = 1, hn = (b−a)·b^(n−1) (times the constant), so
// Σh² = 1 + (a−b)²/(1−b²) (Parseval, a closed form).
func restorationGain(a, b float64) float64 {
	return (1 - b) / (1 - a) * math.Sqrt(1+(a-b)*(a-b)/(1-b*b))
}

// undoAfterglow returns a copy of x with a single-exponential afterglow of
// time constant tauS (seconds) undone at fs, regularised as above. The
// recursion starts settled on x[0].
func undoAfterglow(x []float32, tauS, fs float64) []float32 {
	out := make([]float32, len(x))
	newAfterglowUndo(tauS, fs).run(out, x)
	return out
}

// afterglowUndo is undoAfterglow with its state kept, so a capture can be
// restored a block at a time as it is recorded, with the same result.
type afterglowUndo struct {
	a, b, k         float64
	prevIn, prevOut float64
	started         bool
}

func newAfterglowUndo(tauS, fs float64) *afterglowUndo {
	a, b := afterglowFilter(tauS, fs)
	return &afterglowUndo{a: a, b: b, k: (1 - b) / (1 - a)}
}

// run writes the restored x into out (len(out) == len(x)).
func (g *afterglowUndo) run(out, x []float32) {
	if len(x) > 0 && !g.started {
		g.prevIn, g.prevOut, g.started = float64(x[0]), float64(x[0]), true
	}
	for i, v := range x {
		y := float64(v)
		o := g.b*g.prevOut + g.k*(y-g.a*g.prevIn)
		out[i] = float32(o)
		g.prevIn, g.prevOut = y, o
	}
}

// fitAfterglow estimates the afterglow's time constant, in seconds, from
// the detector's measured fall where the beam leaves the field: the slope
// of ln f(t) over the tail, where f has fallen from 70 % to 5 % (a
// least-squares line, so a single exponential's slope is −1/τ exactly).
// It returns 0 when the fall is too short to fit (under four bins).
func fitAfterglow(e *edgeResponse, fs float64) float64 {
	if e == nil {
		return 0
	}
	var ts, ls []float64
	for b, v := range e.f {
		if v <= 0.7 && v >= 0.05 {
			ts = append(ts, (float64(b)+0.5)/edgeBinsPerSample)
			ls = append(ls, math.Log(v))
		}
	}
	if len(ts) < 4 {
		return 0
	}
	slope := lineSlope(ts, ls)
	if !(slope < 0) {
		return 0
	}
	return -1 / slope / fs
}

// lineSlope is the least-squares slope of b against a.
func lineSlope(a, b []float64) float64 {
	ma, mb := meanOf(a), meanOf(b)
	var num, den float64
	for i := range a {
		num += (a[i] - ma) * (b[i] - mb)
		den += (a[i] - ma) * (a[i] - ma)
	}
	return num / den
}

// afterglowStage estimates signal.afterglow_us (µs) for a recipe that
// leaves it null: the lines are placed on the detector as recorded (with
// the recipe's delay and offsets, or the automatic ones), the
// fall after the field is measured (measureEdgeResponse) and its tail
// fitted. Laws without a beam-off stretch, and a baseline of none, give 0
// with a warning.
func (s *Session) afterglowStage(ctx context.Context, r recipe.Recipe, ch channels, t *timingResult) (float64, []string, error) {
	if !hasBeamOff(r.Sweep.Law) || r.Signal.Baseline == "none" {
		return 0, []string{"signal.afterglow_us is null, but without a beam-off stretch and its baseline the decay cannot be measured: it is taken as 0"}, nil
	}
	raw := r.Clone()
	raw.Signal.AfterglowUS = recipe.Float(0)
	p := struct {
		T     string
		Det   int
		Sweep recipe.Sweep
		Sig   recipe.Signal
	}{t.key, ch.detector, raw.Sweep, raw.Signal}
	us, err := cachedStage(s.afterglows, s.runs, "afterglow", p, func() (float64, error) {
		if raw.Sweep.ApertureOffsetsDeg == nil {
			// The offsets are differences between apertures, which an
			// afterglow delays alike: measured on the detector as
			// recorded, they time each line's fall where it is, where
			// offsets left at zero would spread the falls of the
			// apertures and lengthen the fitted decay.
			if _, err := s.resolveOffsets(ctx, &raw, ch, t); err != nil {
				return 0, err
			}
		}
		if raw.Sweep.DelayDeg == nil {
			d, err := s.delayStage(ctx, raw, ch, t)
			if err != nil {
				return 0, err
			}
			raw.Sweep.DelayDeg = &d.DelayDeg
		}
		pl, err := s.placeStage(ctx, raw, ch, t)
		if err != nil {
			return 0, err
		}
		// Whole tenths of a microsecond: finer is below what the fit can
		// tell.
		return math.Round(fitAfterglow(pl.edge, s.rec.SampleRateHz)*1e7) / 10, nil
	})
	return us, nil, err
}
