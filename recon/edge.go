package recon

import (
	"math"
	"slices"
)

// The detector does not follow the beam at once: its chain (a phosphor's
// afterglow, an amplifier's low-pass, the sample-and-hold of the recorder)
// has a step response r(t) that rises from 0 to 1 over a few samples. The
// first samples of every line, taken while the response is still rising,
// read only r(t) of the scene there and would darken the first columns of
// the frame. The response is measured where the beam leaves the field: the
// detector's input then drops to the beam-off level, so its output falls
// as f(t) = 1 − r(t) of the level just before, whatever the scene is (a
// linear, time-invariant chain answers a step down as it answers a step
// up). The first samples of each line are divided by r(t), and the last
// ones by f(t) when the field is placed to end a little after the beam
// left; samples whose gain is under minEdgeResponse are left out rather
// than amplified. Both are measured against the placed field, so a
// placement a fraction of a sample off is corrected along with the
// detector's lag.

// edgeBinsPerSample is the resolution of the measured response: the lines'
// field edges fall at every fraction of a sample, so folding many lines
// samples the response finer than the sample spacing.
const edgeBinsPerSample = 4

// maxEdgeSamples is the longest response measured, in samples.
const maxEdgeSamples = 256

// minEdgeResponse is the smallest step response a sample is corrected by;
// below it the sample says too little about the scene (its noise would be
// amplified more than fourfold) and is left out.
const minEdgeResponse = 0.25

// edgeLeadSamples is how far before the placed field end the fall is
// measured: a field placed a little late (within a sample or two) ends
// after the beam has left, and its last samples, already falling, are
// corrected the same way.
const edgeLeadSamples = 4

// edgeResponse is the fall of the detector's output where the beam leaves
// the field, f(t) with t in samples from the placed field end, tabulated
// every 1/edgeBinsPerSample sample from −edgeLeadSamples. The step
// response at the field start is r(t) = 1 − f(t), t from the placed start.
type edgeResponse struct {
	f []float64
	// rise and fall are how many samples at the start and at the end of
	// a line read less than 99 % of the scene.
	rise, fall int
}

// at interpolates f at t samples from the field end: 1 before the table,
// 0 after it. Each entry is the mean over its bin, so it belongs to the
// bin's centre.
func (e *edgeResponse) at(t float64) float64 {
	p := (t+edgeLeadSamples)*edgeBinsPerSample - 0.5
	if p <= 0 {
		return e.f[0]
	}
	i := int(p)
	if i >= len(e.f)-1 {
		return 0
	}
	fr := p - float64(i)
	return e.f[i] + fr*(e.f[i+1]-e.f[i])
}

// startGain is r(t) for a sample t samples after the field start.
func (e *edgeResponse) startGain(t float64) float64 { return 1 - e.at(t) }

// endGain is f(t) for a sample t samples after the field end (t < 0).
func (e *edgeResponse) endGain(t float64) float64 { return e.at(t) }

// measureLines is how many of the first lines of a capture the detector's
// edge response and the typical beam-off length are measured over: the
// first ones, so both are known once those lines have been recorded (a
// live build, docs/pipeline.md "Live"); the response is a property of the
// detector's chain, the same all through a capture.
const measureLines = 1000

// measureEdgeResponse folds the detector around the field end of the
// first measureLines lines (baseline removed) onto a common time axis and
// returns f(t) = fall(t)/level, level being the mean over the two samples
// before the table starts. It returns nil when the scene at the end of the
// field is too dark to measure the fall against the noise, or the lines
// leave too little beam-off time after their field.
func measureEdgeResponse(det []float32, lines []placedLine) *edgeResponse {
	span, ok := edgeSpan(lines)
	if !ok {
		return nil
	}
	lines = lines[:min(len(lines), measureLines+1)]
	// Each worker folds its own share of the lines, in order; the shares'
	// sums are added and their levels joined in the order of the lines.
	spans := splitSpans(len(lines)-1, workers())
	folds := make([]*edgeFold, len(spans))
	forEachSpan(spans, len(lines) > 64, func(k, a, b int) {
		f := newEdgeFold(span)
		for i := a; i < b; i++ {
			f.add(det, &lines[i], lines[i+1].first)
		}
		folds[k] = f
	})
	f := folds[0]
	for _, o := range folds[1:] {
		f.merge(o)
	}
	return f.response()
}

