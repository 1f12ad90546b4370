package recon

import (
	"context"
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/mat"

	"spotloom/recon/recipe"
)

// SavitzkyGolay returns the weights of a Savitzky–Golay filter (Savitzky &
// Golay 1964, "Smoothing and differentiation of data by simplified least
// squares procedures", Anal. Chem. 36(8)): the least-squares polynomial of
// the given order through the 2·half+1 points around a sample, evaluated at
// offset at (0 for the centre; ±half at the ends of a series, where no
// centred window fits). Weight i applies to the sample at offset i−half.
func SavitzkyGolay(half, order int, at float64) ([]float64, error) {
	n := 2*half + 1
	if half < 0 || order < 0 || order >= n {
		return nil, fmt.Errorf("Savitzky-Golay: order %d needs more than %d points", order, n)
	}
	a := mat.NewDense(n, order+1, nil)
	for i := 0; i < n; i++ {
		p := 1.0
		for j := 0; j <= order; j++ {
			a.Set(i, j, p)
			p *= float64(i - half)
		}
	}
	// weights = eᵀ (AᵀA)⁻¹ Aᵀ with e = [1, at, at², …].
	var ata mat.Dense
	ata.Mul(a.T(), a)
	e := mat.NewVecDense(order+1, nil)
	p := 1.0
	for j := 0; j <= order; j++ {
		e.SetVec(j, p)
		p *= at
	}
	var c mat.VecDense
	if err := c.SolveVec(&ata, e); err != nil {
		return nil, fmt.Errorf("Savitzky-Golay: %w", err)
	}
	var w mat.VecDense
	w.MulVec(a, &c)
	out := make([]float64, n)
	for i := range out {
		out[i] = w.AtVec(i)
	}
	return out, nil
}

// smoothSG applies a quadratic Savitzky–Golay filter of 2·half+1 points,
// with the end points taken from the polynomial of the first and last
// windows, so a motion edge keeps its shape better than under a moving
// average. The points are shared between the workers.
func smoothSG(y []float64, half int) []float64 {
	n := len(y)
	if half < 1 || n < 2*half+1 {
		return slices.Clone(y)
	}
	out := make([]float64, n)
	centre, _ := SavitzkyGolay(half, 2, 0)
	forSpans(n-2*half, minSplitSamples/len(centre), func(a, b int) {
		for i := half + a; i < half+b; i++ {
			out[i] = sgDot(centre, y[i-half:])
		}
	})
	for i := 0; i < half; i++ {
		w, _ := SavitzkyGolay(half, 2, float64(i-half))
		out[i], out[n-1-i] = sgDot(w, y), sgDotBack(w, y)
	}
	return out
}

// sgDot is Σ w[k]·y[k].
func sgDot(w, y []float64) float64 {
	s := 0.0
	for k := range w {
		s += w[k] * y[k]
	}
	return s
}

// sgDotBack is Σ w[k]·y[n−1−k]: the window mirrored at the far end.
func sgDotBack(w, y []float64) float64 {
	s, n := 0.0, len(y)
	for k := range w {
		s += w[k] * y[n-1-k]
	}
	return s
}

// calibrate maps a level to mm through the points, piecewise linear,
// extended beyond the end points along the end segments.
type calibration struct{ level, mm []float64 }

func newCalibration(points [][2]float64) (calibration, error) {
	if len(points) < 2 {
		return calibration{}, fmt.Errorf("rows.calibration has %d points: two or more [level, mm] points are needed", len(points))
	}
	p := slices.Clone(points)
	slices.SortFunc(p, func(a, b [2]float64) int {
		switch {
		case a[0] < b[0]:
			return -1
		case a[0] > b[0]:
			return 1
		}
		return 0
	})
	var c calibration
	for i, q := range p {
		if i > 0 && q[0] == p[i-1][0] {
			return calibration{}, fmt.Errorf("rows.calibration has two points at level %g", q[0])
		}
		c.level = append(c.level, q[0])
		c.mm = append(c.mm, q[1])
	}
	return c, nil
}

