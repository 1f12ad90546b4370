package sampledata

import (
	"math"
	"math/rand/v2"
)

// motionPath is the head's true cross-scan position over time.
type motionPath struct {
	kind string
	// hand and motor: y sampled every dtS from t = 0, linearly interpolated.
	dtS float64
	y   []float64
	// stepper: the start time of every step; the head moves one step of
	// mmPerStep with a raised-cosine profile while the step pulse is high.
	startMM, mmPerStep, stepPulseS float64
	stepS                          []float64
	// strokeStartS[k] is when planned stroke k begins to move.
	strokeStartS []float64
	// reversalsS are the times the head starts moving the other way.
	reversalsS []float64
}

// planStep is the plan resolution of hand and motor motion.
const planStep = 1e-3

// newMotionPath plans the motion of the rig over durationS.
func newMotionPath(m Motion, durationS float64, rng *rand.Rand) *motionPath {
	p := &motionPath{kind: m.Kind, startMM: m.StartMM}
	t := m.StartRestS
	for k := 0; k < m.StrokeCount; k++ {
		p.strokeStartS = append(p.strokeStartS, t)
		t += m.StrokeS + m.TurnRestS
	}
	if m.Kind == MotionStepper {
		steps := int(math.Round(m.TravelMM / m.MMPerStep))
		period := m.StrokeS / float64(steps)
		p.mmPerStep, p.stepPulseS = m.MMPerStep, m.StepPulseS
		for k := 0; k < steps; k++ {
			ts := m.StartRestS + float64(k)*period
			if ts >= durationS {
				break
			}
			p.stepS = append(p.stepS, ts)
		}
		return p
	}
	n := int(math.Ceil(durationS/planStep)) + 2
	p.dtS = planStep
	p.y = make([]float64, n)
	for i := range p.y {
		p.y[i] = m.StartMM
	}
	pos := m.StartMM
	for k, t0 := range p.strokeStartS {
		dir := 1.0
		if k%2 == 1 {
			dir = -1
		}
		steps := strokeSteps(m, rng)
		i0 := int(math.Round(t0 / planStep))
		cum := 0.0
		for j, d := range steps {
			cum += d
			if i := i0 + j + 1; i < n {
				p.y[i] = pos + dir*cum
			}
		}
		speed := steps
		pos += dir * m.TravelMM
		for i := i0 + len(speed) + 1; i < n; i++ {
			p.y[i] = pos
		}
	}
	p.findReversals()
	return p
}

// backStepS is how long a hand's back-step takes (the head stops, moves
// back and stops again).
const backStepS = 0.6

