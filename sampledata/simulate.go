package sampledata

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"

	"spotloom/capture"
)

// SimOptions are the choices of one simulation that are not part of the rig.
type SimOptions struct {
	// Seed makes the capture reproducible: the same rig, scene, options and
	// seed give the same samples on any machine and any number of cores.
	Seed uint64
	// DurationS and SampleRateHz override the rig's when above zero.
	DurationS    float64
	SampleRateHz float64
	// TruthPitchMM above zero renders the truth image (the scene's scatter
	// yield, not blurred) at that pitch over the scanned area.
	TruthPitchMM float64
	// Noiseless writes the expected values: expected photon counts instead
	// of Poisson draws, and no electronics, index or sensor noise or timing
	// jitter (the wheel's speed changes and the head's motion stay).
	Noiseless bool
	// Progress, when not nil, is called with the fraction done (0 to 1).
	Progress func(fraction float64)
}

// DemoSeed is the seed of the built-in demo capture.
const DemoSeed = 20261201

// Demo returns the built-in demo capture: the parcel scene scanned by the
// demo rig (DemoRig), 20 s at 96 kHz on three channels, always the same
// samples. Its recipe is DemoRecipe.
func Demo() (*capture.Recording, error) {
	rec, _, err := Simulate(context.Background(), DemoRig(), "parcel", SimOptions{Seed: DemoSeed})
	return rec, err
}

// Simulate scans a built-in scene (see Scene) with the rig and returns the
// capture and its ground truth.
func Simulate(ctx context.Context, rig Rig, scene string, opts SimOptions) (*capture.Recording, *Truth, error) {
	model, err := Scene(scene)
	if err != nil {
		return nil, nil, err
	}
	return SimulateScene(ctx, rig, model, opts)
}

// Random streams: each purpose and each chunk of samples draws from its own
// PCG stream, so the result does not depend on how chunks are scheduled.
const (
	streamPlan     = 1
	streamCounts   = 1 << 32
	streamNoise    = 2 << 32
	chunkSamples   = 1 << 16
	maxRasterPixel = 30_000_000
)