func (c calibration) at(v float64) float64 {
	n := len(c.level)
	i, _ := slices.BinarySearch(c.level, v)
	i = min(max(i, 1), n-1)
	x0, x1 := c.level[i-1], c.level[i]
	return c.mm[i-1] + (v-x0)*(c.mm[i]-c.mm[i-1])/(x1-x0)
}

// stroke is one pass of the head between reversals, in samples.
type stroke struct{ first, last int }

// rowsResult is the cross-scan position at evenly spaced block centres:
// block j covers samples [j·blockLen, (j+1)·blockLen) and its value is the
// position at sample j·blockLen + blockLen/2.
type rowsResult struct {
	key      string // of the resolved parameters it was found with
	blockLen int
	y        []float64 // mm
	strokes  []stroke
	// autoHyst is the reversal hysteresis the strokes are found with when
	// rows.strokes_hysteresis_mm is null, mm (0: the source finds no
	// reversals, its strokes are the whole capture).
	autoHyst float64
	carrier  float64 // Hz, for source tone
	levelMin float64 // range of the smoothed level (volts or full scale)
	levelMax float64
	// stepsThreshold and stepsHysteresis are the step pulses' trigger, for
	// source steps.
	stepsThreshold, stepsHysteresis float64
	warnings                        []string
}

// at interpolates y at a (fractional) sample position.
func (r *rowsResult) at(s float64) float64 {
	p := (s - float64(r.blockLen)/2) / float64(r.blockLen)
	if p <= 0 {
		return r.y[0]
	}
	i := int(p)
	if i >= len(r.y)-1 {
		return r.y[len(r.y)-1]
	}
	f := p - float64(i)
	return r.y[i] + f*(r.y[i+1]-r.y[i])
}

// withHysteresis is r with its strokes found with the reversal
// hysteresis hyst, mm (nil: the automatic one), sharing all else with r.
func (r *rowsResult) withHysteresis(hyst *float64) *rowsResult {
	if hyst == nil || r.autoHyst == 0 || *hyst == r.autoHyst || len(r.strokes) == 0 {
		return r
	}
	c := *r
	c.strokes = findStrokes(r.y, r.blockLen, r.strokes[len(r.strokes)-1].last, *hyst)
	return &c
}

// strokeOf returns the stroke that holds sample s.
func (r *rowsResult) strokeOf(s int) int {
	for i, st := range r.strokes {
		if s < st.last {
			return i
		}
	}
	return len(r.strokes) - 1
}

// rowsParams are the keys the rows stage depends on (exported fields, so
// the cache key, their JSON, holds them all).
type rowsParams struct {
	Source    recipe.RowSource
	Channel   int // position or steps channel, -1 for even
	Calib     [][2]float64
	CarrierHz *float64
	MMPerStep *float64
	SpeedMMS  *float64
	// StepsThreshold and StepsHysteresis time the step pulses (source
	// steps); nil: from the steps channel's two levels.
	StepsThreshold  *float64 `json:",omitempty"`
	StepsHysteresis *float64 `json:",omitempty"`
	// SharesIndex is set when the tone is read from the index channel,
	// around its pulses.
	SharesIndex bool `json:",omitempty"`
	// PulseRest and PulseAway are the levels the pulse spans were found
	// with (rows.pulse_rest, rows.pulse_away, resolved).
	PulseRest *float64 `json:",omitempty"`
	PulseAway *float64 `json:",omitempty"`
}

// smoothMS is the span of the position smoothing window.
const smoothMS = 10.0

// findRows runs the rows stage for every sample of the capture, with
// the source p names.
func findRows(ctx context.Context, rec rowsInput, p rowsParams) (*rowsResult, error) {
	src, err := sourceOf(p.Source)
	if err != nil {
		return nil, err
	}
	res := &rowsResult{blockLen: levelBlockLen(rec.rateHz)}
	return src.find(ctx, rec, p, res)
}