// edgeSpan is how long after the field end the fall is measured over,
// samples: the beam-off time after the field (the median over the first
// measureLines lines, up to maxEdgeSamples), and never into the next
// line's field; ok is false when that is too short to measure.
func edgeSpan(lines []placedLine) (span float64, ok bool) {
	lines = lines[:min(len(lines), measureLines+1)]
	if len(lines) < 2 {
		return 0, false
	}
	gaps := make([]float64, 0, len(lines)-1)
	for i := 1; i < len(lines); i++ {
		gaps = append(gaps, lines[i].start-lines[i-1].end)
	}
	span = math.Min(median(gaps)-1, maxEdgeSamples)
	return span, span >= 4
}

// edgeLevelSamples is how many samples before the table give the level.
const edgeLevelSamples = 2

// edgeFold is the detector folded around the field end of lines, as
// measureEdgeResponse sums it: per bin of the time axis the sum and count
// of the baseline-removed samples, and the samples before the table. Lines
// are added one at a time, so a live build keeps the fold of the lines it
// has (edgeFold.add is the same whatever was added before).
type edgeFold struct {
	span     float64
	sum, cnt []float64
	levels   []float64
}

func newEdgeFold(span float64) *edgeFold {
	bins := int((span + edgeLeadSamples + edgeLevelSamples) * edgeBinsPerSample)
	return &edgeFold{span: span, sum: make([]float64, bins), cnt: make([]float64, bins)}
}

// clone is a copy of e that lines can be added to.
func (e *edgeFold) clone() *edgeFold {
	return &edgeFold{span: e.span, sum: slices.Clone(e.sum), cnt: slices.Clone(e.cnt), levels: slices.Clone(e.levels)}
}

// merge adds the fold of the lines after e's (of the same span).
func (e *edgeFold) merge(o *edgeFold) {
	for b := range e.sum {
		e.sum[b] += o.sum[b]
		e.cnt[b] += o.cnt[b]
	}
	e.levels = append(e.levels, o.levels...)
}

// add folds in the samples of det around l's field end, up to the span
// and to nextFirst, the next line's first sample.
func (e *edgeFold) add(det []float32, l *placedLine, nextFirst int) {
	before := float64(edgeLeadSamples + edgeLevelSamples)
	bins := len(e.sum)
	from := max(int(math.Ceil(l.end-before)), l.first, 0)
	to := min(int(math.Floor(l.end+e.span)), nextFirst, len(det))
	for j := from; j < to; j++ {
		t := float64(j) - l.end
		b := int((t + before) * edgeBinsPerSample)
		if b < 0 || b >= bins {
			continue
		}
		v := float64(det[j]) - l.baselineAt(j)
		e.sum[b] += v
		e.cnt[b]++
		if t < -edgeLeadSamples {
			e.levels = append(e.levels, v)
		}
	}
}

// response is the edge response the fold gives, nil when the level is
// too dark to measure against the noise or the table too short.
func (fd *edgeFold) response() *edgeResponse {
	const level = edgeLevelSamples
	bins := len(fd.sum)
	sum, cnt, levels := fd.sum, fd.cnt, fd.levels
	if len(levels) < 16 {
		return nil
	}
	mean, sd := meanStd(levels)
	// The mean level must stand well clear of its own standard error.
	if !(mean > 10*sd/math.Sqrt(float64(len(levels)))) {
		return nil
	}
	start := level * edgeBinsPerSample
	e := &edgeResponse{f: make([]float64, bins-start)}
	for b := start; b < bins; b++ {
		if cnt[b] == 0 {
			// The last bins may miss a phase of the sample grid.
			e.f = e.f[:b-start]
			break
		}
		e.f[b-start] = sum[b] / cnt[b] / mean
	}
	if len(e.f) < (edgeLeadSamples+2)*edgeBinsPerSample {
		return nil
	}
	// Noise makes the measured fall wander about 0 once settled: keep it
	// falling (a running minimum), clamp it to [0, 1], and cut the table
	// where it first comes within 1 % of 0.
	low := 1.0
	for b, v := range e.f {
		low = math.Min(low, math.Min(math.Max(v, 0), 1))
		e.f[b] = low
		if low <= 0.01 {
			e.f = e.f[:b+1]
			break
		}
	}
	lead := edgeLeadSamples * edgeBinsPerSample
	for b := 0; b < min(lead, len(e.f)); b++ {
		if e.f[b] < 0.99 {
			e.fall = int(math.Ceil(float64(lead-b) / edgeBinsPerSample))
			break
		}
	}
	// A field placed to end after the beam left (a delay set late) has a
	// table that falls to 0 before the placed end: no sample at the
	// start of a line is then still rising.
	e.rise = max(0, int(math.Ceil(float64(len(e.f)-lead)/edgeBinsPerSample)))
	return e
}

// baselineAt is the line's baseline at sample j.
func (l *placedLine) baselineAt(j int) float64 {
	return l.base0 + l.baseSlope*float64(j-l.first)
}
