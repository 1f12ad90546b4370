package recon

import (
	"context"
	"fmt"
	"math"

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
// own offsets are ignored.
func EstimateApertureOffsets(ctx context.Context, s *Session, r recipe.Recipe) ([]float64, error) {
	if r.Sweep.Law == recipe.LawSine {
		return nil, fmt.Errorf("sweep.law sine has no apertures: aperture offsets apply to the uniform and table laws")
	}
	r = r.Clone()
	r.Sweep.ApertureOffsetsDeg = nil
	s.mu.Lock()
	defer s.mu.Unlock()
	rs, _, err := s.resolve(ctx, r, nil)
	if err != nil {
		return nil, err
	}
	n := rs.r.Sweep.Apertures
	if n < 2 {
		return []float64{0}, nil
	}
	t := s.timing
	det, _, err := s.detector(ctx, rs.ch.detector, rs.r.Signal)
	if err != nil {
		return nil, err
	}
	sw := rs.r.Sweep
	// Coarse: 0.1° steps over ±3°; fine: 0.02° steps within ±0.16° of the
	// coarse peak. Both use the same pairs of lines.
	const margin = 3.0
	coarse, err := offsetCorrelation(ctx, t, det, sw, n, 0.1, make([]float64, n), margin)
	if err != nil {
		return nil, err
	}
	diffs, err := offsetCorrelation(ctx, t, det, sw, n, 0.02, coarse, 0.16)
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
// cross-correlation, pooled over up to about 1000 pairs, is searched in
// steps of binDeg within ±halfDeg of centre[k], and its peak refined by a
// parabola through the three best points.
func offsetCorrelation(ctx context.Context, t *timingResult, det []float32, sw recipe.Sweep, n int, binDeg float64, centre []float64, halfDeg float64) ([]float64, error) {
	spacing := apertureSpacingDeg(sw)
	maxShift := 0.0
	for _, c := range centre {
		maxShift = math.Max(maxShift, math.Abs(c))
	}
	maxLag := int(math.Ceil((halfDeg + maxShift) / binDeg))
	half := int(math.Ceil(halfDeg / binDeg))
	from := *sw.DelayDeg - float64(maxLag)*binDeg
	nb := int(sw.FieldDeg/binDeg) + 2*maxLag
	profile := func(lt lineTiming, dst []float64) bool {
		for b := range dst {
			alpha := from + (float64(b)+0.5)*binDeg
			v, ok := sampleAt(det, lt.edge+alpha/spacing*lt.period)
			if !ok {
				return false
			}
			dst[b] = v
		}
		return true
	}
	// Pooled over the pairs: the covariance and the variances are summed
	// before normalising, so pairs of lines that meet no detail (a sparse
	// scene) add little either way.
	corr := make([][]float64, n) // corr[k][j]: lag = centre lag − half + j
	varB := make([][]float64, n)
	varA := make([]float64, n)
	for k := range corr {
		corr[k] = make([]float64, 2*half+1)
		varB[k] = make([]float64, 2*half+1)
	}
	centreLag := make([]int, n)
	for k := range centreLag {
		centreLag[k] = int(math.Round(centre[k] / binDeg))
	}
	a := make([]float64, nb)
	b := make([]float64, nb)
	used := make([]int, n)
	stride := 1 + len(t.lines)/1000
	lo, hi := maxLag, nb-maxLag
	for i := 0; i+1 < len(t.lines); i += stride {
		if i%256 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		l0, l1 := t.lines[i], t.lines[i+1]
		if l1.aperture != (l0.aperture+1)%n || !profile(l0, a) || !profile(l1, b) {
			continue
		}
		k := l0.aperture
		ma, sa := meanStd(a[lo:hi])
		m := float64(hi - lo)
		varA[k] += sa * sa * m
		for j := range corr[k] {
			lag := centreLag[k] - half + j
			mb, sb := meanStd(b[lo+lag : hi+lag])
			c := 0.0
			for q := lo; q < hi; q++ {
				c += (a[q] - ma) * (b[q+lag] - mb)
			}
			corr[k][j] += c
			varB[k][j] += sb * sb * m
		}
		used[k]++
	}
	out := make([]float64, n)
	for k := 0; k < n; k++ {
		if used[k] == 0 {
			return nil, fmt.Errorf("no pair of lines from apertures %d and %d could be compared: the capture is too short", k, (k+1)%n)
		}
		c := corr[k]
		for j := range c {
			if den := math.Sqrt(varA[k] * varB[k][j]); den > 0 {
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
		out[k] = (float64(centreLag[k]-half+best) + d) * binDeg
	}
	return out, nil
}