// SimulateScene scans a scene model with the rig.
//
// Per sample i (at t = i/fs) while wheel aperture j holds the field open,
// the beam angle is θ = φ(t) − (field start angle) − field_deg/2 and the
// beam meets the target plane at x = D·tan θ, y = the head's position. The
// expected photon count is
//
//	λ = (full_scatter_rate_cps·Y(x,y)·cos²θ + dark_rate_cps)/fs
//
// where cos²θ is the inverse-square fall-off of the slant range D/cos θ and
// Y is the scene's yield (with each shape's own inverse-square depth factor)
// convolved with the Gaussian spot and with the sample's dwell along the
// sweep. The spot has σ = spot_fwhm_mm/(2·sqrt(2·ln 2)) on the field axis
// and grows with the slant range (see spotSampler): σ/cos θ across the
// sweep, σ/cos²θ along it. The convolution is done on rasters of pitch
// p ≈ σ/3: the scene is area-averaged into them, blurred by a separable
// Gaussian of variance σx² + dwell²/12 − p²/12 along x and σy² − p²/12
// along y (the p²/12 makes up for the pixel box of the area averaging),
// then read back bilinearly; the resulting spot's FWHM is within 2.5 % of
// the nominal one for any sub-pixel position, and within 1 % on average.
// With the beam off λ = dark_rate_cps/fs.
//
// Counts are Poisson draws; then come the afterglow (exponential impulse
// response, time constant afterglow_s), the amplifier's single-pole
// low-pass and the AC coupling's single-pole high-pass, all discretised
// impulse-invariantly so that a step entering at sample 0 reads
// 1 − exp(−(i+1)/(fs·τ)) at sample i; then volts = gain·(rate in million
// photons/s) + offset + noise, and the ADC quantises and clips every
// channel. The chain's lag (about afterglow_s + 1/(2π·low_pass_corner_hz),
// 18 µs or 0.045° of wheel for the demo rig) is physical and is not in the
// truth's delay, which is geometric.
//
// The scene's centre is placed on the field axis at the middle of the
// head's travel (Truth.SceneCentreMM).
func SimulateScene(ctx context.Context, rig Rig, scene SceneModel, opts SimOptions) (*capture.Recording, *Truth, error) {
	if opts.DurationS > 0 {
		rig.DurationS = opts.DurationS
	}
	if opts.SampleRateHz > 0 {
		rig.SampleRateHz = opts.SampleRateHz
	}
	if err := rig.Validate(); err != nil {
		return nil, nil, fmt.Errorf("rig: %w", err)
	}
	if opts.Noiseless {
		rig.Index.JitterS = 0
	}
	progress := func(f float64) {
		if opts.Progress != nil {
			opts.Progress(f)
		}
	}
	fs := rig.SampleRateHz
	n := int(math.Round(rig.DurationS * fs))
	if n < 2 {
		return nil, nil, fmt.Errorf("rig: duration_s %g at %g Hz gives fewer than 2 samples", rig.DurationS, fs)
	}
	plan := rand.New(rand.NewPCG(opts.Seed, streamPlan))

	start := 360 * plan.Float64()
	if rig.Wheel.StartAngleDeg != nil {
		start = *rig.Wheel.StartAngleDeg
	}
	start = clearStartAngle(rig, start)
	wheel := newWheelPath(rig, n, start, plan)
	motion := newMotionPath(rig.Motion, rig.DurationS, plan)
	fields := wheel.fields(rig)
	marks := wheel.marks(rig, plan)
	progress(0.05)
	if err := ctx.Err(); err != nil {
		return nil, nil, err
	}

	yLo, yHi := motion.yRange(rig.Motion)
	centreX, centreY := 0.0, (yLo+yHi)/2
	sampler, err := newSpotSampler(rig, scene, centreX, centreY, yLo, yHi)
	if err != nil {
		return nil, nil, err
	}
	progress(0.15)
	if err := ctx.Err(); err != nil {
		return nil, nil, err
	}

	det := make([]float32, n)
	if err := expectedCounts(ctx, rig, wheel, motion, fields, sampler, det, opts.Seed, opts.Noiseless); err != nil {
		return nil, nil, err
	}
	progress(0.6)
	detectorChain(rig, det)
	progress(0.7)

	names := rig.channelNames()
	chans := make([]capture.Channel, len(names))
	for i, name := range names {
		chans[i] = capture.Channel{Name: name, Unit: capture.UnitVolt}
	}
	chans[0].Samples = det
	chans[1].Samples = indexSignal(rig, marks, n)
	for i, name := range names {
		switch name {
		case "position":
			chans[i].Samples = make([]float32, n)
		case "steps":
			chans[i].Samples = stepSignal(rig, motion, n)
		}
	}
	if err := finishChannels(ctx, rig, motion, names, chans, opts); err != nil {
		return nil, nil, err
	}
	progress(0.95)

	rec := &capture.Recording{
		SampleRateHz: fs,
		Channels:     chans,
		Source:       capture.Source{Format: "memory", SampleType: "float32", BitDepth: 32},
	}
	truth := newTruth(rig, scene, opts, wheel, motion, fields, marks, n, centreX, centreY)
	if opts.TruthPitchMM > 0 {
		hw := rig.HalfWidthMM()
		img, err := NewRaster(-hw, hw, yLo, yHi, opts.TruthPitchMM)
		if err != nil {
			return nil, nil, fmt.Errorf("truth image: %w", err)
		}
		scene.Render(img, centreX, centreY, rig.DistanceMM)
		truth.setImage(img)
	}
	progress(1)
	return rec, truth, nil
}

// spotSampler reads the scene's yield convolved with the beam spot. The
// spot grows in proportion to the distance from the source: at beam angle θ
// the slant range is D/cos θ, so the spot is σ/cos θ across the sweep and,
// meeting the flat plane obliquely, σ/cos²θ along it (the dwell grows the
// same way, as the beam moves D·ω/cos²θ). Two rasters hold the scene
// blurred for the field axis (centre) and for the field edge (edge); a
// sample at θ mixes them with weight (1/cos²θ − 1)/(1/cos²θedge − 1).
type spotSampler struct {
	centre, edge *Raster
	edgeWeight   float64 // 1/(1/cos²θedge − 1), 0 when the field is too narrow to matter
}

