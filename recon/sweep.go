package recon

import (
	"context"
	"fmt"
	"math"
	"slices"
	"sync/atomic"

	"spotloom/recon/recipe"
)

// lutSize is the number of entries of a sweep's x lookup table. With
// linear interpolation between entries, a flat projection over a 30° field
// at 500 mm is exact to about 1e-7 mm.
const lutSize = 8193

// sweepMap turns the line variable u (degrees of beam angle for uniform,
// degrees of phase for sine, fraction of the line for table) into x in mm,
// through a lookup table filled from the exact law.
type sweepMap struct {
	uMin, uMax float64
	scale      float64 // (lutSize-1)/(uMax-uMin)
	lut        []float64
	xMin, xMax float64 // extent of x over the part of u that is kept
	// columns keeps the last grid's column tables (frameGrid.col and
	// steps), which depend only on the grid's x0 and pitch: a live view's
	// images and a re-grid use the same ones again and again.
	columns atomic.Pointer[columnTables]
}

func newSweepMap(uMin, uMax float64, f func(u float64) float64) *sweepMap {
	m := &sweepMap{uMin: uMin, uMax: uMax, lut: make([]float64, lutSize)}
	m.scale = float64(lutSize-1) / (uMax - uMin)
	for i := range m.lut {
		m.lut[i] = f(uMin + float64(i)/m.scale)
	}
	return m
}

// x interpolates the table at u (clamped to the table's range).
func (m *sweepMap) x(u float64) float64 {
	p := (u - m.uMin) * m.scale
	if p <= 0 {
		return m.lut[0]
	}
	i := int(p)
	if i >= lutSize-1 {
		return m.lut[lutSize-1]
	}
	f := p - float64(i)
	return m.lut[i] + f*(m.lut[i+1]-m.lut[i])
}

// extent sets xMin/xMax from the kept u ranges.
func (m *sweepMap) extent(ranges ...[2]float64) {
	m.xMin, m.xMax = math.Inf(1), math.Inf(-1)
	for _, r := range ranges {
		const steps = 2048
		for i := 0; i <= steps; i++ {
			v := m.x(r[0] + (r[1]-r[0])*float64(i)/steps)
			m.xMin = math.Min(m.xMin, v)
			m.xMax = math.Max(m.xMax, v)
		}
	}
}

// Project returns x in mm for a beam angle thetaDeg from the centre of the
// field: projection "flat" gives x = D·tan θ on a plane at distance D,
// "angular" gives x = D·θ (θ in radians, the arc length at D).
func Project(projection string, distanceMM, thetaDeg float64) float64 {
	t := thetaDeg * math.Pi / 180
	if projection == "angular" {
		return distanceMM * t
	}
	return distanceMM * math.Tan(t)
}

// lawMap builds the x lookup for a resolved sweep.
func lawMap(s recipe.Sweep) (*sweepMap, error) {
	law, err := lawOf(s.Law)
	if err != nil {
		return nil, err
	}
	sign := 1.0
	if s.Reverse {
		sign = -1
	}
	return law.xMap(s, sign)
}

// sineKeepDeg is the phase half-width a (degrees) with sin a = keep: the
// part of each half period where |θ| ≤ keep·field/2.
func sineKeepDeg(keep float64) float64 {
	if keep >= 1 {
		return 90
	}
	return math.Asin(keep) * 180 / math.Pi
}

// apertureSpacingDeg is the wheel rotation per line.
func apertureSpacingDeg(s recipe.Sweep) float64 { return 360 / float64(max(s.Apertures, 1)) }

// placedLine is one line placed in time: the samples inside the field and
// the linear map from sample to the law variable u.
type placedLine struct {
	Line
	first, last int     // samples [first, last) are inside the field
	start, end  float64 // the field's start and end, fractional samples
	u0, du      float64 // u at sample first, and per sample
	period      float64 // samples
	// baseline at sample first and its change per sample
	base0, baseSlope float64
	baseFirst        int // baseline interval before the line, samples
	baseLast         int
}

// placement is the output of the placement stage.
type placement struct {
	key      string // of the parameters it was placed with
	lines    []placedLine
	sweep    *sweepMap
	warnings []string
	// edge is the detector's measured step response, nil when it could
	// not be measured or the law has no beam-off time.
	edge *edgeResponse
}

