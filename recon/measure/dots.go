package measure

import (
	"fmt"
	"math"
	"slices"

	"spotloom/recon"
)

// Dot is one dot of a grid: its measured centre, its place in the grid and
// how far the fitted grid puts it from where it was measured.
type Dot struct {
	XMM, YMM   float64
	I, J       int // grid column (along x) and row (along y, upwards) from the reference dot
	Pixels     int
	ResidualMM float64
}

// GridResult is the geometry of a dot or hole grid of known spacing: the
// affine map from the nominal grid to the frame, measured = M·nominal + t.
type GridResult struct {
	SpacingMM float64
	Found     int // dots used in the fit
	// ScaleX and ScaleY are the frame's millimetres per true millimetre
	// along the grid's two axes (|M·e₁| and |M·e₂|): 1.02 means the frame
	// shows the grid 2 % too large.
	ScaleX, ScaleY float64
	// RotationDeg is the grid's x axis, counter-clockwise from the frame's.
	RotationDeg float64
	// ShearDeg is how far the grid's axes are from square in the frame
	// (90° minus the angle between them).
	ShearDeg float64
	// M and T are the fitted map.
	M [2][2]float64
	T [2]float64
	// RMSMM and MaxMM are the residuals of the fit; Worst is the dot with
	// the largest.
	RMSMM, MaxMM float64
	Worst        Dot
	Dots         []Dot
	// DarkDots says the dots are darker than their surround (holes).
	DarkDots bool
}

// Grid finds the dots of a regular grid of spacingMM in the frame and fits
// its geometry. Dots cut by the frame's border or by pixels without data
// are left out.
func Grid(f *recon.Frame, spacingMM float64) (GridResult, error) {
	if !(spacingMM > 0) || math.IsInf(spacingMM, 0) {
		return GridResult{}, fmt.Errorf("the dot spacing %g mm must be a positive number", spacingMM)
	}
	cellPixels := spacingMM * spacingMM / (f.PitchXMM * f.PitchYMM)
	if cellPixels < 16 {
		return GridResult{}, fmt.Errorf("dots every %g mm are only %.1f pixels apart at %g × %g mm pitch: need at least 4", spacingMM, math.Sqrt(cellPixels), f.PitchXMM, f.PitchYMM)
	}
	thr, ok := otsu(f)
	if !ok {
		return GridResult{}, fmt.Errorf("the frame is flat: no dots to find: %w", ErrNoData)
	}
	// Dots are whichever class makes more blobs smaller than half a grid
	// cell: bright dots on a dark sheet or holes in a bright one.
	var best []Dot
	dark := false
	for _, d := range []bool{true, false} {
		dots := blobs(f, thr, d, cellPixels/2)
		if len(dots) > len(best) {
			best, dark = dots, d
		}
	}
	if len(best) < 4 {
		return GridResult{}, fmt.Errorf("found %d dots: a grid fit needs at least 4 whole dots inside the frame", len(best))
	}
	dots, err := indexDots(best, spacingMM)
	if err != nil {
		return GridResult{}, err
	}
	g, err := fitGrid(dots, spacingMM)
	if err != nil {
		return GridResult{}, err
	}
	g.DarkDots = dark
	return g, nil
}

// otsu returns Otsu's threshold (N. Otsu, "A threshold selection method
// from gray-level histograms", IEEE Trans. SMC 9(1), 1979) of the pixels
// with data, from a 256-bin histogram.
func otsu(f *recon.Frame) (float64, bool) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for i, v := range f.Pix {
		if f.Covered[i] && !math.IsNaN(float64(v)) {
			lo, hi = math.Min(lo, float64(v)), math.Max(hi, float64(v))
		}
	}
	if !(hi > lo) {
		return 0, false
	}
	const bins = 256
	var hist [bins]float64
	var total float64
	for i, v := range f.Pix {
		if f.Covered[i] && !math.IsNaN(float64(v)) {
			k := min(int((float64(v)-lo)/(hi-lo)*bins), bins-1)
			hist[k]++
			total++
		}
	}
	var sumAll float64
	for k, c := range hist {
		sumAll += float64(k) * c
	}
	var w0, sum0, bestVar float64
	bestK := 0
	for k := 0; k < bins-1; k++ {
		w0 += hist[k]
		sum0 += float64(k) * hist[k]
		w1 := total - w0
		if w0 == 0 || w1 == 0 {
			continue
		}
		m0, m1 := sum0/w0, (sumAll-sum0)/w1
		if v := w0 * w1 * (m0 - m1) * (m0 - m1); v > bestVar {
			bestVar, bestK = v, k
		}
	}
	return lo + (hi-lo)*float64(bestK+1)/bins, true
}

