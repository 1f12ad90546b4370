package measure

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"

	"spotloom/recon"
)

// EdgeOrientation says which way an edge runs.
type EdgeOrientation int

const (
	// EdgeAlongY is a near-vertical edge (it runs cross-scan); it measures
	// the resolution along the sweep, x.
	EdgeAlongY EdgeOrientation = iota
	// EdgeAlongX is a near-horizontal edge (it runs along the sweep); it
	// measures the resolution cross-scan, y.
	EdgeAlongX
)

func (o EdgeOrientation) String() string {
	if o == EdgeAlongX {
		return "near-horizontal (resolution across the sweep)"
	}
	return "near-vertical (resolution along the sweep)"
}

// oversampling is the number of bins per pixel of the edge spread
// function (ISO 12233:2017 Annex D: four times).
const oversampling = 4

// EdgeResult is the spatial frequency response of one slanted edge.
type EdgeResult struct {
	Orientation EdgeOrientation
	// AngleDeg is the edge's direction, counter-clockwise from the +x
	// axis, in [0°, 180°): near 90° for a near-vertical edge.
	AngleDeg float64
	// SlantDeg is how far the edge is turned from the pixel axis it runs
	// along (positive counter-clockwise).
	SlantDeg float64
	// FrequencyLPMM and MTF are the curve, from 0 to one cycle per pitch
	// across the edge, MTF[0] = 1.
	FrequencyLPMM []float64
	MTF           []float64
	// MTF50LPMM and MTF10LPMM are the lowest frequencies where the MTF
	// falls to 0.5 and 0.1 (linear interpolation), NaN when it does not
	// within the curve.
	MTF50LPMM, MTF10LPMM float64
	// Lines is how many rows (or columns) crossed the edge with data.
	Lines int
	// ESF is the oversampled edge spread function, bin width BinMM.
	ESF   []float64
	BinMM float64
}

// edgeView reads a rectangle of the frame as lines across the edge: u
// runs across the edge, v along it.
type edgeView struct {
	f        *recon.Frame
	b        pixelBox
	o        EdgeOrientation
	nu, nv   int
	pitchU   float64 // mm per step of u
	pitchV   float64 // mm per step of v
	colRowOf func(u, v int) (int, int)
}

func newEdgeView(f *recon.Frame, b pixelBox, o EdgeOrientation) edgeView {
	e := edgeView{f: f, b: b, o: o}
	if o == EdgeAlongY {
		e.nu, e.nv, e.pitchU, e.pitchV = b.width(), b.height(), f.PitchXMM, f.PitchYMM
		e.colRowOf = func(u, v int) (int, int) { return b.c0 + u, b.r0 + v }
	} else {
		e.nu, e.nv, e.pitchU, e.pitchV = b.height(), b.width(), f.PitchYMM, f.PitchXMM
		e.colRowOf = func(u, v int) (int, int) { return b.c0 + v, b.r0 + u }
	}
	return e
}

func (e edgeView) at(u, v int) (float64, bool) {
	c, r := e.colRowOf(u, v)
	val, ok := e.f.At(c, r)
	return float64(val), ok
}

// orientation compares the summed differences along x and along y: an
// edge across x (near-vertical) changes most along x.
func orientation(f *recon.Frame, b pixelBox) EdgeOrientation {
	var gx, gy float64
	for row := b.r0; row <= b.r1; row++ {
		for col := b.c0; col <= b.c1; col++ {
			v, ok := f.At(col, row)
			if !ok {
				continue
			}
			if w, ok := f.At(col+1, row); ok && col < b.c1 {
				gx += math.Abs(float64(w - v))
			}
			if w, ok := f.At(col, row+1); ok && row < b.r1 {
				gy += math.Abs(float64(w - v))
			}
		}
	}
	if gy > gx {
		return EdgeAlongX
	}
	return EdgeAlongY
}