// placeLines turns each line's timing into sample ranges and the u map.
func placeLines(t *timingResult, s recipe.Sweep, delay float64, sinePeriod float64, n int, rateHz float64) []placedLine {
	var out []placedLine
	law := mustLaw(s.Law)
	for i, lt := range t.lines {
		law.place(s, lt, i, delay, sinePeriod, placer(&out, n, rateHz))
	}
	return out
}

// placer returns the lineAdder that appends each placed line to out, its
// field cut to the n samples of the capture (a line with no sample left
// is dropped).
func placer(out *[]placedLine, n int, rateHz float64) lineAdder {
	clamp := func(v float64) int {
		switch {
		case v < 0:
			return 0
		case v > float64(n):
			return n
		}
		return int(v)
	}
	return func(number, aperture int, edge, period, uStartSample, uEndSample, u0, du float64, repaired bool) {
		first := clamp(math.Ceil(uStartSample))
		last := clamp(math.Floor(uEndSample) + 1)
		if last <= first {
			return
		}
		pl := placedLine{
			Line: Line{
				Number: number, Aperture: aperture, EdgeS: edge / rateHz, Repaired: repaired,
				FieldStartS: float64(first) / rateHz, FieldEndS: float64(last) / rateHz,
			},
			first: first, last: last, start: uStartSample, end: uEndSample, period: period,
			u0: u0 + du*(float64(first)-uStartSample), du: du,
		}
		*out = append(*out, pl)
	}
}

// lineWindow returns the samples [from, to) of the line's own span: from
// its edge to the next, where the delay profile is collected.
func lineWindow(lt lineTiming, n int) (int, int) {
	from := int(math.Ceil(lt.edge))
	to := int(math.Floor(lt.edge + lt.period))
	return max(from, 0), min(to, n)
}

// estimateDelay finds the wheel rotation from the index edge to the start
// of the field from the detector's beam-on envelope: the mean detector
// level against wheel angle, folded over many lines (each aperture shifted
// by its offset), rises where the beam enters the field. The start is the
// half-way crossing between the beam-off and beam-on levels, interpolated
// between bins.
//
// A detector may be negative-going (a photomultiplier's anode pulls its
// output down): the beam-on stretch is then below the beam-off level.
// Which side is beam-on is told by the spread of the samples in each bin:
// beam-on bins carry photon noise and scene contrast, beam-off bins only
// the dark level; when the spread cannot tell, invert (signal.invert)
// decides. negative reports that the profile was turned over, and
// aperturesSeen the aperture count the beam-on fraction implies when it
// does not fit the recipe's (taking field_deg as right), else 0.
func estimateDelay(ctx context.Context, t *timingResult, det []float32, s recipe.Sweep, invert bool) (delay float64, negative bool, aperturesSeen int, warns []string, err error) {
	if len(t.lines) == 0 {
		return 0, false, 0, nil, fmt.Errorf("no lines to find the delay from")
	}
	spacing := apertureSpacingDeg(s)
	prof, spread, perAperture, err := foldLines(ctx, t, det, s)
	if err != nil {
		return 0, false, 0, nil, err
	}
	negative = orientProfile(prof, spread, perAperture, invert)
	bins := len(prof)
	binDeg := spacing / float64(bins)
	if len(perAperture) > 1 {
		prof = alignApertures(prof, perAperture, binDeg)
	}
	off, on, err := beamLevels(prof, s.FieldDeg/spacing)
	if err != nil {
		return 0, false, 0, nil, err
	}
	mid := (off + on) / 2
	bestStart, bestLen, err := beamOnStretch(prof, mid)
	if err != nil {
		return 0, false, 0, nil, err
	}
	start := fieldStart(prof, mid, bestStart, bins-bestLen, binDeg)
	end := fieldEnd(prof, mid, bestStart+bestLen, binDeg)
	aperturesSeen, warns = checkFieldWidth(end-start, s)
	return math.Mod(start, spacing), negative, aperturesSeen, warns, nil
}

// orientProfile turns a negative-going folded profile (and the profiles
// of each aperture) over so that the beam-on stretch is the high one, and
// reports whether it did; when the spread cannot tell, invert decides.
func orientProfile(prof, spread []float64, perAperture [][]float64, invert bool) bool {
	negative, known := beamOnIsLow(prof, spread)
	if !known {
		// Nothing in the signal tells: trust signal.invert.
		negative = invert
	}
	if negative {
		for _, p := range append([][]float64{prof}, perAperture...) {
			for b := range p {
				p[b] = -p[b]
			}
		}
	}
	return negative
}

