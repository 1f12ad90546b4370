package recon

import (
	"context"
	"fmt"
	"math"
	"slices"
)

// OtsuResult is the outcome of Otsu's method on a set of values.
type OtsuResult struct {
	Threshold float64 // values above belong to the upper class
	LowMean   float64 // mean of the lower class
	HighMean  float64 // mean of the upper class
	// Separability is Otsu's η = σ_B²/σ_T², the between-class variance over
	// the total variance: near 1 for two clean levels, about 0.64 (2/π) for
	// Gaussian noise, 0 for a constant signal.
	Separability float64
	Min, Max     float64 // range of the values
}

// otsuBins is the histogram resolution used by Otsu.
const otsuBins = 256

// Otsu finds the threshold that maximises the between-class variance of
// the histogram of values (Otsu 1979, "A threshold selection method from
// gray-level histograms", IEEE Trans. SMC-9(1), eq. 18). The histogram has
// 256 bins between the smallest and largest value; at most about two
// million values are read, evenly spaced, so the cost stays bounded on long
// captures. The threshold is placed at the upper edge of the last bin of
// the lower class.
func Otsu(values []float32) OtsuResult {
	n := len(values)
	if n == 0 {
		return OtsuResult{}
	}
	stride := 1 + n/2_000_000
	m := (n + stride - 1) / stride // values read
	// Both passes are shared between the workers, each over its own span
	// of the values read, and their findings joined in order.
	spans := splitSpans(m, workers())
	type part struct {
		lo, hi     float64
		hist, sums [otsuBins]float64
	}
	parts := make([]part, len(spans))
	forEachSpan(spans, m >= minSplitSamples, func(k, a, b int) {
		lo, hi := math.Inf(1), math.Inf(-1)
		for i := a * stride; i < b*stride; i += stride {
			v := float64(values[i])
			if math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			if v < lo {
				lo = v
			}
			if v > hi {
				hi = v
			}
		}
		parts[k].lo, parts[k].hi = lo, hi
	})
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range parts {
		lo, hi = math.Min(lo, p.lo), math.Max(hi, p.hi)
	}
	res := OtsuResult{Min: lo, Max: hi, Threshold: lo, LowMean: lo, HighMean: hi}
	if !(hi > lo) || math.IsInf(hi-lo, 0) {
		return res
	}
	scale := otsuBins / (hi - lo)
	forEachSpan(spans, m >= minSplitSamples, func(k, a, b int) {
		hist, sums := &parts[k].hist, &parts[k].sums
		for i := a * stride; i < b*stride; i += stride {
			v := float64(values[i])
			if math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			bin := int((v - lo) * scale)
			if bin >= otsuBins {
				bin = otsuBins - 1
			}
			hist[bin]++
			sums[bin] += v
		}
	})
	var hist, sums [otsuBins]float64
	for _, p := range parts {
		for b := range hist {
			hist[b] += p.hist[b]
			sums[b] += p.sums[b]
		}
	}
	return otsuHistogram(hist[:], sums[:], lo, hi, res)
}

// otsuHistogram runs Otsu's search over a histogram whose bin b covers
// [lo + b·w, lo + (b+1)·w); sums holds the sum of the values in each bin
// (so class means are exact, not bin centres).
func otsuHistogram(hist, sums []float64, lo, hi float64, res OtsuResult) OtsuResult {
	total, totalSum, totalSq := 0.0, 0.0, 0.0
	w := (hi - lo) / float64(len(hist))
	for b := range hist {
		total += hist[b]
		totalSum += sums[b]
		c := lo + (float64(b)+0.5)*w
		totalSq += hist[b] * c * c
	}
	mean := totalSum / total
	// Total variance from bin centres, the same quantisation as σ_B².
	varT := totalSq/total - mean*mean
	best, bestB, lastB := -1.0, 0, 0
	w0, s0 := 0.0, 0.0
	for b := 0; b < len(hist)-1; b++ {
		w0 += hist[b]
		s0 += sums[b]
		w1 := total - w0
		if w0 == 0 || w1 == 0 {
			continue
		}
		m0 := s0 / w0
		m1 := (totalSum - s0) / w1
		between := w0 * w1 * (m0 - m1) * (m0 - m1) / (total * total)
		switch {
		case between > best*(1+1e-12):
			best, bestB, lastB = between, b, b
			res.LowMean, res.HighMean = m0, m1
		case between >= best*(1-1e-12):
			// Empty bins between two levels give the same σ_B²: the
			// threshold goes to the middle of that plateau.
			lastB = b
		}
	}
	if best < 0 {
		return res
	}
	res.Threshold = lo + (float64(bestB+lastB)/2+1)*w
	if varT > 0 {
		res.Separability = math.Min(1, best/varT)
	}
	return res
}