// levelRows turns the raw level of every block (a DC position or a tone's
// amplitude) into y through the calibration, smoothed, and finds the
// strokes.
func levelRows(ctx context.Context, rec rowsInput, p rowsParams, res *rowsResult, levels []float64) (*rowsResult, error) {
	n := rec.n
	rate := rec.rateHz
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	cal, err := newCalibration(p.Calib)
	if err != nil {
		return nil, err
	}
	blockS := float64(res.blockLen) / rate
	half := int(math.Round(smoothMS / 2e3 / blockS))
	smooth := smoothSG(levels, half)
	res.levelMin, res.levelMax = math.Inf(1), math.Inf(-1)
	res.y = make([]float64, len(smooth))
	spans := splitSpans(len(smooth), workers())
	los, his := make([]float64, len(spans)), make([]float64, len(spans))
	forEachSpan(spans, len(smooth) >= 1<<14, func(k, a, b int) {
		lo, hi := math.Inf(1), math.Inf(-1)
		for j, v := range smooth[a:b] {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
			res.y[a+j] = cal.at(v)
		}
		los[k], his[k] = lo, hi
	})
	for k := range spans {
		res.levelMin = math.Min(res.levelMin, los[k])
		res.levelMax = math.Max(res.levelMax, his[k])
	}
	// A calibration that covers less than half of the levels seen was
	// most likely written for another sensor or left at its default.
	lo, hi := cal.level[0], cal.level[len(cal.level)-1]
	if overlap := math.Min(hi, res.levelMax) - math.Max(lo, res.levelMin); overlap < 0.5*(res.levelMax-res.levelMin) {
		res.warnings = append(res.warnings, fmt.Sprintf("the %s channel %s runs from %s to %s, mostly outside rows.calibration (%s to %s): measure two head positions and their levels and write them in rows.calibration",
			p.Source, rec.name, level(res.levelMin, rec.unit), level(res.levelMax, rec.unit), level(lo, rec.unit), level(hi, rec.unit)))
	}
	yMin, yMax := minMax(res.y)
	if yMax-yMin < 0.5 {
		return nil, fmt.Errorf("%s channel %s stays between %s and %s (%.2g mm through rows.calibration): the head did not move; check channels.position and rows.calibration, or use rows.source even with rows.speed_mm_s",
			p.Source, rec.name, level(res.levelMin, rec.unit), level(res.levelMax, rec.unit), yMax-yMin)
	}
	// Noise of the position after smoothing, for the reversal hysteresis.
	// (From at most about 20000 blocks, evenly spaced: a median needs no more.)
	stride := 1 + len(levels)/20000
	resid := make([]float64, 0, len(levels)/stride+1)
	for j := 0; j < len(levels); j += stride {
		resid = append(resid, math.Abs(cal.at(levels[j])-res.y[j]))
	}
	noise := 1.4826 * median(resid)
	res.autoHyst = math.Max(0.02*(yMax-yMin), 6*noise)
	res.strokes = findStrokes(res.y, res.blockLen, n, res.autoHyst)
	return res, nil
}

// rowsInput is the channel the rows stage reads. pulses, for a channel
// that carries the index pulses too, are the sample spans they cover.
type rowsInput struct {
	channel    []float32
	n          int
	rateHz     float64
	name, unit string
	pulses     [][2]int
}

func minMax(v []float64) (float64, float64) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range v {
		lo = math.Min(lo, x)
		hi = math.Max(hi, x)
	}
	return lo, hi
}

// blockMeans returns the mean of each block of blockLen samples of x (the
// last block may be shorter), the blocks shared between the workers.
func blockMeans(x []float32, blockLen int) []float64 {
	nb := (len(x) + blockLen - 1) / blockLen
	out := make([]float64, nb)
	forSpans(nb, minSplitSamples/blockLen, func(j0, j1 int) {
		for j := j0; j < j1; j++ {
			a, b := j*blockLen, min((j+1)*blockLen, len(x))
			s := 0.0
			for _, v := range x[a:b] {
				s += float64(v)
			}
			out[j] = s / float64(b-a)
		}
	})
	return out
}