// alignApertures returns the folded profile with each aperture's own
// profile shifted onto the others. Each aperture's field, and the scene
// along it, start at their own place (the recipe's offsets shift the
// lines of the fold, so with the right offsets every aperture starts at
// the same angle); the pooled profile is then the envelope of them all,
// whose edge starts with the earliest. Shifting each aperture by its lag
// against the pooled profile (the least-squares shift over the whole line,
// which the scene's detail and both field edges all pin down) lines them
// up at the mean of their starts, so that with the offsets unknown (all
// zero) the delay is the one that fits all lines best, and with them known
// the noise of each start averages down. The lags are refined once against
// the aligned profile. Unlike finding each aperture's own field start, the
// lag needs no edge that stands out of one aperture's noise (a dim step
// into the field, or one smeared by an afterglow).
func alignApertures(prof []float64, perAperture [][]float64, binDeg float64) []float64 {
	// Aperture errors are rarely more than a degree; look within ±3°.
	reach := max(2, int(math.Ceil(3/binDeg)))
	aligned := prof
	lags := make([]float64, len(perAperture))
	for range 2 {
		// Each aperture's lag on its own, in parallel; the shifted
		// profiles are then added in the apertures' order.
		forEachSpan(splitSpans(len(perAperture), len(perAperture)), true, func(k, _, _ int) {
			lags[k] = profileLag(perAperture[k], aligned, reach)
		})
		next := make([]float64, len(prof))
		for k, pk := range perAperture {
			for b := range next {
				next[b] += circularAt(pk, float64(b)+lags[k]) / float64(len(perAperture))
			}
		}
		aligned = next
	}
	return aligned
}

// profileLag is the circular shift d (bins, fractional) within ±reach for
// which p(b+d) best matches ref(b) in the least-squares sense: the best
// whole bin, refined by the parabola through its neighbours' costs.
func profileLag(p, ref []float64, reach int) float64 {
	n := len(p)
	cost := func(d int) float64 {
		c := 0.0
		i := ((d % n) + n) % n // p's bin for ref's bin 0, wrapping round
		for _, r := range ref {
			v := p[i] - r
			c += v * v
			if i++; i == n {
				i = 0
			}
		}
		return c
	}
	best, bestCost := 0, math.Inf(1)
	costs := make(map[int]float64, 2*reach+1)
	for d := -reach; d <= reach; d++ {
		c := cost(d)
		costs[d] = c
		if c < bestCost {
			best, bestCost = d, c
		}
	}
	if best == -reach || best == reach {
		return float64(best)
	}
	cm, c0, cp := costs[best-1], bestCost, costs[best+1]
	if den := cm - 2*c0 + cp; den > 0 {
		return float64(best) + 0.5*(cm-cp)/den
	}
	return float64(best)
}

// circularAt interpolates a circular profile linearly at a fractional bin.
func circularAt(p []float64, b float64) float64 {
	n := len(p)
	i := int(math.Floor(b))
	f := b - float64(i)
	i0, i1 := (i%n+n)%n, ((i+1)%n+n)%n
	return p[i0] + f*(p[i1]-p[i0])
}

// beamLevels returns the beam-off and beam-on levels of a folded profile
// whose beam is on for fon of the line: quantiles of the profile. It fails
// when they do not stand far apart from the bin-to-bin noise.
func beamLevels(prof []float64, fon float64) (off, on float64, err error) {
	bins := len(prof)
	sorted := slices.Clone(prof)
	slices.Sort(sorted)
	q := func(f float64) float64 {
		return sorted[min(bins-1, max(0, int(f*float64(bins))))]
	}
	off = q(0.5 * (1 - fon))
	on = q(1 - 0.5*fon)
	// The beam-on and beam-off levels must differ by far more than the
	// bin-to-bin noise of the profile (σ from the median absolute step).
	steps := make([]float64, bins)
	for b := range steps {
		steps[b] = math.Abs(prof[(b+1)%bins] - prof[b])
	}
	noise := 1.4826 * median(steps) / math.Sqrt2
	if !(on-off > 10*noise) {
		// field_deg may be wrong (a default, or the wrong aperture count):
		// then the quantiles above miss the beam-off stretch. Measure the
		// beam-on fraction instead, as the bins well above the lowest
		// level, and take the levels from that.
		floor := q(0.01)
		above := 0
		for _, v := range prof {
			if v > floor+10*noise {
				above++
			}
		}
		if f := float64(above) / float64(bins); f > 0.02 && f < 0.98 {
			off, on = q(0.5*(1-f)), q(1-0.5*f)
		}
	}
	if !(on-off > 10*noise) {
		return 0, 0, fmt.Errorf("the detector shows no beam-on stretch within the lines (its mean level against wheel angle stays within %.2g of %.3g): check channels.detector, or set sweep.delay_deg by hand", on-off, off)
	}
	return off, on, nil
}