// minSeparability is the smallest Otsu η taken as a real two-level pulse
// train; Gaussian noise alone gives about 0.64.
const minSeparability = 0.8

// rawEdges finds the threshold crossings of x in the chosen direction with a
// Schmitt trigger (hysteresis h around thr) and returns their times in
// samples, interpolated linearly between the two samples that straddle thr.
func rawEdges(ctx context.Context, x []float32, thr, h float64, rising bool) ([]float64, error) {
	tr := newTrigger(thr, h, rising)
	high := tr.sign*x[0] > tr.t
	if w := workers(); w > 1 && len(x) >= minSplitSamples && h >= 0 {
		return rawEdgesSplit(ctx, x, tr, high, w)
	}
	return tr.scan(ctx, x, 0, len(x), high, nil)
}

// trigger is a Schmitt trigger on sign·x: it goes high above upper, low
// below lower, and an edge is placed where sign·x crosses t.
type trigger struct{ upper, lower, t, sign float32 }

func newTrigger(thr, h float64, rising bool) trigger {
	if !rising {
		// Work on the negated signal so one loop serves both polarities.
		return trigger{float32(-(thr - h/2)), float32(-(thr + h/2)), float32(-thr), -1}
	}
	return trigger{float32(thr + h/2), float32(thr - h/2), float32(thr), 1}
}

// scan appends to edges the rising crossings of samples [from, to) of x,
// starting in state high; the walk back to the crossing may read samples
// before from.
func (tr trigger) scan(ctx context.Context, x []float32, from, to int, high bool, edges []float64) ([]float64, error) {
	edges, _, err := tr.scanState(ctx, x, from, to, high, edges)
	return edges, err
}

// scanState is scan that also returns the trigger's state after sample
// to−1, so a later scan can go on from there.
func (tr trigger) scanState(ctx context.Context, x []float32, from, to int, high bool, edges []float64) ([]float64, bool, error) {
	upper, lower, t, sign := tr.upper, tr.lower, tr.t, tr.sign
	const chunk = 1 << 20
	for start := from; start < to; start += chunk {
		if err := ctx.Err(); err != nil {
			return nil, high, err
		}
		end := min(start+chunk, to)
		for i := start; i < end; i++ {
			v := sign * x[i]
			if high {
				if v < lower {
					high = false
				}
				continue
			}
			if v <= upper {
				continue
			}
			high = true
			// Walk back to the crossing of the threshold itself.
			k := i
			for k > 0 && i-k < 4096 && sign*x[k-1] > t {
				k--
			}
			if k == 0 {
				edges = append(edges, 0)
				continue
			}
			a, b := sign*x[k-1], sign*x[k]
			frac := 0.0
			if b != a {
				frac = float64((t - a) / (b - a))
			}
			edges = append(edges, float64(k-1)+frac)
		}
	}
	return edges, high, nil
}

// repairResult is the edge list after missing and extra pulses are fixed.
type repairResult struct {
	edges    []float64 // samples
	repaired []bool    // true where the edge was filled in
	missing  int       // edges filled in
	extra    int       // edges dropped as spurious
	// gaps are stretches with no pulses that were too long to fill in
	// (start and end edge, samples).
	gaps [][2]float64
	// periodMin, periodMax are the extremes of the running median period.
	periodMin, periodMax float64
}

// minEdgeSpacing is the smallest median spacing of index edges, in
// samples, taken as real pulses.
const minEdgeSpacing = 16

// maxFill is the longest run of consecutive missing pulses that is filled
// in; a longer silence is reported as a gap without lines.
const maxFill = 8

// repairSeedIntervals is how many of the first index intervals give the
// reference period the repair starts from (their median): the first
// pulses only, so the repair of a capture's beginning is known once they
// have been recorded.
const repairSeedIntervals = measureLines

// repairEdges walks the edges with a running median of the last accepted
// periods. An edge within ±tol of the expected time is accepted; edges
// before that window are spurious; when the next edge lies whole periods
// later, the missing edges are placed evenly between the two good ones.
func repairEdges(raw []float64) repairResult {
	if len(raw) < 2 {
		return repairResult{edges: raw, repaired: make([]bool, len(raw))}
	}
	var w repairer
	w.walk(raw, true)
	return w.res
}

