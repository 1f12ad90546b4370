package recon

import (
	"context"
	"math"
	"slices"
)

// liveShared takes apart, as it is recorded, an index channel that
// carries the position tone too (sharedChannel does it for a whole
// recording). The zero-phase notch runs forward as the samples come; its
// backward pass, which in a batch build starts at the recording's end,
// starts at the newest sample and is kept only for the samples more than
// margin before it: the notch's poles decay as exp(−π·bw·t), so what the
// pass started from is forgotten by then (exp(−30) of it is left, far
// below float32 rounding), and those samples are the ones the whole
// recording's pass gives. The last margin samples are worked out for each
// Result as the batch build of the samples so far does, with its end
// extension. The pulse spans are taken with the levels the recipe gives
// (rows.pulse_rest, rows.pulse_away, resolved from the first seconds).
type liveShared struct {
	rate, fc, bw float64
	w            float64 // the carrier, radians per sample
	b, a         [3]float64
	pad, fit     int // as notchZeroPhase has them for a recording this long
	margin       int
	guard        int
	rest, away   float64
	started      bool
	// The forward pass: its state after the newest sample, and its output
	// from sample fwdFrom on.
	x1, x2, y1, y2 float64
	fwd            []float64
	fwdFrom        int
	// pulses are the notched samples, final before nf; from nf to the
	// newest sample, the last Result's.
	pulses []float32
	nf     int
	// inPulse is whether a sample lies in a pulse span, final before
	// nf−guard (marked from the final samples only).
	inPulse []bool
	scratch []float64
	mask    []bool // a Result's in-pulse flags of the last blocks
}

// sharedMarginTaus is how many of the notch's ring-down times (1/(π·bw))
// the backward pass runs before its samples are kept.
const sharedMarginTaus = 30

func newLiveShared(fc, rest, away, rate float64, blockLen int) *liveShared {
	bw := fc * notchBandwidthFraction
	s := &liveShared{rate: rate, fc: fc, bw: bw, w: 2 * math.Pi * fc / rate, rest: rest, away: away, guard: pulseGuard(rate)}
	s.b, s.a = notchCoefficients(fc, bw, rate)
	tau := rate / (math.Pi * bw)
	s.pad, s.fit = notchEnds(fc, bw, rate)
	// Also two tone blocks and the guard, so that a block whose mask is
	// final has a whole window however the recording ends.
	s.margin = max(int(math.Ceil(sharedMarginTaus*tau)), 2*blockLen+s.guard)
	return s
}

// step runs one sample through the notch with state (x1, x2, y1, y2).
func (s *liveShared) step(x0 float64, x1, x2, y1, y2 *float64) float64 {
	b, a := s.b, s.a
	y0 := b[0]*x0 + b[1]**x1 + b[2]**x2 - a[1]**y1 - a[2]**y2
	*x2, *x1, *y2, *y1 = *x1, x0, *y1, y0
	return y0
}

// add takes the index channel x up to its n samples so far.
func (s *liveShared) add(x []float32, n int) {
	if !s.started {
		// The head's extension is the tone fitted to the first fit
		// samples, pad of them long: fixed once the recording is longer.
		if n < max(s.pad, s.fit) {
			return
		}
		head := toneAtEnd(x, 0, s.fit, s.w)
		for i := s.pad - 1; i >= 0; i-- {
			s.step(head.at(float64(-1-i)), &s.x1, &s.x2, &s.y1, &s.y2)
		}
		s.started = true
	}
	for i := s.fwdFrom + len(s.fwd); i < n; i++ {
		s.fwd = append(s.fwd, s.step(float64(x[i]), &s.x1, &s.x2, &s.y1, &s.y2))
	}
	// The pass runs again each quarter of the margin, so a Result works
	// out at most 5/4 of it.
	to := n - s.margin
	if to-s.nf < max(s.margin/4, 1) {
		return
	}
	// The backward pass from the newest sample; the samples before to are
	// final.
	s.pulses = grow(s.pulses, n-len(s.pulses))
	var x1, x2, y1, y2 float64
	for i := n - 1; i >= s.nf; i-- {
		y := s.step(s.fwd[i-s.fwdFrom], &x1, &x2, &y1, &y2)
		if i < to {
			s.pulses[i] = float32(y)
		}
	}
	s.markPulses(s.nf, to, &s.inPulse, 0, math.MaxInt)
	for len(s.inPulse) < to {
		s.inPulse = append(s.inPulse, false)
	}
	s.nf = to
	// Only the forward output from nf on is needed again: the rest goes
	// once it is most of the store.
	if k := s.nf - s.fwdFrom; 2*k > len(s.fwd) {
		s.fwd = s.fwd[:copy(s.fwd, s.fwd[k:])]
		s.fwdFrom = s.nf
	}
}

// markPulses marks, in (*m)[s−off] for off ≤ s < end, the samples within
// guard of a sample of pulses[from:to] away from the resting level
// (pulseSpans), growing *m as needed.
func (s *liveShared) markPulses(from, to int, m *[]bool, off, end int) {
	for t := from; t < to; t++ {
		if !isAway(s.pulses[t], s.rest, s.away) {
			continue
		}
		a, b := max(t-s.guard, off, 0), min(t+s.guard+1, end)
		for len(*m) < b-off {
			*m = append(*m, false)
		}
		for i := a; i < b; i++ {
			(*m)[i-off] = true
		}
	}
}