// Edge measures the spatial frequency response of the slanted edge inside
// r (ISO 12233:2017 e-SFR). The rectangle should hold one straight edge,
// turned a few degrees from a pixel axis, with both plateaus. Lines across
// the edge that miss any pixel's data are left out.
func Edge(f *recon.Frame, r Rect) (EdgeResult, error) {
	b, err := box(f, r)
	if err != nil {
		return EdgeResult{}, err
	}
	o := orientation(f, b)
	e := newEdgeView(f, b, o)
	if e.nu < 8 {
		return EdgeResult{}, fmt.Errorf("the edge rectangle %v is %d pixels across the %s edge: give at least 8", r, e.nu, o)
	}
	lines, sign := e.wholeLines()
	if len(lines) < 5 {
		return EdgeResult{}, fmt.Errorf("the edge rectangle %v has %d lines across the edge with data in every pixel: need at least 5: %w", r, len(lines), ErrNoData)
	}
	a0, a1, err := e.fitEdge(lines, sign, r)
	if err != nil {
		return EdgeResult{}, err
	}
	esf, binMM, err := e.edgeSpread(lines, a0, a1)
	if err != nil {
		return EdgeResult{}, fmt.Errorf("the edge rectangle %v: %w", r, err)
	}
	freq, mtf := sfr(esf, binMM, e.pitchU)
	res := EdgeResult{
		Orientation:   o,
		FrequencyLPMM: freq, MTF: mtf,
		MTF50LPMM: crossing(freq, mtf, 0.5), MTF10LPMM: crossing(freq, mtf, 0.1),
		Lines: len(lines), ESF: esf, BinMM: binMM,
	}
	// The edge's direction in mm: one step of v moves pitchV along v and
	// a1·pitchU along u; y grows as the row falls.
	if o == EdgeAlongY {
		res.AngleDeg = math.Atan2(f.PitchYMM, -a1*f.PitchXMM) * 180 / math.Pi
		res.SlantDeg = res.AngleDeg - 90
	} else {
		res.AngleDeg = math.Atan2(-a1*f.PitchYMM, f.PitchXMM) * 180 / math.Pi
		res.SlantDeg = res.AngleDeg
	}
	if res.AngleDeg < 0 {
		res.AngleDeg += 180
	}
	return res, nil
}

// edgeLine is one line across the edge with data in every pixel.
type edgeLine struct {
	v      int
	values []float64
}

// wholeLines returns the lines across the edge with data in every pixel,
// and the sign of the step (+1 when the level rises along u).
func (e edgeView) wholeLines() ([]edgeLine, float64) {
	var lines []edgeLine
	var total float64
	for v := 0; v < e.nv; v++ {
		vals := make([]float64, e.nu)
		ok := true
		for u := range vals {
			if vals[u], ok = e.at(u, v); !ok {
				break
			}
		}
		if ok {
			lines = append(lines, edgeLine{v, vals})
			total += vals[e.nu-1] - vals[0]
		}
	}
	if total < 0 {
		return lines, -1
	}
	return lines, 1
}

// fitEdge fits the edge's place u = a0 + a1·v. Edge location per line:
// centroid of the windowed first derivative (ISO 12233:2017 Annex D),
// first with the window centred on the line, then centred on the first
// fit. The edge must be slanted enough to sample every phase and stay
// inside the rectangle.
func (e edgeView) fitEdge(lines []edgeLine, sign float64, r Rect) (a0, a1 float64, err error) {
	locate := func(vals []float64, centre float64) (float64, bool) {
		var sw, swu float64
		half := math.Max(centre, float64(e.nu-2)-centre) + 1
		for u := 0; u+1 < len(vals); u++ {
			pos := float64(u) + 0.5
			d := sign * (vals[u+1] - vals[u])
			w := hamming(pos-centre, half)
			sw += w * d
			swu += w * d * pos
		}
		if !(sw > 0) {
			return 0, false
		}
		return swu / sw, true
	}
	for pass := 0; pass < 2; pass++ {
		var vs, us []float64
		for _, l := range lines {
			centre := float64(e.nu-1) / 2
			if pass > 0 {
				centre = a0 + a1*float64(l.v)
			}
			if c, ok := locate(l.values, centre); ok {
				vs, us = append(vs, float64(l.v)), append(us, c)
			}
		}
		if len(vs) < 5 {
			return 0, 0, fmt.Errorf("the edge rectangle %v holds no clear edge (found in %d lines)", r, len(vs))
		}
		a0, a1 = fitLine(vs, us)
	}
	span := math.Abs(a1) * float64(lines[len(lines)-1].v-lines[0].v)
	if span < 1 {
		return 0, 0, fmt.Errorf("the edge in %v is within %.2f° of the pixel axis, so its rows sample too few phases: turn the edge by a few degrees (ISO 12233 suggests about 5°) or give a longer rectangle",
			r, math.Abs(math.Atan(a1*e.pitchU/e.pitchV))*180/math.Pi)
	}
	for _, l := range lines {
		if c := a0 + a1*float64(l.v); c < 0 || c > float64(e.nu-1) {
			return 0, 0, fmt.Errorf("the edge leaves the rectangle %v: draw it so the edge crosses every line inside it", r)
		}
	}
	return a0, a1, nil
}

// edgeSpread projects every pixel onto the edge normal and bins at a
// quarter of the pitch across the edge: the oversampled edge spread
// function and its bin width in mm.
func (e edgeView) edgeSpread(lines []edgeLine, a0, a1 float64) ([]float64, float64, error) {
	tanSlant := a1 * e.pitchU / e.pitchV
	cosSlant := 1 / math.Sqrt(1+tanSlant*tanSlant)
	binMM := e.pitchU / oversampling
	dist := func(u, v int) float64 { return (float64(u) - a0 - a1*float64(v)) * e.pitchU * cosSlant }
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, l := range lines {
		lo = math.Min(lo, math.Min(dist(0, l.v), dist(e.nu-1, l.v)))
		hi = math.Max(hi, math.Max(dist(0, l.v), dist(e.nu-1, l.v)))
	}
	first := int(math.Floor(lo / binMM))
	n := int(math.Floor(hi/binMM)) - first + 1
	sums, counts := make([]float64, n), make([]int, n)
	for _, l := range lines {
		for u, val := range l.values {
			k := int(math.Floor(dist(u, l.v)/binMM)) - first
			sums[k] += val
			counts[k]++
		}
	}
	esf, err := fillBins(sums, counts)
	return esf, binMM, err
}