// repairer is the walk of repairEdges with its state kept, so edges found
// later (a live capture) continue it. res.edges grows as edges are
// decided; next is the first raw edge not yet walked.
type repairer struct {
	res              repairResult
	recent, scratch  []float64
	last             float64 // the last edge decided
	next             int
	started, waiting bool
}

// repairWindow is how many recent periods the running median holds, and
// repairTol how far from the expected time (a fraction of the period) an
// edge is accepted.
const (
	repairWindow = 9
	repairTol    = 0.25
)

// walk decides raw[w.next:]. With final false (more edges may follow), it
// stops before an edge whose decision depends on edges not yet found, and
// waiting says so.
func (w *repairer) walk(raw []float64, final bool) {
	w.waiting = false
	if !w.started && !w.start(raw, final) {
		w.waiting = true
		return
	}
	res := &w.res
	for w.next < len(raw) {
		i := w.next
		p := medianOf(w.recent, w.scratch)
		expect := w.last + p
		// Find the edge closest to the expected time among those not too
		// late; everything before the window is spurious.
		if raw[i] < expect-repairTol*p {
			// Spurious unless a later edge fits better; skip it.
			res.extra++
			w.next++
			continue
		}
		if raw[i] <= expect+repairTol*p {
			// Prefer a following edge if it is even closer to expect.
			j := i
			for j+1 < len(raw) && math.Abs(raw[j+1]-expect) < math.Abs(raw[j]-expect) {
				j++
			}
			if j+1 == len(raw) && !final {
				w.waiting = true
				return
			}
			res.extra += j - i
			w.accept(raw[j]-w.last, raw[j], false)
			w.next = j + 1
		} else {
			// One or more pulses missing: how many periods fit?
			last := w.last
			m := int(math.Round((raw[i] - last) / p))
			w.next++
			if m < 2 || math.Abs(raw[i]-last-float64(m)*p) > repairTol*p*float64(m) {
				// Not a whole number of periods: accept as is (speed step).
				w.accept(raw[i]-last, raw[i], false)
				continue
			}
			if m-1 > maxFill {
				res.gaps = append(res.gaps, [2]float64{last, raw[i]})
				w.emit(raw[i], false)
				continue
			}
			step := (raw[i] - last) / float64(m)
			for k := 1; k < m; k++ {
				w.emit(last+float64(k)*step, true)
				res.missing++
			}
			w.accept(step, raw[i], false)
		}
		pm := medianOf(w.recent, w.scratch)
		res.periodMin = math.Min(res.periodMin, pm)
		res.periodMax = math.Max(res.periodMax, pm)
	}
}

// start takes the reference period from the first intervals and the first
// edge followed by a normal interval, so a spurious first pulse does not
// become the reference. It reports false when too few edges are known.
func (w *repairer) start(raw []float64, final bool) bool {
	n := min(len(raw), repairSeedIntervals+1)
	if n < 2 || (!final && n < repairSeedIntervals+1) {
		return false
	}
	intervals := make([]float64, n-1)
	for i := range intervals {
		intervals[i] = raw[i+1] - raw[i]
	}
	period := median(intervals)
	first := 0
	for first < len(raw)-1 && math.Abs(raw[first+1]-raw[first]-period) > 0.25*period {
		first++
	}
	if first == len(raw)-1 && !final {
		return false
	}
	w.res.extra = first
	w.recent = append(make([]float64, 0, repairWindow), period)
	w.scratch = make([]float64, repairWindow)
	w.emit(raw[first], false)
	w.res.periodMin, w.res.periodMax = period, period
	w.next, w.started = first+1, true
	return true
}

func (w *repairer) emit(edge float64, repaired bool) {
	w.res.edges = append(w.res.edges, edge)
	w.res.repaired = append(w.res.repaired, repaired)
	w.last = edge
}

func (w *repairer) accept(interval, edge float64, repaired bool) {
	w.emit(edge, repaired)
	if len(w.recent) == repairWindow {
		copy(w.recent, w.recent[1:])
		w.recent = w.recent[:repairWindow-1]
	}
	w.recent = append(w.recent, interval)
}