// findStrokes splits the capture at direction reversals: a reversal is a
// turn by more than hyst mm from the extreme since the last one.
func findStrokes(y []float64, blockLen, n int, hyst float64) []stroke {
	f := strokeFinder{hyst: hyst}
	f.feed(y)
	return f.strokes(blockLen, n)
}

// strokeFinder finds the reversals of the head in its positions, one
// block at a time: what it has found of the blocks so far no later block
// changes, and the strokes before its horizon are final. A copy goes on
// independently.
type strokeFinder struct {
	hyst         float64
	blocks       int // fed so far
	dir          int // of the head since the last turn; 0 until it moves by hyst
	hi, lo       float64
	hiIdx, loIdx int
	turns        []int // block indices
}

// feed takes the blocks of y after those fed already.
func (f *strokeFinder) feed(y []float64) {
	if f.blocks == 0 && len(y) > 0 {
		f.hi, f.lo = y[0], y[0]
	}
	for j := f.blocks; j < len(y); j++ {
		v := y[j]
		switch f.dir {
		case 0:
			if v > f.hi {
				f.hi, f.hiIdx = v, j
			}
			if v < f.lo {
				f.lo, f.loIdx = v, j
			}
			if v-f.lo > f.hyst {
				f.dir, f.hi, f.hiIdx = 1, v, j
			} else if f.hi-v > f.hyst {
				f.dir, f.lo, f.loIdx = -1, v, j
			}
		case 1:
			if v > f.hi {
				f.hi, f.hiIdx = v, j
			} else if f.hi-v > f.hyst {
				f.turns = append(f.turns, f.hiIdx)
				f.dir, f.lo, f.loIdx = -1, v, j
			}
		case -1:
			if v < f.lo {
				f.lo, f.loIdx = v, j
			} else if v-f.lo > f.hyst {
				f.turns = append(f.turns, f.loIdx)
				f.dir, f.hi, f.hiIdx = 1, v, j
			}
		}
	}
	f.blocks = max(f.blocks, len(y))
}

// clone is an independent copy of f.
func (f *strokeFinder) clone() strokeFinder {
	c := *f
	c.turns = slices.Clone(f.turns)
	return c
}

// horizon is the first sample (of blocks of blockLen) whose stroke later
// blocks may still change: the next turn is at the extreme since the
// last one or later (or, before the head has moved, at the next block).
func (f *strokeFinder) horizon(blockLen int) int {
	next := f.blocks
	switch f.dir {
	case 1:
		next = f.hiIdx
	case -1:
		next = f.loIdx
	}
	return turnSample(next, blockLen)
}

// turnSample is the sample at which a turn at block t (of blocks of
// blockLen) ends one stroke and starts the next: the block's centre.
func turnSample(t, blockLen int) int { return t*blockLen + blockLen/2 }

// strokeAt is the stroke of sample s that the turns so far give: how
// many turns are at or before it (strokes, rowsResult.strokeOf).
func (f *strokeFinder) strokeAt(s, blockLen int) int {
	n := 0
	for _, t := range f.turns {
		if s >= turnSample(t, blockLen) {
			n++
		}
	}
	return n
}

// strokes is the strokes of n samples that the turns so far cut.
func (f *strokeFinder) strokes(blockLen, n int) []stroke {
	var out []stroke
	start := 0
	for _, t := range f.turns {
		s := turnSample(t, blockLen)
		out = append(out, stroke{start, s})
		start = s
	}
	return append(out, stroke{start, n})
}