// beamOnStretch finds the beam-on stretch of a folded profile: its first
// bin and its length. The beam-off stretch is the longest circular run
// below mid; the beam-on stretch is the rest of the line. Taking the
// complement rather than the longest run above mid keeps dark parts of the
// scene inside the field (the holes of a dot grid that sit at the same
// place on every line) from cutting the field short.
func beamOnStretch(prof []float64, mid float64) (start, length int, err error) {
	bins := len(prof)
	offStart, offRun, runStart, runLen := -1, 0, -1, 0
	for i := 0; i < 2*bins; i++ {
		if prof[i%bins] <= mid {
			if runLen == 0 {
				runStart = i
			}
			runLen++
			if runLen > offRun && runLen <= bins {
				offStart, offRun = runStart, runLen
			}
		} else {
			runLen = 0
		}
	}
	if offStart < 0 || offRun >= bins {
		return 0, 0, fmt.Errorf("the detector shows no beam-off stretch within the lines: set sweep.delay_deg by hand, or check sweep.apertures")
	}
	return (offStart + offRun) % bins, bins - offRun, nil
}

// fieldEnd is where the beam leaves the field, in degrees: the falling
// crossing of mid from bin endBin-1 (above) to endBin (below).
func fieldEnd(prof []float64, mid float64, endBin int, binDeg float64) float64 {
	bins := len(prof)
	a, b := prof[(endBin-1)%bins], prof[endBin%bins]
	f := 0.5
	if a != b {
		f = (a - mid) / (a - b)
	}
	return (float64(endBin-1) + 0.5 + f) * binDeg
}

// checkFieldWidth compares the width of the beam-on stretch with
// sweep.field_deg. The beam is on for field/spacing of each line whatever
// the recipe says; if field_deg is right, that fraction gives the wheel's
// real aperture count, returned when it differs from the recipe's (else
// 0) along with a warning.
func checkFieldWidth(width float64, s recipe.Sweep) (int, []string) {
	if math.Abs(width-s.FieldDeg) <= 0.2*s.FieldDeg {
		return 0, nil
	}
	guess := int(math.Round(360 * (width / apertureSpacingDeg(s)) / s.FieldDeg))
	seen, hint := 0, ""
	if guess >= 1 && guess != s.Apertures {
		seen = guess
		hint = fmt.Sprintf(" (if field_deg is right, the wheel has %d apertures)", guess)
	}
	return seen, []string{fmt.Sprintf("the detector's beam-on stretch lasts %.1f° of wheel rotation but sweep.field_deg is %g°: check field_deg and apertures%s, or set sweep.delay_deg by hand", width, s.FieldDeg, hint)}
}

