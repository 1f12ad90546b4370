package recon

import (
	"context"
	"fmt"
	"math"
	"slices"

	"spotloom/recon/recipe"
)

// EstimateApertureOffsets measures how far each aperture's field is shifted
// from the others, in degrees of wheel rotation, by cross-correlating the
// detector profiles of neighbouring lines (aperture k against k+1) over
// the field against wheel angle. Neighbouring lines see almost the same
// part of the scene, so the lag of best correlation is the difference of
// their offsets. The differences are chained from aperture 0, the closing
// error of the chain is spread evenly, and the offsets are returned with
// zero mean (their common part belongs to sweep.delay_deg). The recipe's
// own offsets are ignored. A build with sweep.aperture_offsets_deg null
// uses the same estimate.
func EstimateApertureOffsets(ctx context.Context, s *Session, r recipe.Recipe) ([]float64, error) {
	if !mustLaw(r.Sweep.Law).isWheel() {
		return nil, fmt.Errorf("sweep.law %s has no apertures: aperture offsets apply to the uniform and table laws", r.Sweep.Law)
	}
	r = r.Clone()
	r.Sweep.ApertureOffsetsDeg = []float64{}
	s.mu.Lock()
	defer s.mu.Unlock()
	rs, _, err := s.resolve(ctx, r, nil)
	if err != nil {
		return nil, err
	}
	return s.offsetStage(ctx, rs.r, rs.ch, rs.timing)
}

// offsetStage estimates the aperture offsets of a resolved recipe (its own
// offsets and delay are not used) and caches them. The correlation is
// taken over the field where the automatic delay with all offsets zero
// puts it, so the result does not depend on a delay given by hand: it
// measures differences between apertures, which the exact place of the
// window hardly changes.
func (s *Session) offsetStage(ctx context.Context, r recipe.Recipe, ch channels, t *timingResult) ([]float64, error) {
	n := r.Sweep.Apertures
	if n < 2 {
		return []float64{0}, nil
	}
	sw := r.Sweep
	sw.ApertureOffsetsDeg = []float64{}
	sw.DelayDeg = nil
	k := key(struct {
		T      string
		Det    int
		Sweep  recipe.Sweep
		AC     string
		Invert bool
	}{t.key, ch.detector, sw, detectorKey(r.Signal), r.Signal.Invert})
	if o, ok := s.offsets.get(k); ok {
		return slices.Clone(o.offsets), o.err
	}
	rough := r.Clone()
	rough.Sweep.ApertureOffsetsDeg = []float64{}
	rough.Sweep.DelayDeg = nil
	// The law's own delay estimate places the window (a measured table's
	// is zero: it is written against the index edge).
	d, cache := 0.0, true
	if found, err := s.delayStage(ctx, rough, ch, t); err != nil {
		if ctx.Err() != nil || r.Sweep.DelayDeg == nil {
			return nil, err
		}
		// No field edge to place the window by (a scene that sends
		// little back): the delay given by hand places it, and the
		// result then depends on it, so it is not kept.
		d, cache = *r.Sweep.DelayDeg, false
	} else {
		d = found.DelayDeg
	}
	sw.DelayDeg = &d
	det, _, err := s.detector(ctx, ch.detector, r.Signal)
	if err != nil {
		return nil, err
	}
	offsets, err := estimateOffsets(ctx, t, det, sw)
	if err != nil && ctx.Err() != nil {
		return nil, err
	}
	if cache {
		// That the offsets cannot be measured is a finding too.
		s.offsets.put(k, offsetsFound{offsets, err})
	}
	s.runs["offsets"]++
	return slices.Clone(offsets), err
}

// offsetsFound is what the offset estimate finds: one offset per
// aperture, or why they could not be measured.
type offsetsFound struct {
	offsets []float64
	err     error
}

// resolveOffsets fills in sweep.aperture_offsets_deg when it is null: the
// estimate from the image, or all zero with a warning when the scene has
// too little detail to measure them.
func (s *Session) resolveOffsets(ctx context.Context, r *recipe.Recipe, ch channels, t *timingResult) ([]string, error) {
	if !mustLaw(r.Sweep.Law).isWheel() {
		r.Sweep.ApertureOffsetsDeg = []float64{}
		return nil, nil
	}
	offsets, err := s.offsetStage(ctx, *r, ch, t)
	if err != nil {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		r.Sweep.ApertureOffsetsDeg = make([]float64, r.Sweep.Apertures)
		return []string{fmt.Sprintf("sweep.aperture_offsets_deg is null but the offsets could not be measured, so they are taken as zero: %v", err)}, nil
	}
	r.Sweep.ApertureOffsetsDeg = offsets
	return nil, nil
}