// blobs finds the 8-connected components on the dot side of thr with at
// least 3 and at most maxPixels pixels, not touching the border or a pixel
// without data, and returns their centroids weighted by the distance of
// each pixel's value from thr.
func blobs(f *recon.Frame, thr float64, dark bool, maxPixels float64) []Dot {
	in := func(col, row int) bool {
		v, ok := f.At(col, row)
		if !ok {
			return false
		}
		return (float64(v) < thr) == dark
	}
	seen := make([]bool, len(f.Pix))
	var out []Dot
	var stack [][2]int
	for start := range f.Pix {
		if seen[start] || !in(start%f.Width, start/f.Width) {
			continue
		}
		seen[start] = true
		stack = append(stack[:0], [2]int{start % f.Width, start / f.Width})
		var sw, sx, sy float64
		n := 0
		whole := true
		for len(stack) > 0 {
			p := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			v, _ := f.At(p[0], p[1])
			w := math.Abs(float64(v) - thr)
			sw += w
			sx += w * xOf(f, float64(p[0]))
			sy += w * yOf(f, float64(p[1]))
			n++
			for dr := -1; dr <= 1; dr++ {
				for dc := -1; dc <= 1; dc++ {
					c, r := p[0]+dc, p[1]+dr
					if c < 0 || r < 0 || c >= f.Width || r >= f.Height {
						whole = false
						continue
					}
					if _, ok := f.At(c, r); !ok {
						whole = false
						continue
					}
					i := r*f.Width + c
					if !seen[i] && in(c, r) {
						seen[i] = true
						stack = append(stack, [2]int{c, r})
					}
				}
			}
		}
		if whole && n >= 3 && float64(n) <= maxPixels && sw > 0 {
			out = append(out, Dot{XMM: sx / sw, YMM: sy / sw, Pixels: n})
		}
	}
	return out
}

// indexDots gives every dot its grid place. The two lattice vectors are
// the means of the neighbour vectors near the nearest-neighbour distance,
// sorted by whether they run nearer x or y; indices are the rounded
// coordinates of each dot in that lattice from the dot nearest the middle.
// Dots that sit far from a lattice point, or share one, are left out.
func indexDots(dots []Dot, spacingMM float64) ([]Dot, error) {
	nearest := make([]float64, len(dots))
	for i := range dots {
		nearest[i] = math.Inf(1)
		for j := range dots {
			if i != j {
				nearest[i] = math.Min(nearest[i], math.Hypot(dots[j].XMM-dots[i].XMM, dots[j].YMM-dots[i].YMM))
			}
		}
	}
	d0 := median(nearest)
	var ax, ay, bx, by float64
	var na, nb int
	for i := range dots {
		for j := range dots {
			dx, dy := dots[j].XMM-dots[i].XMM, dots[j].YMM-dots[i].YMM
			if d := math.Hypot(dx, dy); i == j || d < 0.75*d0 || d > 1.25*d0 {
				continue
			}
			if math.Abs(dx) >= math.Abs(dy) {
				if dx < 0 {
					dx, dy = -dx, -dy
				}
				ax, ay, na = ax+dx, ay+dy, na+1
			} else {
				if dy < 0 {
					dx, dy = -dx, -dy
				}
				bx, by, nb = bx+dx, by+dy, nb+1
			}
		}
	}
	if na == 0 || nb == 0 {
		return nil, fmt.Errorf("the %d dots found do not form a grid in both directions", len(dots))
	}
	ax, ay, bx, by = ax/float64(na), ay/float64(na), bx/float64(nb), by/float64(nb)
	if r := math.Hypot(ax, ay) / spacingMM; r < 0.5 || r > 2 {
		return nil, fmt.Errorf("the dots found are %.3g mm apart, far from the %g mm spacing given: check --dots", math.Hypot(ax, ay), spacingMM)
	}
	var cx, cy float64
	for _, d := range dots {
		cx += d.XMM
		cy += d.YMM
	}
	cx /= float64(len(dots))
	cy /= float64(len(dots))
	ref := 0
	for i, d := range dots {
		if math.Hypot(d.XMM-cx, d.YMM-cy) < math.Hypot(dots[ref].XMM-cx, dots[ref].YMM-cy) {
			ref = i
		}
	}
	det := ax*by - ay*bx
	taken := map[[2]int]int{}
	var out []Dot
	for _, d := range dots {
		px, py := d.XMM-dots[ref].XMM, d.YMM-dots[ref].YMM
		fi, fj := (px*by-py*bx)/det, (ax*py-ay*px)/det
		i, j := int(math.Round(fi)), int(math.Round(fj))
		if math.Abs(fi-float64(i)) > 0.3 || math.Abs(fj-float64(j)) > 0.3 {
			continue
		}
		d.I, d.J = i, j
		taken[[2]int{i, j}]++
		out = append(out, d)
	}
	out = slices.DeleteFunc(out, func(d Dot) bool { return taken[[2]int{d.I, d.J}] > 1 })
	if len(out) < 4 {
		return nil, fmt.Errorf("only %d dots sit on a regular grid: a fit needs at least 4", len(out))
	}
	return out, nil
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	return s[len(s)/2]
}