// fieldStart finds where the beam enters the field in a folded profile
// whose beam-on stretch begins near bin bestStart (the first bin above mid
// after the beam-off stretch of offLen bins), in degrees of wheel angle.
// The half-way crossing between bins bestStart-1 and bestStart (bin b's
// value belongs to the angle at its centre) marks where the bright part of
// the scene starts; the beam enters the field at the first step up of the
// profile, which a dim background (air) shows as a small one. A step
// survives AC coupling and drift, which bend the beam-off level but change
// it only slowly, so the search is for the earliest rise well above the
// bin-to-bin noise (6 σ, σ from the median absolute step) in the beam-off
// stretch before the bright run; the start is the middle of that rise.
func fieldStart(prof []float64, mid float64, bestStart, offLen int, binDeg float64) float64 {
	bins := len(prof)
	at := func(b int) float64 { return prof[((b%bins)+bins)%bins] }
	start := func() float64 {
		a, b := at(bestStart-1), at(bestStart)
		f := 0.5
		if b != a {
			f = (mid - a) / (b - a)
		}
		return (float64(bestStart-1) + 0.5 + f) * binDeg
	}()
	if offLen <= 20 {
		return start
	}
	steps := make([]float64, bins)
	for b := range steps {
		steps[b] = math.Abs(at(b+1) - at(b))
	}
	limit := 6 * 1.4826 * median(steps)
	edge := -1
	for b := bestStart - offLen*8/10; b < bestStart; b++ {
		if at(b+1)-at(b) > limit {
			edge = b
			break
		}
	}
	if edge < 0 {
		return start
	}
	// The beam switches on within a few bins (the detector's response,
	// and what is left of the apertures' spread): a single rise, growing
	// and then shrinking by no more than half a bin at a time. A slower
	// rise after it is the scene's own edge, blurred by the spot, and is
	// not part of the step.
	riseEnd := edge + 1
	for k, falling := edge+1, false; k < edge+maxRiseBins; k++ {
		prev, step := at(k)-at(k-1), at(k+1)-at(k)
		if step > prev && falling || step <= 0.5*prev || step <= limit {
			break
		}
		falling = falling || step < prev
		riseEnd = k + 1
	}
	before := median([]float64{at(edge), at(edge - 1), at(edge - 2)})
	after := at(riseEnd)
	half := (before + after) / 2
	for j := edge; j < riseEnd; j++ {
		lo, hi := at(j), at(j+1)
		if lo < half && hi >= half {
			return (float64(j) + 0.5 + (half-lo)/(hi-lo)) * binDeg
		}
	}
	return start
}

// maxRiseBins is the most bins a step into the field takes in the folded
// profile: at 96 kHz and 0.05° bins, 12 bins are 250 µs, far longer than
// a fast detector's response, far shorter than a spot-blurred edge.
const maxRiseBins = 12

// estimateSineDelay finds the phase delay of a resonant mirror by making
// the forward and backward lines agree: with the wrong delay they shift in
// opposite directions. It minimises the mean squared difference between
// the two lines of each period, resampled onto common beam angles: a
// coarse search in 0.5° steps over −90° … 90° (a delay and the same plus
// 180° only swap the two lines) on about 100 periods, then a parabola
// fitted to the cost within ±1° on about 400 (refineSineDelay). A scene that is its own mirror image
// across the field also matches 90° away (the lines then fold at the
// centre of the swing instead of its ends); when both fit about equally,
// the one within ±45° is kept and a warning says so.
func estimateSineDelay(ctx context.Context, t *timingResult, det []float32, s recipe.Sweep, sinePeriod float64) (float64, []string, error) {
	coarse := newSineCost(t, det, s, sinePeriod, 100)
	fine := newSineCost(t, det, s, sinePeriod, 400)
	best, bestCost := 0.0, math.Inf(1)
	var costs []float64
	for d := -90.0; d < 90; d += 0.5 {
		if err := ctx.Err(); err != nil {
			return 0, nil, err
		}
		c := coarse.at(d)
		costs = append(costs, c)
		if c < bestCost {
			best, bestCost = d, c
		}
	}
	if math.IsInf(bestCost, 1) {
		return 0, nil, fmt.Errorf("the sine lines run past the capture: set sweep.delay_deg by hand")
	}
	var warns []string
	other := best + 90
	if other >= 90 {
		other -= 180
	}
	// Both fit when each sits far below the typical mismatch.
	if oc := coarse.at(other); oc < 0.25*median(costs) {
		alt := other
		if math.Abs(other) < math.Abs(best) {
			best, alt = other, best
		}
		warns = append(warns, fmt.Sprintf("the scene looks the same mirrored across the field, so the sine delay could also be about %.1f° instead of the %.1f° kept (the one nearer 0°); if the image looks folded, set sweep.delay_deg", alt, best))
	}
	return refineSineDelay(fine, best), warns, nil
}