// estimateOffsets is EstimateApertureOffsets on a sweep whose delay places
// the field.
func estimateOffsets(ctx context.Context, t *timingResult, det []float32, sw recipe.Sweep) ([]float64, error) {
	n := sw.Apertures
	// Coarse: 0.1° steps over ±3°; fine: 0.02° steps within ±0.16° of the
	// coarse peak. Both use the same pairs of lines.
	const margin = 3.0
	// The coarse search only has to land within a step of the peak: a
	// quarter of the pairs do.
	coarse, err := offsetCorrelation(ctx, t, det, sw, n, 0.1, make([]float64, n), margin, 250)
	if err != nil {
		return nil, err
	}
	diffs, err := offsetCorrelation(ctx, t, det, sw, n, 0.02, coarse, 0.16, 1000)
	if err != nil {
		return nil, err
	}
	closing := 0.0
	for _, d := range diffs {
		closing += d
	}
	offsets := make([]float64, n)
	for k := 1; k < n; k++ {
		offsets[k] = offsets[k-1] + diffs[k-1] - closing/float64(n)
	}
	mean := meanOf(offsets)
	for k := range offsets {
		offsets[k] -= mean
	}
	return offsets, nil
}

func meanStd(v []float64) (float64, float64) {
	m := meanOf(v)
	s := 0.0
	for _, x := range v {
		s += (x - m) * (x - m)
	}
	return m, math.Sqrt(s / float64(len(v)))
}

// offsetCorrelation returns, for each aperture k, the lag (degrees) that
// best aligns the detector profiles of lines from aperture k+1 with those
// of the lines from aperture k just before them: the normalised
// cross-correlation, pooled over up to about the given number of pairs, is searched in
// steps of binDeg within ±halfDeg of centre[k], and its peak refined by a
// parabola through the three best points.
func offsetCorrelation(ctx context.Context, t *timingResult, det []float32, sw recipe.Sweep, n int, binDeg float64, centre []float64, halfDeg float64, pairs int) ([]float64, error) {
	w := newLagWindow(sw, binDeg, centre, halfDeg)
	acc := newPairCorrelation(n, w)
	a := make([]float64, w.nb)
	b := make([]float64, w.nb)
	// Pairs are taken in runs of one revolution (n pairs), so that every
	// aperture has its share whatever the stride.
	stride := 1 + len(t.lines)/pairs
	for i := 0; i+1 < len(t.lines); i++ {
		if i%n == 0 && i > 0 {
			i += (stride - 1) * n
			if i+1 >= len(t.lines) {
				break
			}
		}
		if i%256 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		l0, l1 := t.lines[i], t.lines[i+1]
		if l1.aperture != (l0.aperture+1)%n || !w.profile(det, l0, a) || !w.profile(det, l1, b) {
			continue
		}
		acc.add(l0.aperture, a, b)
	}
	return acc.peaks()
}

// lagWindow is where offsetCorrelation reads each line: nb bins of binDeg
// of wheel angle from `from`, the field widened by the largest lag searched
// on either side; bins [lo, hi) are the field itself. Aperture k's lags
// are searched within ±half bins of centreLag[k].
type lagWindow struct {
	from, binDeg, spacing float64
	nb, lo, hi, half      int
	centreLag             []int
}

func newLagWindow(sw recipe.Sweep, binDeg float64, centre []float64, halfDeg float64) *lagWindow {
	maxShift := 0.0
	for _, c := range centre {
		maxShift = math.Max(maxShift, math.Abs(c))
	}
	maxLag := int(math.Ceil((halfDeg + maxShift) / binDeg))
	w := &lagWindow{
		from: *sw.DelayDeg - float64(maxLag)*binDeg, binDeg: binDeg, spacing: apertureSpacingDeg(sw),
		nb: int(sw.FieldDeg/binDeg) + 2*maxLag, half: int(math.Ceil(halfDeg / binDeg)),
		centreLag: make([]int, len(centre)),
	}
	w.lo, w.hi = maxLag, w.nb-maxLag
	for k := range w.centreLag {
		w.centreLag[k] = int(math.Round(centre[k] / binDeg))
	}
	return w
}

