package sampledata

import (
	"math"
	"math/rand/v2"
	"sort"
)

// wheelPath is the wheel's true angle at every sample: phi[i] is the angle
// in degrees at t = i/fs (phi has one more entry than the capture has
// samples). Between samples the angle is linear, which defines the true time
// of any angle exactly.
type wheelPath struct {
	fs  float64
	phi []float64
}

// newWheelPath integrates the wheel's speed over n samples. The speed is
// rev_per_min·(1 + wobble·sin(2πt/period + φ) + jitter_r), where jitter_r is
// drawn (Gaussian, RMS rev_jitter_pct) for every whole revolution r of the
// wheel angle, and the factor is kept at 0.2 or more.
func newWheelPath(r Rig, n int, startDeg float64, rng *rand.Rand) *wheelPath {
	fs := r.SampleRateHz
	w := &wheelPath{fs: fs, phi: make([]float64, n+1)}
	base := r.Wheel.RevPerMin * 6 // degrees per second
	wob := r.Wheel.WobblePct / 100
	wobPhase := 2 * math.Pi * rng.Float64()
	wobOmega := 2 * math.Pi / r.Wheel.WobblePeriodS
	jit := r.Wheel.RevJitterPct / 100
	// The wobble's sine advances by a fixed rotation each sample (a
	// recurrence, far cheaper than math.Sin per sample and exact to ~1e-10
	// over 10⁸ samples); the revolution's jitter is redrawn each time the
	// angle passes a whole turn.
	sinW, cosW := math.Sincos(wobPhase)
	stepSin, stepCos := math.Sincos(wobOmega / fs)
	phi := startDeg
	nextTurn := 360 * (math.Floor(startDeg/360) + 1)
	revFactor := jit * rng.NormFloat64()
	w.phi[0] = phi
	for i := 0; i < n; i++ {
		if phi >= nextTurn {
			nextTurn += 360
			revFactor = jit * rng.NormFloat64()
		}
		f := 1 + wob*sinW + revFactor
		if f < 0.2 {
			f = 0.2
		}
		phi += base * f / fs
		w.phi[i+1] = phi
		sinW, cosW = sinW*stepCos+cosW*stepSin, cosW*stepCos-sinW*stepSin
	}
	return w
}

// timeOf returns the time at which the wheel reaches angle, and false when
// it does not within the capture.
func (w *wheelPath) timeOf(angle float64) (float64, bool) {
	n := len(w.phi) - 1
	if angle < w.phi[0] || angle > w.phi[n] {
		return 0, false
	}
	i := sort.SearchFloat64s(w.phi, angle) // first phi[i] >= angle
	if i == 0 {
		return 0, true
	}
	a := (angle - w.phi[i-1]) / (w.phi[i] - w.phi[i-1])
	return (float64(i-1) + a) / w.fs, true
}

// firstSampleAt is the first sample index whose angle is at least angle
// (len(phi)-1 when none).
func (w *wheelPath) firstSampleAt(angle float64) int {
	i := sort.SearchFloat64s(w.phi[:len(w.phi)-1], angle)
	return i
}

// revPerMin is the true speed at time t.
func (w *wheelPath) revPerMin(t float64) float64 {
	n := len(w.phi) - 1
	i := min(max(int(t*w.fs), 0), n-1)
	return (w.phi[i+1] - w.phi[i]) * w.fs / 6
}

// field is one opening of the field by one wheel aperture.
type field struct {
	rev, aperture int     // revolution (of the wheel angle) and wheel aperture
	startDeg      float64 // wheel angle at which the field opens
	i0, i1        int     // samples [i0, i1) lie inside the field
}

// fields lists every field that overlaps the capture, in time order.
func (w *wheelPath) fields(r Rig) []field {
	n := len(w.phi) - 1
	spacing := r.ApertureSpacingDeg()
	first := int(math.Floor(w.phi[0]/360)) - 1
	last := int(math.Floor(w.phi[n]/360)) + 1
	var out []field
	for rev := first; rev <= last; rev++ {
		for j := 0; j < r.Wheel.ApertureCount; j++ {
			a := 360*float64(rev) + r.fieldOriginDeg() + float64(j)*spacing + apertureError(r, j)
			span := r.fieldSpanDeg()
			if a+span < w.phi[0] || a > w.phi[n] {
				continue
			}
			f := field{rev: rev, aperture: j, startDeg: a, i0: w.firstSampleAt(a), i1: w.firstSampleAt(a + span)}
			if f.i1 > f.i0 {
				out = append(out, f)
			}
		}
	}
	sort.Slice(out, func(a, b int) bool { return out[a].startDeg < out[b].startDeg })
	return out
}

func apertureError(r Rig, j int) float64 {
	if j < len(r.Wheel.ApertureErrorsDeg) {
		return r.Wheel.ApertureErrorsDeg[j]
	}
	return 0
}

// mark is one index mark passing the sensor.
type mark struct {
	rev, aperture int     // the field it announces (aperture 0 for once per revolution)
	angleDeg      float64 // wheel angle of the mark
	riseS, fallS  float64 // 50 % times of the edges, with jitter; fallS may be +Inf
}

// marks lists the index marks that pass the sensor after the first sample.
func (w *wheelPath) marks(r Rig, rng *rand.Rand) []mark {
	n := len(w.phi) - 1
	perRev := r.Index.PulsesPerRev
	spacing := 360 / float64(perRev)
	first := int(math.Floor(w.phi[0]/360)) - 1
	last := int(math.Floor(w.phi[n]/360)) + 1
	var out []mark
	for rev := first; rev <= last; rev++ {
		for j := 0; j < perRev; j++ {
			a := 360*float64(rev) + float64(j)*spacing - r.Index.LeadDeg
			if a <= w.phi[0] {
				continue
			}
			t, ok := w.timeOf(a)
			if !ok {
				continue
			}
			m := mark{rev: rev, aperture: j, angleDeg: a, riseS: t + r.Index.JitterS*rng.NormFloat64(), fallS: math.Inf(1)}
			if tf, ok := w.timeOf(a + r.Index.PulseWidthDeg); ok {
				m.fallS = tf + r.Index.JitterS*rng.NormFloat64()
			}
			out = append(out, m)
		}
	}
	sort.Slice(out, func(a, b int) bool { return out[a].angleDeg < out[b].angleDeg })
	return out
}

// clearStartAngle moves a start angle forward out of any index pulse (with a
// margin for the rise time and jitter), so the capture begins with the index
// low and its first rising edge is whole.
func clearStartAngle(r Rig, startDeg float64) float64 {
	spacing := 360 / float64(r.Index.PulsesPerRev)
	markPhase := math.Mod(-r.Index.LeadDeg, spacing)
	degPerS := r.Wheel.RevPerMin * 6 * (1 + (r.Wheel.WobblePct+4*r.Wheel.RevJitterPct)/100)
	margin := 0.5 + degPerS*(r.Index.RiseTimeS+6*r.Index.JitterS)
	since := math.Mod(startDeg-markPhase, spacing)
	if since < 0 {
		since += spacing
	}
	if since < r.Index.PulseWidthDeg+margin || since > spacing-margin {
		return startDeg - since + r.Index.PulseWidthDeg + margin
	}
	return startDeg
}