// toneAmplitude demodulates the peak amplitude of the carrier on the
// position channel: the samples are mixed with the carrier and summed under
// a Hann window two blocks long, one value per block. Each block spans at
// least two carrier periods and 1 ms, so the window covers at least four
// periods and the 2·f and DC leakage of the mix falls well below the
// amplitude.
func toneAmplitude(rec rowsInput, carrierHz *float64) ([]float64, int, float64, error) {
	x := rec.channel
	rate := rec.rateHz
	var fc float64
	if carrierHz != nil {
		fc = *carrierHz
	} else {
		var err error
		fc, err = strongestTone(x, rate)
		if err != nil {
			return nil, 0, 0, fmt.Errorf("position channel %s: %w", rec.name, err)
		}
	}
	if err := checkCarrier(fc, rate, len(x)); err != nil {
		return nil, 0, 0, err
	}
	d := newToneDemod(fc, rate)
	blockLen := d.blockLen
	nb := (len(x) + blockLen - 1) / blockLen
	var out []float64
	if rec.pulses != nil {
		var err error
		if out, err = maskedToneBlocks(x, blockLen, d.hann, d.w, rec.pulses); err != nil {
			return nil, 0, 0, fmt.Errorf("position channel %s: %w", rec.name, err)
		}
	} else {
		out = make([]float64, nb)
		for j := range out {
			out[j] = d.block(x, j)
		}
	}
	// A window cut off by either end of the capture no longer spans whole
	// carrier periods: those blocks take the nearest whole window's value.
	firstWhole, lastWhole := toneWholeBlocks(len(x), blockLen)
	if lastWhole >= firstWhole {
		for j := 0; j < firstWhole && j < nb; j++ {
			out[j] = out[firstWhole]
		}
		for j := lastWhole + 1; j < nb; j++ {
			out[j] = out[lastWhole]
		}
	}
	return out, blockLen, fc, nil
}

// toneDemod is the demodulator of toneAmplitude for one carrier: its
// block length, window and mixing step.
type toneDemod struct {
	blockLen int
	hann     []float64
	w        float64
	rot      complex128
}

func newToneDemod(fc, rate float64) *toneDemod {
	blockLen := int(math.Ceil(math.Max(2*rate/fc, rate*1e-3)))
	win := 2 * blockLen
	hann := make([]float64, win)
	for i := range hann {
		hann[i] = 0.5 - 0.5*math.Cos(2*math.Pi*(float64(i)+0.5)/float64(win))
	}
	w := 2 * math.Pi * fc / rate
	return &toneDemod{blockLen: blockLen, hann: hann, w: w, rot: complex(math.Cos(w), -math.Sin(w))}
}

// block is the amplitude of block j of x, from the window centred on it
// (cut to the samples x holds): x mixed with the carrier and summed under
// the window, two blocks long.
func (d *toneDemod) block(x []float32, j int) float64 {
	blockLen, w, rot, hann := d.blockLen, d.w, d.rot, d.hann
	c := j*blockLen + blockLen/2
	a := max(c-blockLen, 0)
	b := min(c+blockLen, len(x))
	// The mixing phasor starts exact at each window and advances by
	// multiplication, which stays accurate over a few hundred samples.
	z := complex(math.Cos(w*float64(a)), -math.Sin(w*float64(a)))
	// The window's own mean is removed (Σ(x−m)hz = Σxhz − mΣhz), so a
	// DC offset on the channel does not leak into the amplitude.
	var acc, hz complex128
	ws, xs := 0.0, 0.0
	for s := a; s < b; s++ {
		h := hann[s-(c-blockLen)]
		v := float64(x[s]) * h
		acc += complex(v, 0) * z
		hz += complex(h, 0) * z
		ws += h
		xs += v
		z *= rot
	}
	if ws > 0 {
		return 2 * cmplx.Abs(acc-complex(xs/ws, 0)*hz) / ws
	}
	return 0
}

// toneWholeBlocks is the first and last block of a capture of n samples
// whose demodulation window lies whole inside it.
func toneWholeBlocks(n, blockLen int) (first, last int) {
	return (blockLen + blockLen/2) / blockLen, (n-blockLen-blockLen/2)/blockLen - 1
}

// minCarrierPeriods is the fewest periods of the carrier a capture must
// hold for its amplitude to be measured.
const minCarrierPeriods = 8