// at is the blurred yield at (x,y) for a beam whose cos θ is cos.
func (s *spotSampler) at(x, y, cos float64) float64 {
	if s.edgeWeight == 0 {
		return s.centre.bilinear(x, y)
	}
	// Both rasters share their grid: find the four pixels once.
	r := s.centre
	i00, i01, i10, i11, ax, ay := r.corners(x, y)
	mix := func(p []float32) float64 {
		top := float64(p[i00]) + ax*float64(p[i01]-p[i00])
		bottom := float64(p[i10]) + ax*float64(p[i11]-p[i10])
		return top + ay*(bottom-top)
	}
	v := mix(r.Pix)
	w := (1/(cos*cos) - 1) * s.edgeWeight
	return v + w*(mix(s.edge.Pix)-v)
}

// newSpotSampler renders and blurs the scene over the area the beam can
// reach (the field at the target plane × the head's travel, plus 4σ).
func newSpotSampler(rig Rig, scene SceneModel, offX, offY, yLo, yHi float64) (*spotSampler, error) {
	sigma := rig.SpotSigmaMM()
	dwell := rig.DistanceMM * rig.beamRateRadS() / rig.SampleRateHz
	sigmaX := math.Sqrt(sigma*sigma + dwell*dwell/12)
	cosEdge := math.Cos(rig.FieldDeg / 2 * math.Pi / 180)
	grow := 1 / (cosEdge * cosEdge)
	pitch := math.Min(math.Max(sigma/3, 0.02), 1)
	hw := rig.HalfWidthMM()
	x0, x1 := -hw-4*sigmaX*grow-2*pitch, hw+4*sigmaX*grow+2*pitch
	y0, y1 := yLo-4*sigma*grow-2*pitch, yHi+4*sigma*grow+2*pitch
	if area := (x1 - x0) * (y1 - y0); area/(pitch*pitch) > maxRasterPixel/2 {
		pitch = math.Sqrt(2 * area / maxRasterPixel)
	}
	centre, err := NewRaster(x0, x1, y0, y1, pitch)
	if err != nil {
		return nil, fmt.Errorf("spot raster: %w", err)
	}
	scene.Render(centre, offX, offY, rig.DistanceMM)
	s := &spotSampler{centre: centre}
	// The pixel box of the area averaging adds pitch²/12 of variance.
	blurFor := func(r *Raster, sx, sy float64) {
		r.blur(math.Sqrt(math.Max(sx*sx-pitch*pitch/12, 0)), math.Sqrt(math.Max(sy*sy-pitch*pitch/12, 0)))
	}
	if grow-1 > 1e-4 {
		s.edge = &Raster{Width: centre.Width, Height: centre.Height, PitchMM: pitch,
			OriginXMM: centre.OriginXMM, OriginYMM: centre.OriginYMM, Pix: append([]float32(nil), centre.Pix...)}
		blurFor(s.edge, sigmaX*grow, sigma*math.Sqrt(grow))
		s.edgeWeight = 1 / (grow - 1)
	}
	blurFor(centre, sigmaX, sigma)
	return s, nil
}

// parallelChunks runs f on every chunk of [0,n) on all cores.
func parallelChunks(ctx context.Context, n int, f func(chunk, i0, i1 int)) error {
	chunks := (n + chunkSamples - 1) / chunkSamples
	next := make(chan int, chunks)
	for c := 0; c < chunks; c++ {
		next <- c
	}
	close(next)
	var wg sync.WaitGroup
	for w := 0; w < min(runtime.GOMAXPROCS(0), chunks); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for c := range next {
				if ctx.Err() != nil {
					return
				}
				f(c, c*chunkSamples, min((c+1)*chunkSamples, n))
			}
		}()
	}
	wg.Wait()
	return ctx.Err()
}