// profile samples the detector over the window for one line into dst; it
// reports false when the window runs past the capture.
func (w *lagWindow) profile(det []float32, lt lineTiming, dst []float64) bool {
	for b := range dst {
		alpha := w.from + (float64(b)+0.5)*w.binDeg
		v, ok := sampleAt(det, lt.edge+alpha/w.spacing*lt.period)
		if !ok {
			return false
		}
		dst[b] = v
	}
	return true
}

// pairCorrelation pools the cross-correlation of neighbouring lines per
// aperture over many pairs: the covariance and the variances are summed
// before normalising, so pairs of lines that meet no detail (a sparse
// scene) add little either way.
type pairCorrelation struct {
	w           *lagWindow
	corr, varB  [][]float64 // [k][j]: lag = centre lag − half + j
	varA        []float64
	used        []int
	sumB, sumB2 []float64
}

func newPairCorrelation(n int, w *lagWindow) *pairCorrelation {
	p := &pairCorrelation{w: w, corr: make([][]float64, n), varB: make([][]float64, n), varA: make([]float64, n),
		used: make([]int, n), sumB: make([]float64, w.nb+1), sumB2: make([]float64, w.nb+1)}
	for k := range p.corr {
		p.corr[k] = make([]float64, 2*w.half+1)
		p.varB[k] = make([]float64, 2*w.half+1)
	}
	return p
}

// add pools one pair: a from aperture k (its field bins are made zero
// mean in place), b from aperture k+1.
func (p *pairCorrelation) add(k int, a, b []float64) {
	lo, hi := p.w.lo, p.w.hi
	ma, sa := meanStd(a[lo:hi])
	m := float64(hi - lo)
	p.varA[k] += sa * sa * m
	for q := lo; q < hi; q++ {
		a[q] -= ma
	}
	// Running sums of b and b² give each window's variance at once.
	sumB, sumB2 := p.sumB, p.sumB2
	sumB[0], sumB2[0] = 0, 0
	for q, v := range b {
		sumB[q+1] = sumB[q] + v
		sumB2[q+1] = sumB2[q] + v*v
	}
	for j := range p.corr[k] {
		lag := p.w.centreLag[k] - p.w.half + j
		// Σ(a−ā)(b−b̄) = Σ(a−ā)b, as Σ(a−ā) = 0.
		c := 0.0
		for q := lo; q < hi; q++ {
			c += a[q] * b[q+lag]
		}
		p.corr[k][j] += c
		sb := sumB[hi+lag] - sumB[lo+lag]
		p.varB[k][j] += math.Max(0, sumB2[hi+lag]-sumB2[lo+lag]-sb*sb/m)
	}
	p.used[k]++
}

// peaks returns each aperture's lag of best normalised correlation,
// degrees, refined by a parabola through the three best points.
func (p *pairCorrelation) peaks() ([]float64, error) {
	n := len(p.corr)
	out := make([]float64, n)
	for k := 0; k < n; k++ {
		if p.used[k] == 0 {
			return nil, fmt.Errorf("no pair of lines from apertures %d and %d could be compared: the capture is too short", k, (k+1)%n)
		}
		c := p.corr[k]
		for j := range c {
			if den := math.Sqrt(p.varA[k] * p.varB[k][j]); den > 0 {
				c[j] /= den
			} else {
				c[j] = 0
			}
		}
		best := 0
		for j := range c {
			if c[j] > c[best] {
				best = j
			}
		}
		if r := c[best]; r < 0.3 {
			return nil, fmt.Errorf("neighbouring lines from apertures %d and %d do not match (correlation %.2f): the scene has too little detail across the field to measure offsets", k, (k+1)%n, r)
		}
		d := 0.0
		if best > 0 && best < len(c)-1 {
			if den := c[best-1] - 2*c[best] + c[best+1]; den != 0 {
				d = 0.5 * (c[best-1] - c[best+1]) / den
			}
		}
		out[k] = (float64(p.w.centreLag[k]-p.w.half+best) + d) * p.w.binDeg
	}
	return out, nil
}