// hamming is the Hamming window 0.54 + 0.46·cos(π·x/half), zero beyond
// ±half.
func hamming(x, half float64) float64 {
	if math.Abs(x) > half {
		return 0
	}
	return 0.54 + 0.46*math.Cos(math.Pi*x/half)
}

// fitLine is the least-squares straight line y = a + b·x.
func fitLine(x, y []float64) (a, b float64) {
	var mx, my float64
	for i := range x {
		mx += x[i]
		my += y[i]
	}
	mx /= float64(len(x))
	my /= float64(len(x))
	var sxx, sxy float64
	for i := range x {
		sxx += (x[i] - mx) * (x[i] - mx)
		sxy += (x[i] - mx) * (y[i] - my)
	}
	b = sxy / sxx
	return my - b*mx, b
}

// fillBins averages each bin and fills empty ones by linear interpolation
// between their filled neighbours (ISO 12233:2017 Annex D allows for a few
// empty bins at awkward angles).
func fillBins(sums []float64, counts []int) ([]float64, error) {
	out := make([]float64, len(sums))
	filled := 0
	for i := range sums {
		if counts[i] > 0 {
			out[i] = sums[i] / float64(counts[i])
			filled++
		}
	}
	if filled < len(sums)*3/4 {
		return nil, fmt.Errorf("only %d of %d bins of the oversampled edge got a pixel: turn the edge a little more", filled, len(sums))
	}
	prev := -1
	for i := range out {
		if counts[i] == 0 {
			continue
		}
		if prev < 0 {
			for j := 0; j < i; j++ {
				out[j] = out[i]
			}
		} else {
			for j := prev + 1; j < i; j++ {
				t := float64(j-prev) / float64(i-prev)
				out[j] = out[prev]*(1-t) + out[i]*t
			}
		}
		prev = i
	}
	for j := prev + 1; j < len(out); j++ {
		out[j] = out[prev]
	}
	return out, nil
}

// sfr turns an oversampled edge spread function into the MTF from 0 to
// one cycle per pitch: central difference, Hamming window centred on the
// line spread function's centroid, DFT modulus normalised at 0, and the
// central difference's response sinc(2·f·bin) divided out.
func sfr(esf []float64, binMM, pitchMM float64) (freq, mtf []float64) {
	n := len(esf)
	lsf := make([]float64, n)
	for i := 1; i+1 < n; i++ {
		lsf[i] = (esf[i+1] - esf[i-1]) / 2
	}
	lsf[0], lsf[n-1] = lsf[1], lsf[n-2]
	var sw, swi float64
	for i, v := range lsf {
		sw += v
		swi += v * float64(i)
	}
	centre := float64(n-1) / 2
	if sw != 0 {
		centre = swi / sw
	}
	half := math.Max(centre, float64(n-1)-centre)
	for i := range lsf {
		lsf[i] *= hamming(float64(i)-centre, half)
	}
	coeff := fourier.NewFFT(n).Coefficients(nil, lsf)
	dc := math.Abs(real(coeff[0]))
	limit := int(math.Floor(float64(n) * binMM / pitchMM))
	limit = min(limit, len(coeff)-1)
	for k := 0; k <= limit; k++ {
		fr := float64(k) / (float64(n) * binMM)
		m := 0.0
		if dc > 0 {
			m = cmplxAbs(coeff[k]) / dc
		}
		// The correction is bounded as ISO 12233 bounds it (a factor of
		// at most 10); here it reaches π/2 at one cycle per pitch.
		if c := sinc(2 * fr * binMM); c > 0.1 {
			m /= c
		}
		freq, mtf = append(freq, fr), append(mtf, m)
	}
	return freq, mtf
}

func cmplxAbs(c complex128) float64 { return math.Hypot(real(c), imag(c)) }

// sinc is sin(πx)/(πx).
func sinc(x float64) float64 {
	if x == 0 {
		return 1
	}
	return math.Sin(math.Pi*x) / (math.Pi * x)
}

// crossing is the lowest x where y falls to level, interpolated linearly,
// or NaN.
func crossing(x, y []float64, level float64) float64 {
	for i := 1; i < len(y); i++ {
		if y[i] <= level && y[i-1] > level {
			t := (y[i-1] - level) / (y[i-1] - y[i])
			return x[i-1] + t*(x[i]-x[i-1])
		}
	}
	return math.NaN()
}