// fitGrid fits measured = M·(s·i, s·j) + t by linear least squares, each
// coordinate its own three-parameter problem on the design matrix
// [s·i, s·j, 1], solved through the normal equations.
func fitGrid(dots []Dot, s float64) (GridResult, error) {
	var ata [3][3]float64
	var atx, aty [3]float64
	for _, d := range dots {
		row := [3]float64{s * float64(d.I), s * float64(d.J), 1}
		for a := 0; a < 3; a++ {
			for b := 0; b < 3; b++ {
				ata[a][b] += row[a] * row[b]
			}
			atx[a] += row[a] * d.XMM
			aty[a] += row[a] * d.YMM
		}
	}
	px, okx := solve3(ata, atx)
	py, oky := solve3(ata, aty)
	if !okx || !oky {
		return GridResult{}, fmt.Errorf("the %d dots found lie on one line: a grid fit needs dots in two directions", len(dots))
	}
	g := GridResult{SpacingMM: s, Found: len(dots),
		M: [2][2]float64{{px[0], px[1]}, {py[0], py[1]}}, T: [2]float64{px[2], py[2]}}
	g.ScaleX = math.Hypot(g.M[0][0], g.M[1][0])
	g.ScaleY = math.Hypot(g.M[0][1], g.M[1][1])
	g.RotationDeg = math.Atan2(g.M[1][0], g.M[0][0]) * 180 / math.Pi
	cosAxes := (g.M[0][0]*g.M[0][1] + g.M[1][0]*g.M[1][1]) / (g.ScaleX * g.ScaleY)
	g.ShearDeg = 90 - math.Acos(max(-1, min(1, cosAxes)))*180/math.Pi
	var ss float64
	for k := range dots {
		d := &dots[k]
		gx, gy := s*float64(d.I), s*float64(d.J)
		ex := d.XMM - (g.M[0][0]*gx + g.M[0][1]*gy + g.T[0])
		ey := d.YMM - (g.M[1][0]*gx + g.M[1][1]*gy + g.T[1])
		d.ResidualMM = math.Hypot(ex, ey)
		ss += ex*ex + ey*ey
		if d.ResidualMM >= g.MaxMM {
			g.MaxMM, g.Worst = d.ResidualMM, *d
		}
	}
	g.RMSMM = math.Sqrt(ss / float64(len(dots)))
	g.Dots = dots
	return g, nil
}

// solve3 solves a 3×3 system by Gaussian elimination with partial
// pivoting; ok is false when it is singular.
func solve3(a [3][3]float64, b [3]float64) ([3]float64, bool) {
	scale := 0.0
	for i := range a {
		for j := range a[i] {
			scale = math.Max(scale, math.Abs(a[i][j]))
		}
	}
	for c := 0; c < 3; c++ {
		p := c
		for r := c + 1; r < 3; r++ {
			if math.Abs(a[r][c]) > math.Abs(a[p][c]) {
				p = r
			}
		}
		if math.Abs(a[p][c]) <= 1e-12*scale {
			return [3]float64{}, false
		}
		a[c], a[p] = a[p], a[c]
		b[c], b[p] = b[p], b[c]
		for r := c + 1; r < 3; r++ {
			k := a[r][c] / a[c][c]
			for j := c; j < 3; j++ {
				a[r][j] -= k * a[c][j]
			}
			b[r] -= k * b[c]
		}
	}
	var x [3]float64
	for r := 2; r >= 0; r-- {
		v := b[r]
		for j := r + 1; j < 3; j++ {
			v -= a[r][j] * x[j]
		}
		x[r] = v / a[r][r]
	}
	return x, true
}