// expectedCounts fills det with photon counts per sample (Poisson draws, or
// their means when noiseless).
func expectedCounts(ctx context.Context, rig Rig, wheel *wheelPath, motion *motionPath, fields []field, s *spotSampler, det []float32, seed uint64, noiseless bool) error {
	fs := rig.SampleRateHz
	dark := rig.Detector.DarkRateCPS / fs
	flux := rig.Detector.FullScatterRateCPS / fs
	d := rig.DistanceMM
	return parallelChunks(ctx, len(det), func(chunk, i0, i1 int) {
		draw := poissonSampler{rng: rand.New(rand.NewPCG(seed, streamCounts+uint64(chunk)))}
		// First field that ends after i0.
		k := 0
		lo, hi := 0, len(fields)
		for lo < hi {
			mid := (lo + hi) / 2
			if fields[mid].i1 <= i0 {
				lo = mid + 1
			} else {
				hi = mid
			}
		}
		k = lo
		for i := i0; i < i1; i++ {
			for k < len(fields) && fields[k].i1 <= i {
				k++
			}
			lambda := dark
			if k < len(fields) && i >= fields[k].i0 {
				sin, cos := math.Sincos(rig.beamAngleRad(wheel.phi[i], fields[k].startDeg))
				x := d * sin / cos
				y := motion.at(float64(i) / fs)
				lambda += flux * s.at(x, y, cos) * cos * cos
			}
			if noiseless {
				det[i] = float32(lambda)
			} else {
				det[i] = float32(draw.next(lambda))
			}
		}
	})
}

// detectorChain turns counts per sample into the detector's signal in
// million photons per second after afterglow, low-pass and AC coupling
// (still without gain, offset and noise). Each stage starts settled on the
// dark rate.
func detectorChain(rig Rig, det []float32) {
	fs := rig.SampleRateHz
	dc := rig.Detector
	scale := fs / 1e6
	dark := dc.DarkRateCPS / 1e6
	glow := newOnePole(dc.AfterglowS, fs, dark)
	lp := newOnePole(lowPassTau(dc.LowPassCornerHz), fs, dark)
	ac := newOnePole(lowPassTau(dc.ACCouplingCornerHz), fs, dark)
	for i, c := range det {
		v := glow.step(float64(c) * scale)
		v = lp.step(v)
		if dc.ACCouplingCornerHz > 0 {
			v -= ac.step(v)
		}
		det[i] = float32(v)
	}
}

func lowPassTau(cornerHz float64) float64 {
	if cornerHz <= 0 {
		return 0
	}
	return 1 / (2 * math.Pi * cornerHz)
}

// onePole is a single-pole low-pass y[i] = a·y[i−1] + (1−a)·x[i] with
// a = exp(−1/(fs·τ)): the impulse-invariant form of h(t) = exp(−t/τ)/τ
// for input held over each sample. τ = 0 passes the input through.
type onePole struct {
	a, y float64
}

func newOnePole(tauS, fs, settled float64) onePole {
	if tauS <= 0 {
		return onePole{a: 0, y: settled}
	}
	return onePole{a: math.Exp(-1 / (fs * tauS)), y: settled}
}

func (p *onePole) step(x float64) float64 {
	p.y = p.a*p.y + (1-p.a)*x
	return p.y
}

// trapezoid is the level of a pulse whose edges are linear ramps of length
// rise centred on riseS and fallS, at time t.
func trapezoid(t, riseS, fallS, rise float64) float64 {
	r := math.Max(rise, 1e-12)
	up := math.Min(math.Max((t-riseS)/r+0.5, 0), 1)
	down := math.Min(math.Max((t-fallS)/r+0.5, 0), 1)
	return up - down
}

// indexSignal draws the index pulses (noise is added later).
func indexSignal(rig Rig, marks []mark, n int) []float32 {
	fs := rig.SampleRateHz
	out := make([]float32, n)
	rise := rig.Index.RiseTimeS
	for _, m := range marks {
		i0 := max(int(math.Ceil((m.riseS-rise/2)*fs)), 0)
		end := m.fallS + rise/2
		i1 := n - 1
		if end*fs < float64(n-1) {
			i1 = int(math.Floor(end * fs))
		}
		for i := i0; i <= i1; i++ {
			out[i] = float32(rig.Index.LevelV * trapezoid(float64(i)/fs, m.riseS, m.fallS, rise))
		}
	}
	return out
}