// strokeSteps returns the head's movement in mm in each planStep of one
// stroke; they add up to TravelMM. A motor moves at constant speed. A hand
// speeds up and slows down over about half a second at the ends, wanders
// around its mean speed by a sum of slow random sinusoids (0.2 to 1.5 Hz)
// with RMS SpeedVariationPct, stops for each pause with a smooth dip, and
// for each back-step stops, moves BackStepMM backwards with a raised-cosine
// speed over backStepS, and goes on. Pauses and back-steps are put in equal
// shares of the middle 80 % of the stroke, at a random place in each.
func strokeSteps(m Motion, rng *rand.Rand) []float64 {
	n := max(int(math.Round(m.StrokeS/planStep)), 1)
	v := make([]float64, n)
	if m.Kind == MotionMotor {
		for i := range v {
			v[i] = m.TravelMM / float64(n)
		}
		return v
	}
	const waves = 6
	var freq, phase [waves]float64
	for k := range freq {
		freq[k] = 0.2 + 1.3*rng.Float64()
		phase[k] = 2 * math.Pi * rng.Float64()
	}
	amp := m.SpeedVariationPct / 100 * math.Sqrt(2.0/waves)
	ramp := math.Min(0.5, m.StrokeS/4)
	type stop struct {
		centre, half float64
		back         bool
	}
	var stops []stop
	events := m.PauseCount + m.BackStepCount
	for k := 0; k < events; k++ {
		share := 0.8 * m.StrokeS / float64(events)
		c := 0.1*m.StrokeS + share*(float64(k)+0.25+0.5*rng.Float64())
		if k < m.PauseCount {
			stops = append(stops, stop{c, m.PauseS / 2, false})
		} else {
			stops = append(stops, stop{c, backStepS / 2, true})
		}
	}
	// Back-steps interleave with pauses rather than all coming last.
	rng.Shuffle(len(stops), func(a, b int) {
		stops[a].half, stops[b].half = stops[b].half, stops[a].half
		stops[a].back, stops[b].back = stops[b].back, stops[a].back
	})
	const taper = 0.15
	back := make([]float64, n)
	backTotal := 0.0
	for i := range v {
		t := (float64(i) + 0.5) * planStep
		env := 1.0
		if t < ramp {
			env = smoothRamp(t / ramp)
		} else if m.StrokeS-t < ramp {
			env = smoothRamp((m.StrokeS - t) / ramp)
		}
		mod := 1.0
		for k := range freq {
			mod += amp * math.Sin(2*math.Pi*freq[k]*t+phase[k])
		}
		mod = math.Max(mod, 0.2)
		for _, st := range stops {
			d := math.Abs(t-st.centre) - st.half
			switch {
			case d <= 0:
				mod = 0
				if st.back {
					// Raised-cosine backward speed over the stop.
					u := (t - st.centre + st.half) / (2 * st.half)
					back[i] = math.Sin(math.Pi*u) * math.Sin(math.Pi*u)
					backTotal += back[i]
				}
			case d < taper:
				mod *= smoothRamp(d / taper)
			}
		}
		v[i] = env * mod
	}
	forward := 0.0
	for _, x := range v {
		forward += x
	}
	backMM := float64(m.BackStepCount) * m.BackStepMM
	for i := range v {
		v[i] *= (m.TravelMM + backMM) / forward
		if backTotal > 0 {
			v[i] -= backMM * back[i] / backTotal
		}
	}
	return v
}

// smoothRamp rises from 0 at u = 0 to 1 at u = 1 with zero slope at both ends.
func smoothRamp(u float64) float64 {
	u = math.Min(math.Max(u, 0), 1)
	s := math.Sin(u * math.Pi / 2)
	return s * s
}

// at is the head's true position at time t.
func (p *motionPath) at(t float64) float64 {
	if p.kind == MotionStepper {
		// Steps before t: binary search on the step times.
		lo, hi := 0, len(p.stepS)
		for lo < hi {
			mid := (lo + hi) / 2
			if p.stepS[mid] <= t {
				lo = mid + 1
			} else {
				hi = mid
			}
		}
		y := p.startMM + float64(lo)*p.mmPerStep
		if lo > 0 {
			if u := (t - p.stepS[lo-1]) / p.stepPulseS; u < 1 {
				y -= p.mmPerStep * (1 - smoothRamp(u))
			}
		}
		return y
	}
	f := t / p.dtS
	if f <= 0 {
		return p.y[0]
	}
	i := int(f)
	if i >= len(p.y)-1 {
		return p.y[len(p.y)-1]
	}
	a := f - float64(i)
	return p.y[i] + a*(p.y[i+1]-p.y[i])
}

// stroke is the number of the pass at time t: how many times the head has
// reversed before t (a rest or pause between two movements the same way is
// no reversal; a back-step is two).
func (p *motionPath) stroke(t float64) int {
	k := 0
	for _, r := range p.reversalsS {
		if r <= t {
			k++
		}
	}
	return k
}

// findReversals lists the times where the head starts moving the other way.
func (p *motionPath) findReversals() {
	if p.kind == MotionStepper {
		return
	}
	lastDir := 0.0
	for i := 1; i < len(p.y); i++ {
		d := p.y[i] - p.y[i-1]
		if math.Abs(d) < 1e-12 {
			continue
		}
		dir := math.Copysign(1, d)
		if lastDir != 0 && dir != lastDir {
			p.reversalsS = append(p.reversalsS, float64(i-1)*p.dtS)
		}
		lastDir = dir
	}
}

// yRange is the smallest and largest position over the capture.
func (p *motionPath) yRange(m Motion) (lo, hi float64) {
	end := m.StartMM + m.TravelMM
	return math.Min(m.StartMM, end), math.Max(m.StartMM, end)
}
