package recon

import (
	"math"
	"math/rand/v2"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// wheelRig describes a synthetic collimator-wheel capture made inside the
// tests, independent of the simulator package: the wheel angle is
// integrated exactly, the beam angle inside the field is
// θ = α − delay − offset_k − field/2 and x = D·tan θ.
type wheelRig struct {
	rateHz       float64
	seconds      float64
	rpm          float64
	wobblePct    float64 // sinusoidal speed change, once per revolution
	apertures    int
	fieldDeg     float64
	delayDeg     float64
	offsetsDeg   []float64
	distanceMM   float64
	pulseDeg     float64 // index pulse width in wheel degrees
	startDeg     float64 // wheel angle at t = 0
	voltsPerMM   float64
	positionV0   float64 // volts at y = 0
	noise        float64 // detector noise, volts RMS
	baselineV    float64
	onePerRev    bool
	y            func(t float64) float64    // head position, mm
	scene        func(x, y float64) float64 // detector volts above baseline
	dropPulses   []int                      // index pulse numbers to remove
	extraPulseAt []float64                  // times of spurious short pulses
}

func (w wheelRig) recording() *capture.Recording {
	n := int(w.rateHz * w.seconds)
	det := make([]float32, n)
	idx := make([]float32, n)
	pos := make([]float32, n)
	rng := rand.New(rand.NewPCG(1, 2))
	spacing := 360 / float64(w.apertures)
	drop := map[int]bool{}
	for _, d := range w.dropPulses {
		drop[d] = true
	}
	angle := w.startDeg
	dt := 1 / w.rateHz
	omega0 := w.rpm / 60 * 360 // deg/s
	for i := 0; i < n; i++ {
		t := float64(i) * dt
		rev := angle / 360
		omega := omega0 * (1 + w.wobblePct/100*math.Sin(2*math.Pi*rev))
		line := math.Floor(angle / spacing)
		alpha := angle - line*spacing
		k := int(line) % w.apertures
		off := 0.0
		if k < len(w.offsetsDeg) {
			off = w.offsetsDeg[k]
		}
		y := w.y(t)
		v := w.baselineV
		theta := alpha - w.delayDeg - off - w.fieldDeg/2
		if math.Abs(theta) <= w.fieldDeg/2 {
			x := w.distanceMM * math.Tan(theta*math.Pi/180)
			v += w.scene(x, y)
		}
		det[i] = float32(v + w.noise*rng.NormFloat64())
		// Index pulses with edges ramped over 4 samples centred on the
		// true edge time, as a band-limited input would show them.
		period := spacing
		a := alpha
		if w.onePerRev {
			period, a = 360, math.Mod(angle, 360)
		}
		if a > period/2 {
			a -= period
		}
		perSample := omega / w.rateHz // degrees per sample
		rise := math.Min(math.Max(a/perSample/4+0.5, 0), 1)
		fall := math.Min(math.Max((w.pulseDeg-a)/perSample/4+0.5, 0), 1)
		owner := int(math.Floor((angle + period/2) / spacing))
		if !drop[owner-int(math.Floor(w.startDeg/spacing))] {
			idx[i] = float32(5 * math.Min(rise, fall))
		}
		for _, e := range w.extraPulseAt {
			if t >= e && t < e+0.0002 {
				idx[i] = 5
			}
		}
		pos[i] = float32(w.positionV0 + w.voltsPerMM*y)
		angle += omega * dt
	}
	return &capture.Recording{
		SampleRateHz: w.rateHz,
		Channels: []capture.Channel{
			{Name: "detector", Unit: "V", Samples: det},
			{Name: "index", Unit: "V", Samples: idx},
			{Name: "position", Unit: "V", Samples: pos},
		},
		Source: capture.Source{Format: "memory"},
	}
}

// recipe is what a builder of the rig would write, delay left automatic.
func (w wheelRig) recipe() recipe.Recipe {
	r := recipe.Default()
	r.Channels = recipe.Channels{Detector: "0", Index: "1", Position: "2"}
	r.Sweep.Apertures = w.apertures
	r.Timing.PulsesPerRev = w.apertures
	if w.onePerRev {
		r.Timing.PulsesPerRev = 1
	}
	r.Sweep.FieldDeg = w.fieldDeg
	r.Sweep.DistanceMM = w.distanceMM
	r.Sweep.ApertureOffsetsDeg = append([]float64{}, w.offsetsDeg...)
	r.Rows.Calibration = [][2]float64{{w.positionV0, 0}, {w.positionV0 + w.voltsPerMM*100, 100}}
	return r
}

// baseRig is a small, fast wheel capture: 2 s at 48 kHz, a head moving
// at a steady 30 mm/s over a grid of bright dots every 20 mm.
func baseRig() wheelRig {
	return wheelRig{
		rateHz: 48000, seconds: 2, rpm: 300, apertures: 4, fieldDeg: 30,
		delayDeg: 20, distanceMM: 400, pulseDeg: 3, startDeg: 50,
		voltsPerMM: 0.01, positionV0: 0.5, noise: 0.002, baselineV: 0.1,
		y:     func(t float64) float64 { return 10 + 30*t },
		scene: dotScene(20, 3),
	}
}

// dotScene is a grid of discs of the given radius every spacing mm, on a
// dim background so the beam-on stretch is visible everywhere.
func dotScene(spacing, radius float64) func(x, y float64) float64 {
	return func(x, y float64) float64 {
		dx := x - spacing*math.Round(x/spacing)
		dy := y - spacing*math.Round(y/spacing)
		if dx*dx+dy*dy <= radius*radius {
			return 1
		}
		return 0.2
	}
}