// stepSignal draws one pulse per stepper step.
func stepSignal(rig Rig, motion *motionPath, n int) []float32 {
	fs := rig.SampleRateHz
	out := make([]float32, n)
	rise := rig.Index.RiseTimeS
	for _, ts := range motion.stepS {
		tf := ts + rig.Motion.StepPulseS
		i0 := max(int(math.Ceil((ts-rise/2)*fs)), 0)
		i1 := min(int(math.Floor((tf+rise/2)*fs)), n-1)
		for i := i0; i <= i1; i++ {
			out[i] = float32(rig.Motion.StepLevelV * trapezoid(float64(i)/fs, ts, tf, rise))
		}
	}
	return out
}

// sensorLevel is the position sensor's level (volts) at position y.
func sensorLevel(p PositionSensor, startMM, y float64) float64 {
	u := (y - startMM) / p.RangeMM
	bow := p.NonlinearityPct / 100 * math.Abs(p.VoltsPerMM*p.RangeMM) * 4 * u * (1 - u)
	return p.OffsetV + p.VoltsPerMM*y + bow
}

// finishChannels adds gain, offset and noise, draws the position channel
// (or adds the position tone to the index channel it shares), and
// quantises and clips every channel.
func finishChannels(ctx context.Context, rig Rig, motion *motionPath, names []string, chans []capture.Channel, opts SimOptions) error {
	fs := rig.SampleRateHz
	n := len(chans[0].Samples)
	noise := func(rms float64) float64 {
		if opts.Noiseless {
			return 0
		}
		return rms
	}
	detNoise := noise(rig.Detector.NoiseV)
	idxNoise := noise(rig.Index.NoiseV)
	posNoise := noise(rig.Position.NoiseV)
	gain, offset := rig.Detector.GainVPerMCPS, rig.Detector.OffsetV
	tonePhase := 2 * math.Pi * rand.New(rand.NewPCG(opts.Seed, streamPlan+1)).Float64()
	omega := 2 * math.Pi * rig.Position.CarrierHz
	quant := rig.ADC.quantiser()
	// position is the position sensor's signal at sample i, noise included.
	position := func(i int, rng *rand.Rand) float64 {
		t := float64(i) / fs
		v := sensorLevel(rig.Position, rig.Motion.StartMM, motion.at(t))
		if rig.Position.Kind == SensorTone {
			v *= math.Sin(omega*t + tonePhase)
		}
		if posNoise > 0 {
			v += posNoise * rng.NormFloat64()
		}
		return v
	}
	return parallelChunks(ctx, n, func(chunk, i0, i1 int) {
		rng := rand.New(rand.NewPCG(opts.Seed, streamNoise+uint64(chunk)))
		for ci, name := range names {
			s := chans[ci].Samples
			switch name {
			case "detector":
				for i := i0; i < i1; i++ {
					v := gain*float64(s[i]) + offset
					if detNoise > 0 {
						v += detNoise * rng.NormFloat64()
					}
					s[i] = quant.quantise(v)
				}
			case "index", "steps":
				shared := name == "index" && rig.Position.SharesIndexInput
				for i := i0; i < i1; i++ {
					v := float64(s[i])
					if idxNoise > 0 {
						v += idxNoise * rng.NormFloat64()
					}
					if shared {
						v += position(i, rng)
					}
					s[i] = quant.quantise(v)
				}
			case "position":
				for i := i0; i < i1; i++ {
					s[i] = quant.quantise(position(i, rng))
				}
			}
		}
	})
}

// quantiser rounds to the ADC's step (2·full_scale_v/2^bits) and clips to
// the ADC's range [−full_scale_v, full_scale_v − step]; with bits = 0 it
// only clips to ±full_scale_v.
type quantiser struct {
	step, invStep, lo, hi float64
}

func (a ADC) quantiser() quantiser {
	q := quantiser{lo: -a.FullScaleV, hi: a.FullScaleV}
	if a.Bits > 0 {
		q.step = 2 * a.FullScaleV / math.Exp2(float64(a.Bits))
		q.invStep = 1 / q.step
		q.hi -= q.step
	}
	return q
}

func (q quantiser) quantise(v float64) float32 {
	if q.step > 0 {
		v = math.Round(v*q.invStep) * q.step
	}
	if v < q.lo {
		v = q.lo
	} else if v > q.hi {
		v = q.hi
	}
	return float32(v)
}