// tail works out pulses[nf:n] as a batch build of the n samples so far
// does: the forward pass goes on over the end's extension (the tone
// fitted to the last samples), and the backward pass starts at its end.
func (s *liveShared) tail(x []float32, n int) error {
	if err := checkCarrier(s.fc, s.rate, n); err != nil {
		return err
	}
	s.pulses = grow(s.pulses, n-len(s.pulses))
	if !s.started {
		copy(s.pulses, notchZeroPhase(x[:n], s.fc, s.bw, s.rate))
		return nil
	}
	tone := toneAtEnd(x, max(n-s.fit, 0), n, s.w)
	ext := slices.Grow(s.scratch[:0], n-s.nf+s.pad)[:n-s.nf+s.pad]
	s.scratch = ext
	copy(ext, s.fwd[s.nf-s.fwdFrom:n-s.fwdFrom])
	x1, x2, y1, y2 := s.x1, s.x2, s.y1, s.y2
	for i := 0; i < s.pad; i++ {
		ext[n-s.nf+i] = s.step(tone.at(float64(n+i)), &x1, &x2, &y1, &y2)
	}
	x1, x2, y1, y2 = 0, 0, 0, 0
	for i := len(ext) - 1; i >= 0; i-- {
		ext[i] = s.step(ext[i], &x1, &x2, &y1, &y2)
	}
	for i := 0; i < n-s.nf; i++ {
		s.pulses[s.nf+i] = float32(ext[i])
	}
	return nil
}

// edges scans the notched samples from from to to with trig, as
// addEdges and tail do, starting high as given (or as pulses[0] is when
// from is 0).
func (s *liveShared) edges(trig trigger, from, to int, high bool, edges []float64) ([]float64, bool) {
	if to <= from {
		return edges, high
	}
	if from == 0 {
		high = trig.sign*s.pulses[0] > trig.t
	}
	edges, high, _ = trig.scanState(context.Background(), s.pulses, from, to, high, edges)
	return edges, high
}

// sharedLevels reads the tone on the shared channel live: each block's
// amplitude fitted around the pulses (maskedToneBlock), final once the
// in-pulse flags of its window are; a block mostly in a pulse takes the
// value interpolated between its neighbours, and the first blocks the
// first whole window's, as toneAmplitude gives them.
type sharedLevels struct {
	d    *toneDemod
	sh   *liveShared
	raw  []float64 // final blocks' own amplitudes, NaN where mostly pulse
	vals []float64 // raw[:len(vals)] interpolated, through the last non-NaN
}

func (t *sharedLevels) blockLen() int { return t.d.blockLen }

func (t *sharedLevels) final(x []float32, n int, levels []float64) []float64 {
	bl := t.d.blockLen
	first, last := toneWholeBlocks(n, bl)
	for j := len(t.raw); j <= last; j++ {
		if c := j*bl + bl/2; c+bl > t.sh.nf-t.sh.guard {
			break
		}
		t.raw = append(t.raw, maskedToneBlock(x[:n], t.sh.inPulse, 0, j, bl, t.d.hann, t.d.w))
	}
	t.vals = interpolateOn(t.vals, t.raw, 0)
	if len(t.vals) <= first {
		return levels
	}
	for j := len(levels); j < len(t.vals); j++ {
		levels = append(levels, t.vals[max(j, first)])
	}
	return levels
}

// interpolateOn extends vals, interpolateNaN of the blocks before
// len(vals) (the last not NaN), through the last block that is not NaN,
// as interpolateNaN does: raw[k] is block off+k, for the blocks from
// len(vals) ≥ off on.
func interpolateOn(vals, raw []float64, off int) []float64 {
	last := len(vals) - 1
	for i := len(vals); i < off+len(raw); i++ {
		x := raw[i-off]
		if math.IsNaN(x) {
			continue
		}
		for k := last + 1; k < i; k++ {
			if last < 0 {
				vals = append(vals, x)
			} else {
				vals = append(vals, vals[last]+(x-vals[last])*float64(k-last)/float64(i-last))
			}
		}
		vals = append(vals, x)
		last = i
	}
	return vals
}

// all is the levels of all nb blocks of the n samples so far, or nil when
// no block has an amplitude of its own (the batch build's error). The
// samples after the final ones are sh.pulses as tail left them. Only the
// blocks after the final ones are worked out.
func (t *sharedLevels) all(x []float32, n, nb int, levels []float64) []float64 {
	bl := t.d.blockLen
	sh := t.sh
	j0 := len(t.raw)
	from := max(j0*bl+bl/2-bl, 0)
	// The in-pulse flags of the open blocks' windows: the final ones and
	// those the samples after nf mark.
	m := slices.Grow(sh.mask[:0], n-from)[:n-from]
	clear(m)
	if from < len(sh.inPulse) {
		copy(m, sh.inPulse[from:min(len(sh.inPulse), n)])
	}
	sh.markPulses(sh.nf, n, &m, from, n)
	sh.mask = m
	// The interpolation goes on from the last final value over the final
	// blocks after it (all NaN) and the open ones.
	nv := len(t.vals)
	open := make([]float64, 0, nb-nv)
	for j := nv; j < nb; j++ {
		v := math.NaN()
		if j >= j0 {
			v = maskedToneBlock(x[:n], m, from, j, bl, t.d.hann, t.d.w)
		}
		open = append(open, v)
	}
	vals := interpolateOn(t.vals, open, nv)[nv:]
	if nv+len(vals) == 0 {
		return nil
	}
	val := func(j int) float64 {
		if j < nv {
			return t.vals[j]
		}
		if j-nv < len(vals) {
			return vals[j-nv]
		}
		// After the last block with an amplitude of its own.
		if len(vals) > 0 {
			return vals[len(vals)-1]
		}
		return t.vals[nv-1]
	}
	first, last := toneWholeBlocks(n, bl)
	for j := len(levels); j < nb; j++ {
		k := j
		if last >= first {
			k = min(max(j, first), last)
		}
		levels = append(levels, val(k))
	}
	return levels
}