// median returns the median of v (v is not changed).
func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	s := slices.Clone(v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

func medianOf(v, scratch []float64) float64 {
	s := scratch[:len(v)]
	copy(s, v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// lineTiming is one line: its start (the index edge, or the line's share
// of a revolution) and its own period, both in samples.
type lineTiming struct {
	edge     float64
	period   float64
	aperture int
	repaired bool
}

// timingResult is the output of the timing stage.
type timingResult struct {
	key        string // of the resolved parameters it was found with
	otsu       OtsuResult
	threshold  float64
	hysteresis float64
	edges      []float64 // index edges in samples, after repair
	lines      []lineTiming
	revPeriods []float64 // samples per complete revolution
	missing    int
	extra      int
	warnings   []string
}

// timingParams are the keys the timing stage depends on (exported fields,
// so the cache key, their JSON, holds them all).
type timingParams struct {
	Channel int
	// ToneHz is the carrier notched out of an index channel that carries
	// the position tone too (0 for none).
	ToneHz       float64 `json:",omitempty"`
	Rising       bool
	Threshold    *float64
	Hysteresis   *float64
	PulsesPerRev int
	Apertures    int
	// NoApertures is a sweep without a wheel (a resonant mirror): one
	// index pulse per period, every line of the same aperture.
	NoApertures bool
}

func noPulses(o OtsuResult, chName, unit string) error {
	return fmt.Errorf("index channel %s stays between %s and %s: no pulses; check channels.index, or the index sensor and its cable", chName, level(o.Min, unit), level(o.Max, unit))
}

// withLevels returns p with an automatic threshold and hysteresis filled
// in from o, the index channel's two levels, and checks a threshold given
// by hand against the channel's range.
func (p timingParams) withLevels(o OtsuResult, chName, unit string) (timingParams, error) {
	if p.Threshold == nil && (o.Separability < minSeparability || !(o.Max > o.Min)) {
		return p, noPulses(o, chName, unit)
	}
	// Otsu's split tells the two levels apart; the edge is timed where the
	// signal crosses the middle of the two class means (the 50 % point of
	// the step), which a ramped or band-limited edge crosses at its true
	// time whatever the shape of the histogram between the levels.
	thr := (o.LowMean + o.HighMean) / 2
	if p.Threshold != nil {
		thr = *p.Threshold
		if thr <= o.Min || thr >= o.Max {
			return p, fmt.Errorf("timing.threshold %s is outside the index channel %s, which stays between %s and %s: no pulses; set threshold to null to find it automatically", level(thr, unit), chName, level(o.Min, unit), level(o.Max, unit))
		}
	}
	// Automatic hysteresis: a fifth of the step between the levels, kept
	// inside them so both switching points are reached.
	h := 0.2 * (o.HighMean - o.LowMean)
	h = math.Min(h, 1.6*math.Min(thr-o.LowMean, o.HighMean-thr))
	if p.Hysteresis != nil {
		h = *p.Hysteresis
	}
	p.Threshold, p.Hysteresis = &thr, &h
	return p, nil
}

// findTiming runs the timing stage on the index channel x, whose two
// levels are o, with the threshold and hysteresis of p resolved
// (withLevels): edges, repair, lines.
func findTiming(ctx context.Context, x []float32, o OtsuResult, rateHz float64, chName, unit string, p timingParams) (*timingResult, error) {
	res := &timingResult{otsu: o}
	thr, h := *p.Threshold, *p.Hysteresis
	res.threshold, res.hysteresis = thr, h
	raw, err := rawEdges(ctx, x, thr, h, p.Rising)
	if err != nil {
		return nil, err
	}
	if len(raw) < 3 {
		if len(raw) == 0 {
			return nil, noPulses(o, chName, unit)
		}
		return nil, fmt.Errorf("index channel %s has only %d pulse(s) crossing %s in %.3g s: at least 3 are needed; check channels.index and timing.edge", chName, len(raw), level(thr, unit), float64(len(x))/rateHz)
	}
	// Minimum spacing: edges a few samples apart are noise crossing the
	// threshold, not index pulses.
	spacings := make([]float64, len(raw)-1)
	for i := range spacings {
		spacings[i] = raw[i+1] - raw[i]
	}
	if m := median(spacings); m < minEdgeSpacing {
		return nil, fmt.Errorf("index channel %s crosses %s every %.1f samples: that is noise, not index pulses; check channels.index, or set timing.threshold and timing.hysteresis", chName, level(thr, unit), m)
	}
	rep := repairEdges(raw)
	res.edges, res.missing, res.extra = rep.edges, rep.missing, rep.extra
	if rep.missing > 0 {
		res.warnings = append(res.warnings, fmt.Sprintf("%d index pulses were missing and were filled in", rep.missing))
	}
	if rep.extra > 0 {
		res.warnings = append(res.warnings, fmt.Sprintf("%d extra index pulses were ignored", rep.extra))
	}
	for _, g := range rep.gaps {
		res.warnings = append(res.warnings, fmt.Sprintf("no index pulses between %.3f s and %.3f s: that part of the capture has no lines; check the index sensor", g[0]/rateHz, g[1]/rateHz))
	}
	if rep.periodMin > 0 && rep.periodMax > 1.2*rep.periodMin {
		res.warnings = append(res.warnings, fmt.Sprintf("the index period varies by %.0f %% (from %.3g ms to %.3g ms): the wheel speed is not steady; check the motor, or timing.pulses_per_rev and sweep.apertures",
			100*(rep.periodMax/rep.periodMin-1), 1000*rep.periodMin/rateHz, 1000*rep.periodMax/rateHz))
	}
	gapAfter := gapsAfter(res.edges, rep.gaps)
	if len(res.edges) < 2 {
		return nil, fmt.Errorf("index channel %s: fewer than two usable pulses after repair", chName)
	}
	for i := range res.edges {
		res.lines = p.edgeLines(res.lines, res.edges, rep.repaired[i], i, gapAfter[i], len(x))
		if rev, ok := p.revolution(res.edges, gapAfter, i); ok {
			res.revPeriods = append(res.revPeriods, rev)
		}
	}
	return res, nil
}

// gapsAfter marks the edges that start a gap: no pulses follow them for
// too long to fill in, so they have no line.
func gapsAfter(edges []float64, gaps [][2]float64) []bool {
	after := make([]bool, len(edges))
	for _, g := range gaps {
		for i, e := range edges {
			if e == g[0] {
				after[i] = true
			}
		}
	}
	return after
}

// edgePeriod is the period of edge i, samples: to the next edge, or, for
// the last edge and one before a gap, the period before it.
func edgePeriod(edges []float64, i int, gap bool) float64 {
	if i+1 < len(edges) && !gap {
		return edges[i+1] - edges[i]
	}
	if i > 0 {
		return edges[i] - edges[i-1]
	}
	return 0
}

// onePerRev reports whether the index gives one pulse per revolution, the
// lines then lying at equal fractions of it.
func (p timingParams) onePerRev() bool {
	return !(p.NoApertures || p.PulsesPerRev != 1 || p.Apertures == 1)
}

// edgeLines appends the lines of index edge i (after repair) to lines; an
// edge before a gap has none. With a pulse per line (or the sine law's
// one per period) the edge starts one line; the last edge's line keeps
// the period before it and its field may run past the end of the capture.
// With one pulse per revolution the edge starts sweep.apertures lines at
// equal fractions of its revolution (the last one taking the period before
// it), those that start inside the capture of n samples.
func (p timingParams) edgeLines(lines []lineTiming, edges []float64, repaired bool, i int, gap bool, n int) []lineTiming {
	if gap {
		return lines
	}
	if !p.onePerRev() {
		per := p.Apertures
		if p.NoApertures {
			per = 1
		}
		return append(lines, lineTiming{edge: edges[i], period: edgePeriod(edges, i, gap), aperture: i % max(per, 1), repaired: repaired})
	}
	rev := edgePeriod(edges, i, gap)
	for k := 0; k < p.Apertures; k++ {
		start := edges[i] + float64(k)*rev/float64(p.Apertures)
		if start >= float64(n) {
			break
		}
		lines = append(lines, lineTiming{edge: start, period: rev / float64(p.Apertures), aperture: k, repaired: repaired && k == 0})
	}
	return lines
}

// revolution is the period of the revolution that edge i starts, samples,
// and whether it is complete and timed: with a pulse per line, from every
// apertures-th edge to the one a revolution later when no gap lies
// between; with one pulse per revolution, to the next edge.
func (p timingParams) revolution(edges []float64, gapAfter []bool, i int) (float64, bool) {
	if p.onePerRev() {
		return edgePeriod(edges, i, gapAfter[i]), !gapAfter[i] && i < len(edges)-1
	}
	per := p.Apertures
	if p.NoApertures {
		per = 1
	}
	if per <= 0 || i%per != 0 || i+per >= len(edges) {
		return 0, false
	}
	for k := i; k < i+per; k++ {
		if gapAfter[k] {
			return 0, false
		}
	}
	return edges[i+per] - edges[i], true
}

// volts formats a level for messages.
func level(v float64, unit string) string { return fmt.Sprintf("%.3g %s", v, unit) }