// checkCarrier checks a carrier frequency against the sample rate and the
// length of the capture (n samples).
func checkCarrier(fc, rateHz float64, n int) error {
	if !(fc > 0 && fc < rateHz/2) {
		return fmt.Errorf("rows.carrier_hz %g Hz is not between 0 and half the sample rate (%g Hz)", fc, rateHz/2)
	}
	if periods := fc * float64(n) / rateHz; periods < minCarrierPeriods {
		return fmt.Errorf("rows.carrier_hz %g Hz makes only %.3g periods in the capture's %.3g s: a tone needs at least %d", fc, periods, float64(n)/rateHz, minCarrierPeriods)
	}
	return nil
}

// strongestTone returns the frequency of the largest peak of the spectrum
// of x (DC excluded), from averaged Hann-windowed FFTs of 65536 samples,
// refined by fitting a parabola through the log magnitudes around the peak.
func strongestTone(x []float32, rate float64) (float64, error) {
	sp, err := toneSpectrum(x, rate)
	if err != nil {
		return 0, err
	}
	if sp.total == 0 || sp.peakShare < 0.05 {
		return 0, fmt.Errorf("no clear carrier tone (the strongest line holds %.1f %% of the power); set rows.carrier_hz or use rows.source position", 100*sp.peakShare)
	}
	return sp.peakHz, nil
}

// spectrumPeak is what toneSpectrum finds: the strongest line's frequency,
// the share of the power (DC excluded) in its bin and in the bins within
// ±4 of it (a Hann window spreads a steady tone over three bins; a slowly
// changing amplitude a little further), and the bin width.
type spectrumPeak struct {
	peakHz, binHz        float64
	peakShare, nearShare float64
	total                float64
}

func toneSpectrum(x []float32, rate float64) (spectrumPeak, error) {
	nfft := 1 << 16
	for nfft > len(x) && nfft > 256 {
		nfft >>= 1
	}
	if len(x) < nfft {
		return spectrumPeak{}, fmt.Errorf("too short (%d samples) to find a carrier tone; set rows.carrier_hz", len(x))
	}
	fft := fourier.NewFFT(nfft)
	power := make([]float64, nfft/2+1)
	seq := make([]float64, nfft)
	var coef []complex128
	segments := min(8, len(x)/nfft)
	step := (len(x) - nfft) / max(segments-1, 1)
	for sgm := 0; sgm < segments; sgm++ {
		a := sgm * step
		m := 0.0
		for i := 0; i < nfft; i++ {
			m += float64(x[a+i])
		}
		m /= float64(nfft)
		for i := 0; i < nfft; i++ {
			seq[i] = (float64(x[a+i]) - m) * (0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(nfft)))
		}
		coef = fft.Coefficients(coef, seq)
		for k, c := range coef {
			power[k] += real(c)*real(c) + imag(c)*imag(c)
		}
	}
	best := 2
	for k := 2; k < len(power)-1; k++ {
		if power[k] > power[best] {
			best = k
		}
	}
	total := 0.0
	for _, p := range power[2:] {
		total += p
	}
	sp := spectrumPeak{binHz: rate / float64(nfft), total: total}
	if total == 0 {
		return sp, nil
	}
	near := 0.0
	for k := max(best-4, 2); k <= min(best+4, len(power)-1); k++ {
		near += power[k]
	}
	sp.peakShare, sp.nearShare = power[best]/total, near/total
	a, b, c := math.Log(power[best-1]+1e-300), math.Log(power[best]+1e-300), math.Log(power[best+1]+1e-300)
	d := 0.0
	if den := a - 2*b + c; den != 0 {
		d = 0.5 * (a - c) / den
	}
	sp.peakHz = (float64(best) + d) * sp.binHz
	return sp, nil
}

// levelBlockLen is the samples in one block of the rows (0.25 ms, at least
// one) for a source whose level is not a tone's.
func levelBlockLen(rateHz float64) int { return max(1, int(math.Round(rateHz*0.25e-3))) }
