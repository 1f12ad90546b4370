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
	if r.Sweep.Law == "sine" {
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
	det := s.rec.Channels[rs.ch.detector].Samples
	sw := rs.r.Sweep
	spacing := apertureSpacingDeg(sw)
	const margin = 3.0 // degrees searched either way
	const binDeg = 0.02
	from := *sw.DelayDeg - margin
	nb := int((sw.FieldDeg + 2*margin) / binDeg)
	maxLag := int(margin / binDeg)
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
	corr := make([][]float64, n) // corr[k][lag]: aperture k against k+1
	for k := range corr {
		corr[k] = make([]float64, 2*maxLag+1)
	}
	a := make([]float64, nb)
	b := make([]float64, nb)
	used := make([]int, n)
	stride := 1 + len(t.lines)/4000
	for i := 0; i+1 < len(t.lines); i += stride {
		if i%512 == 0 && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		l0, l1 := t.lines[i], t.lines[i+1]
		if l1.aperture != (l0.aperture+1)%n || !profile(l0, a) || !profile(l1, b) {
			continue
		}
		// Normalised correlation of the middle of a with b shifted by lag.
		lo, hi := maxLag, nb-maxLag
		ma, sa := meanStd(a[lo:hi])
		if sa == 0 {
			continue
		}
		for lag := -maxLag; lag <= maxLag; lag++ {
			mb, sb := meanStd(b[lo+lag : hi+lag])
			if sb == 0 {
				continue
			}
			c := 0.0
			for j := lo; j < hi; j++ {
				c += (a[j] - ma) * (b[j+lag] - mb)
			}
			corr[l0.aperture][lag+maxLag] += c / (sa * sb * float64(hi-lo))
		}
		used[l0.aperture]++
	}
	diffs := make([]float64, n)
	for k := 0; k < n; k++ {
		if used[k] == 0 {
			return nil, fmt.Errorf("no pair of lines from apertures %d and %d could be compared: the capture is too short", k, (k+1)%n)
		}
		c := corr[k]
		best := 0
		for j := range c {
			if c[j] > c[best] {
				best = j
			}
		}
		if c[best]/float64(used[k]) < 0.3 {
			return nil, fmt.Errorf("neighbouring lines from apertures %d and %d do not match (correlation %.2f): the scene has too little detail across the field to measure offsets", k, (k+1)%n, c[best]/float64(used[k]))
		}
		d := 0.0
		if best > 0 && best < len(c)-1 {
			if den := c[best-1] - 2*c[best] + c[best+1]; den != 0 {
				d = 0.5 * (c[best-1] - c[best+1]) / den
			}
		}
		diffs[k] = (float64(best-maxLag) + d) * binDeg
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