// refineSineDelay refines a coarse sine delay: the cost every 0.05° within
// ±1°, and the least-squares parabola through the cheapest point and
// its four neighbours on each side (a minimum of a smooth cost is locally
// quadratic; fitting nine points rides over the ripple the scene and the
// noise put on it, where a bracketing search can settle in a ripple).
func refineSineDelay(fine *sineCost, coarse float64) float64 {
	const step, half, fit = 0.05, 20, 4
	costs := make([]float64, 2*half+1)
	best := 0
	for i := range costs {
		costs[i] = fine.at(coarse + float64(i-half)*step)
		if costs[i] < costs[best] {
			best = i
		}
	}
	best = min(max(best, fit), len(costs)-1-fit)
	// Least squares c = a0 + a1·u + a2·u² over u = −fit … fit (symmetric,
	// so the normal equations split: a1 = Σuc/Σu², and a0, a2 from the
	// even moments).
	var s0, s2, s4, c0, c1, c2 float64
	for u := -fit; u <= fit; u++ {
		c, fu := costs[best+u], float64(u)
		s0++
		s2 += fu * fu
		s4 += fu * fu * fu * fu
		c0 += c
		c1 += fu * c
		c2 += fu * fu * c
	}
	a1 := c1 / s2
	a2 := (s0*c2 - s2*c0) / (s0*s4 - s2*s2)
	u := 0.0
	if a2 > 0 {
		u = math.Max(-fit, math.Min(fit, -a1/(2*a2)))
	}
	return coarse + (float64(best-half)+u)*step
}

// sineCost measures how badly the forward and backward lines of sampled
// periods disagree for a trial delay.
type sineCost struct {
	t          *timingResult
	det        []float32
	sinePeriod float64
	stride     int
	phi        []float64 // forward phase (degrees) of each common beam angle
	fw, bw     []float64
}

func newSineCost(t *timingResult, det []float32, s recipe.Sweep, sinePeriod float64, periods int) *sineCost {
	const nb = 128
	c := &sineCost{t: t, det: det, sinePeriod: sinePeriod, stride: 1 + len(t.lines)/periods,
		phi: make([]float64, nb), fw: make([]float64, nb), bw: make([]float64, nb)}
	for k := range c.phi {
		// Common beam angles: sin φ = v, forward φ = asin v, backward 180° − asin v.
		v := -s.SineKeep + 2*s.SineKeep*(float64(k)+0.5)/nb
		c.phi[k] = math.Asin(v) * 180 / math.Pi
	}
	return c
}

// at is the mean squared difference of the mean-removed line pairs.
func (c *sineCost) at(delay float64) float64 {
	total, count := 0.0, 0
	for i := 0; i < len(c.t.lines); i += c.stride {
		lt := c.t.lines[i]
		p := lt.period
		if c.sinePeriod > 0 {
			p = c.sinePeriod
		}
		ok := true
		for k, phi := range c.phi {
			fv, ok1 := sampleAt(c.det, lt.edge+(phi+delay)*p/360)
			bv, ok2 := sampleAt(c.det, lt.edge+(180-phi+delay)*p/360)
			if !ok1 || !ok2 {
				ok = false
				break
			}
			c.fw[k], c.bw[k] = fv, bv
		}
		if !ok {
			continue
		}
		mf, mb := meanOf(c.fw), meanOf(c.bw)
		for k := range c.fw {
			d := (c.fw[k] - mf) - (c.bw[k] - mb)
			total += d * d
		}
		count++
	}
	if count == 0 {
		return math.Inf(1)
	}
	return total / float64(count)
}

// sampleAt interpolates x linearly at a fractional sample position.
func sampleAt(x []float32, s float64) (float64, bool) {
	if s < 0 || s >= float64(len(x)-1) {
		return 0, false
	}
	i := int(s)
	f := s - float64(i)
	return float64(x[i]) + f*float64(x[i+1]-x[i]), true
}

func meanOf(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

// beamOnIsLow reports whether the beam-on part of a folded detector
// profile lies below its beam-off part, and whether the profile could tell.
// The quietest bins (the lowest tenth by spread, the variance of the
// samples in a bin) are beam-off: with the beam off there is neither
// photon noise nor scene contrast from line to line. When they are clearly
// quieter than the typical bin, the profile is negative-going if most bins
// lie below their level. Without that (a detector with no photon noise to
// tell by, as in a hand-made capture) it cannot tell.
func beamOnIsLow(prof, spread []float64) (negative, known bool) {
	n := len(prof)
	sorted := slices.Clone(spread)
	slices.Sort(sorted)
	quiet := sorted[n/10]
	if !(quiet < 0.5*sorted[n/2]) {
		return false, false
	}
	var offLevels []float64
	for b, v := range spread {
		if v <= quiet {
			offLevels = append(offLevels, prof[b])
		}
	}
	off := median(offLevels)
	steps := make([]float64, n)
	for b := range steps {
		steps[b] = math.Abs(prof[(b+1)%n] - prof[b])
	}
	margin := 10 * 1.4826 * median(steps)
	below, above := 0, 0
	for _, v := range prof {
		switch {
		case v < off-margin:
			below++
		case v > off+margin:
			above++
		}
	}
	return below > above, true
}

// foldLines folds about a thousand lines, spread over the capture, onto one
// line of wheel angle (each aperture shifted by its offset): the mean
// detector level in each angle bin, and the spread (variance) of the
// samples that fell in it; and, with more than one aperture, the mean
// level of each aperture's lines on their own. Lines are taken in runs of
// one revolution, so every aperture has its share.
func foldLines(ctx context.Context, t *timingResult, det []float32, s recipe.Sweep) (prof, spread []float64, perAperture [][]float64, err error) {
	spacing := apertureSpacingDeg(s)
	periods := make([]float64, len(t.lines))
	for i, lt := range t.lines {
		periods[i] = lt.period
	}
	pMed := median(periods)
	bins := int(math.Min(3600, math.Max(90, pMed/2)))
	n := max(s.Apertures, 1)
	// About 1000 lines, spread over the capture, average the noise down
	// far enough. Each worker folds its own share of the revolutions into
	// its own sums, which are added in the order of the shares.
	revs := (len(t.lines) + n - 1) / n
	stride := 1 + revs*n/1000
	picked := (revs + stride - 1) / stride // revolutions 0, stride, 2·stride, …
	spans := splitSpans(picked, workers())
	if len(spans) == 0 {
		return nil, nil, nil, fmt.Errorf("no lines to find the delay from")
	}
	type fold struct {
		sums, counts [][]float64
		sumSq        []float64
	}
	folds := make([]fold, len(spans))
	forEachSpan(spans, picked >= 64, func(w, a, b int) {
		f := fold{sums: make([][]float64, n), counts: make([][]float64, n), sumSq: make([]float64, bins)}
		for k := range f.sums {
			f.sums[k] = make([]float64, bins)
			f.counts[k] = make([]float64, bins)
		}
		for p := a; p < b; p++ {
			if (p-a)%64 == 0 && ctx.Err() != nil {
				return
			}
			rv := p * stride
			for i := rv * n; i < min((rv+1)*n, len(t.lines)); i++ {
				lt := t.lines[i]
				off := 0.0
				if lt.aperture < len(s.ApertureOffsetsDeg) {
					off = s.ApertureOffsetsDeg[lt.aperture]
				}
				ap := lt.aperture % n
				sum, cnt, sumSq := f.sums[ap], f.counts[ap], f.sumSq
				from, to := lineWindow(lt, len(det))
				k := float64(bins) / lt.period
				b0 := -off / spacing * float64(bins)
				for j := from; j < to; j++ {
					b := int(math.Floor((float64(j)-lt.edge)*k + b0))
					if b < 0 || b >= bins { // rarely: no division otherwise
						b %= bins
						if b < 0 {
							b += bins
						}
					}
					v := float64(det[j])
					sum[b] += v
					sumSq[b] += v * v
					cnt[b]++
				}
			}
		}
		folds[w] = f
	})
	if err := ctx.Err(); err != nil {
		return nil, nil, nil, err
	}
	sums, counts, sumSq := folds[0].sums, folds[0].counts, folds[0].sumSq
	for _, f := range folds[1:] {
		for k := range sums {
			for b := range sums[k] {
				sums[k][b] += f.sums[k][b]
				counts[k][b] += f.counts[k][b]
			}
		}
		for b := range sumSq {
			sumSq[b] += f.sumSq[b]
		}
	}
	prof = make([]float64, bins)
	spread = make([]float64, bins)
	for b := range prof {
		total, count := 0.0, 0.0
		for k := range sums {
			total += sums[k][b]
			count += counts[k][b]
		}
		if count == 0 {
			return nil, nil, nil, fmt.Errorf("lines are too short to find the delay (%d samples per line)", int(pMed))
		}
		prof[b] = total / count
		spread[b] = math.Max(0, sumSq[b]/count-prof[b]*prof[b])
	}
	if n > 1 {
		perAperture = make([][]float64, n)
		for k := range perAperture {
			pk := make([]float64, bins)
			for b := range pk {
				if counts[k][b] == 0 {
					// Too few lines of this aperture: use the pooled
					// profile alone.
					return prof, spread, nil, nil
				}
				pk[b] = sums[k][b] / counts[k][b]
			}
			perAperture[k] = pk
		}
	}
	return prof, spread, perAperture, nil
}
