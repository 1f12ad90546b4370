package sampledata

import (
	"fmt"
	"math"
	"runtime"
	"sort"
	"strings"
	"sync"
)

// Shape is one analytic piece of a scene: a region given by a signed
// distance (negative inside, in mm), a scatter yield and a depth.
type Shape struct {
	Name     string
	Material string
	Yield    float64 // scatter yield of the material: 0 = none, 1 = full scatter
	// DepthMM is how much farther from the source than the target plane the
	// shape lies; its brightness scales by (D/(D+depth))² (inverse square).
	DepthMM float64
	// Distance is the signed distance from (x,y) to the shape's boundary in
	// scene millimetres, negative inside.
	Distance func(x, y float64) float64
	// MinX, MinY, MaxX, MaxY bound the shape in scene millimetres.
	MinX, MinY, MaxX, MaxY float64
}

// SceneModel is a scene built from analytic shapes, painted in order (a
// later shape covers an earlier one) over a background yield. Scene
// coordinates are millimetres on the target plane with (0,0) at the scene's
// centre, x along the sweep and y along the cross-scan motion. The simulator
// places the centre on the field axis at the middle of the head's travel.
type SceneModel struct {
	Name            string
	Description     string
	BackgroundYield float64
	Shapes          []Shape
	// Dots are the centres of the dot-grid's dots (scene mm), DotDiameterMM
	// their size; empty for other scenes.
	Dots          [][2]float64
	DotDiameterMM float64
	// Features are the scene's measurable details (edges, bar groups).
	Features []Feature
}

// Feature is a measurable detail of a scene, reported in the truth.
type Feature struct {
	Kind string `json:"kind"` // "edge" or "bars"
	Name string `json:"name"`
	// Edge: a point on the edge and the edge direction, degrees from +x
	// counter-clockwise. Bars: the centre of the group.
	XMM      float64 `json:"x_mm"`
	YMM      float64 `json:"y_mm"`
	AngleDeg float64 `json:"angle_deg"`
	// Bars: line pairs per centimetre, bar width and the group's size.
	LinePairsPerCM float64 `json:"line_pairs_per_cm,omitempty"`
	BarWidthMM     float64 `json:"bar_width_mm,omitempty"`
	WidthMM        float64 `json:"width_mm,omitempty"`
	HeightMM       float64 `json:"height_mm,omitempty"`
}

// SceneNames lists the built-in scenes.
func SceneNames() []string { return []string{"parcel", "dot-grid", "edge-card", "bars", "sheet"} }

// Scene returns a built-in scene by name.
func Scene(name string) (SceneModel, error) {
	switch name {
	case "parcel":
		return parcelScene(), nil
	case "dot-grid":
		return dotGridScene(), nil
	case "edge-card":
		return edgeCardScene(), nil
	case "bars":
		return barsScene(), nil
	case "sheet":
		return uniformSheetScene(), nil
	}
	return SceneModel{}, fmt.Errorf("unknown scene %q; allowed: %s", name, strings.Join(SceneNames(), ", "))
}

// YieldAt is the scene's yield at one point (no area averaging), with the
// inverse-square factor of each shape's depth for a target plane at
// distanceMM.
func (s SceneModel) YieldAt(x, y, distanceMM float64) float64 {
	v := s.BackgroundYield
	for i := range s.Shapes {
		sh := &s.Shapes[i]
		if x < sh.MinX || x > sh.MaxX || y < sh.MinY || y > sh.MaxY {
			continue
		}
		if sh.Distance(x, y) <= 0 {
			v = sh.value(distanceMM)
		}
	}
	return v
}

func (sh *Shape) value(distanceMM float64) float64 {
	f := distanceMM / (distanceMM + sh.DepthMM)
	return sh.Yield * f * f
}

// Raster is a uniform grid of float32 values in millimetres. Pixel
// (col,row) is Pix[row*Width+col]; its centre lies at
// x = OriginXMM + col·PitchMM, y = OriginYMM − row·PitchMM (row 0 is the
// largest y, as in a recon.Frame).
type Raster struct {
	Width, Height int
	PitchMM       float64
	OriginXMM     float64
	OriginYMM     float64
	Pix           []float32
}

// NewRaster makes a zeroed raster at the pitch whose pixel centres start at
// (x0, y0) and reach at least (x1, y1) mm. It refuses a pitch that is not
// above zero, an empty area and rasters of more than 30 million pixels.
func NewRaster(x0, x1, y0, y1, pitchMM float64) (*Raster, error) {
	if !(pitchMM > 0) || math.IsInf(pitchMM, 0) {
		return nil, fmt.Errorf("raster pitch %g mm: expected above 0 mm", pitchMM)
	}
	if !(x1 >= x0) || !(y1 >= y0) {
		return nil, fmt.Errorf("raster area x %g to %g, y %g to %g mm is empty", x0, x1, y0, y1)
	}
	wf := math.Ceil((x1-x0)/pitchMM) + 1
	hf := math.Ceil((y1-y0)/pitchMM) + 1
	if wf*hf > maxRasterPixel {
		return nil, fmt.Errorf("raster of %.0f × %.0f pixels at %g mm is larger than %d pixels; use a coarser pitch", wf, hf, pitchMM, maxRasterPixel)
	}
	w, h := int(wf), int(hf)
	return &Raster{
		Width: w, Height: h, PitchMM: pitchMM,
		OriginXMM: x0, OriginYMM: y0 + float64(h-1)*pitchMM,
		Pix: make([]float32, w*h),
	}, nil
}

// Render paints the scene into r, whose coordinates are scene coordinates
// shifted by (offsetXMM, offsetYMM) (raster x = scene x + offsetXMM). Each
// pixel holds the area-averaged yield: where a shape's boundary passes
// through a pixel, the shape covers it by the fraction Shape.coverage
// finds. Rows are painted in parallel.
func (s SceneModel) Render(r *Raster, offsetXMM, offsetYMM, distanceMM float64) {
	bg := float32(s.BackgroundYield)
	parallelRows(r.Height, func(row0, row1 int) {
		for i := row0 * r.Width; i < row1*r.Width; i++ {
			r.Pix[i] = bg
		}
		yTop := r.OriginYMM - float64(row0)*r.PitchMM - offsetYMM
		yBottom := r.OriginYMM - float64(row1-1)*r.PitchMM - offsetYMM
		for i := range s.Shapes {
			sh := &s.Shapes[i]
			margin := r.PitchMM
			if sh.MaxY+margin < yBottom || sh.MinY-margin > yTop {
				continue
			}
			v := float32(sh.value(distanceMM))
			c0 := int(math.Floor((sh.MinX - margin + offsetXMM - r.OriginXMM) / r.PitchMM))
			c1 := int(math.Ceil((sh.MaxX + margin + offsetXMM - r.OriginXMM) / r.PitchMM))
			c0, c1 = max(c0, 0), min(c1, r.Width-1)
			ra0 := int(math.Floor((r.OriginYMM - (sh.MaxY + margin + offsetYMM)) / r.PitchMM))
			ra1 := int(math.Ceil((r.OriginYMM - (sh.MinY - margin + offsetYMM)) / r.PitchMM))
			ra0, ra1 = max(ra0, row0), min(ra1, row1-1)
			for row := ra0; row <= ra1; row++ {
				y := r.OriginYMM - float64(row)*r.PitchMM - offsetYMM
				line := r.Pix[row*r.Width : (row+1)*r.Width]
				for col := c0; col <= c1; col++ {
					x := r.OriginXMM + float64(col)*r.PitchMM - offsetXMM
					d := sh.Distance(x, y)
					if d >= edgeBand*r.PitchMM {
						continue
					}
					if d <= -edgeBand*r.PitchMM {
						line[col] = v
						continue
					}
					cov := sh.coverage(x, y, r.PitchMM)
					if cov <= 0 {
						continue
					}
					line[col] = line[col]*float32(1-cov) + v*float32(cov)
				}
			}
		}
	})
}

// edgeBand is how near (in pixels) a shape's boundary must pass a pixel
// centre for the pixel to be split: beyond 0.75 pixel the boundary cannot
// cross the pixel (its half-diagonal is 0.707 pixel).
const edgeBand = 0.75

// coverage is the fraction of the pixel of size pitch centred at (x,y) that
// lies inside the shape: the pixel is split into 4 × 4 sub-pixels, each
// covered by clamp(0.5 − distance/sub-pitch, 0, 1) (exact for a straight
// boundary along a sub-pixel axis), so shapes thinner than a pixel keep
// their true area.
func (sh *Shape) coverage(x, y, pitch float64) float64 {
	const n = 4
	sub := pitch / n
	sum := 0.0
	for j := 0; j < n; j++ {
		sy := y + (float64(j)+0.5)*sub - pitch/2
		for i := 0; i < n; i++ {
			sx := x + (float64(i)+0.5)*sub - pitch/2
			sum += math.Min(math.Max(0.5-sh.Distance(sx, sy)/sub, 0), 1)
		}
	}
	return sum / (n * n)
}

// parallelRows splits [0,n) into bands and runs f on each band on all cores.
func parallelRows(n int, f func(row0, row1 int)) {
	workers := runtime.GOMAXPROCS(0)
	if workers > n {
		workers = n
	}
	if workers <= 1 {
		f(0, n)
		return
	}
	bands := workers * 4
	if bands > n {
		bands = n
	}
	var wg sync.WaitGroup
	next := make(chan int, bands)
	for b := 0; b < bands; b++ {
		next <- b
	}
	close(next)
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for b := range next {
				f(b*n/bands, (b+1)*n/bands)
			}
		}()
	}
	wg.Wait()
}

// gaussianKernel returns normalised taps of a sampled Gaussian of standard
// deviation sigmaPx pixels, out to 4σ.
func gaussianKernel(sigmaPx float64) []float32 {
	if sigmaPx <= 0 {
		return []float32{1}
	}
	radius := int(math.Ceil(4 * sigmaPx))
	taps := make([]float64, 2*radius+1)
	sum := 0.0
	for i := range taps {
		d := float64(i - radius)
		taps[i] = math.Exp(-d * d / (2 * sigmaPx * sigmaPx))
		sum += taps[i]
	}
	out := make([]float32, len(taps))
	for i, t := range taps {
		out[i] = float32(t / sum)
	}
	return out
}

// blur convolves the raster with a separable Gaussian (sigmaXMM along x,
// sigmaYMM along y), extending the border values outward.
func (r *Raster) blur(sigmaXMM, sigmaYMM float64) {
	kx := gaussianKernel(sigmaXMM / r.PitchMM)
	ky := gaussianKernel(sigmaYMM / r.PitchMM)
	w, h := r.Width, r.Height
	tmp := make([]float32, len(r.Pix))
	rx := len(kx) / 2
	parallelRows(h, func(row0, row1 int) {
		for row := row0; row < row1; row++ {
			src := r.Pix[row*w : (row+1)*w]
			dst := tmp[row*w : (row+1)*w]
			for col := 0; col < w; col++ {
				var acc float32
				for k, t := range kx {
					c := min(max(col+k-rx, 0), w-1)
					acc += t * src[c]
				}
				dst[col] = acc
			}
		}
	})
	ry := len(ky) / 2
	parallelRows(h, func(row0, row1 int) {
		for row := row0; row < row1; row++ {
			dst := r.Pix[row*w : (row+1)*w]
			for col := range dst {
				dst[col] = 0
			}
			for k, t := range ky {
				rr := min(max(row+k-ry, 0), h-1)
				src := tmp[rr*w : (rr+1)*w]
				for col := range dst {
					dst[col] += t * src[col]
				}
			}
		}
	})
}

// Sample reads the raster at (x,y) mm by bilinear interpolation between
// the four nearest pixel centres, clamping to the border.
func (r *Raster) Sample(x, y float64) float64 { return r.bilinear(x, y) }

func (r *Raster) bilinear(x, y float64) float64 {
	i00, i01, i10, i11, ax, ay := r.corners(x, y)
	p := r.Pix
	top := float64(p[i00]) + ax*float64(p[i01]-p[i00])
	bottom := float64(p[i10]) + ax*float64(p[i11]-p[i10])
	return top + ay*(bottom-top)
}

// corners returns the indices of the four pixels around (x,y) mm (top
// left, top right, bottom left, bottom right) and the fractions along x and
// down the rows, clamped to the raster.
func (r *Raster) corners(x, y float64) (i00, i01, i10, i11 int, ax, ay float64) {
	fc := (x - r.OriginXMM) / r.PitchMM
	fr := (r.OriginYMM - y) / r.PitchMM
	maxC, maxR := float64(r.Width-1), float64(r.Height-1)
	if fc < 0 {
		fc = 0
	} else if fc > maxC {
		fc = maxC
	}
	if fr < 0 {
		fr = 0
	} else if fr > maxR {
		fr = maxR
	}
	c0, r0 := int(fc), int(fr)
	c1, r1 := min(c0+1, r.Width-1), min(r0+1, r.Height-1)
	return r0*r.Width + c0, r0*r.Width + c1, r1*r.Width + c0, r1*r.Width + c1, fc - float64(c0), fr - float64(r0)
}

// Signed distances of the primitive shapes (negative inside).

func circleDistance(cx, cy, radius float64) func(x, y float64) float64 {
	return func(x, y float64) float64 { return math.Hypot(x-cx, y-cy) - radius }
}

func ringDistance(cx, cy, inner, outer float64) func(x, y float64) float64 {
	mid, half := (inner+outer)/2, (outer-inner)/2
	return func(x, y float64) float64 { return math.Abs(math.Hypot(x-cx, y-cy)-mid) - half }
}

// boxDistance is a w×h rectangle centred at (cx,cy), turned by angleDeg
// counter-clockwise, with corners rounded by cornerMM.
func boxDistance(cx, cy, w, h, angleDeg, cornerMM float64) func(x, y float64) float64 {
	sin, cos := math.Sincos(-angleDeg * math.Pi / 180)
	hw, hh := w/2-cornerMM, h/2-cornerMM
	return func(x, y float64) float64 {
		dx, dy := x-cx, y-cy
		u := math.Abs(dx*cos - dy*sin)
		v := math.Abs(dx*sin + dy*cos)
		qx, qy := u-hw, v-hh
		outside := math.Hypot(math.Max(qx, 0), math.Max(qy, 0))
		inside := math.Min(math.Max(qx, qy), 0)
		return outside + inside - cornerMM
	}
}

// capsuleDistance is a segment from (ax,ay) to (bx,by) thickened by radius.
func capsuleDistance(ax, ay, bx, by, radius float64) func(x, y float64) float64 {
	dx, dy := bx-ax, by-ay
	len2 := dx*dx + dy*dy
	return func(x, y float64) float64 {
		t := 0.0
		if len2 > 0 {
			t = math.Min(math.Max(((x-ax)*dx+(y-ay)*dy)/len2, 0), 1)
		}
		return math.Hypot(x-ax-t*dx, y-ay-t*dy) - radius
	}
}

// minus is region a without region b.
func minus(a, b func(x, y float64) float64) func(x, y float64) float64 {
	return func(x, y float64) float64 { return math.Max(a(x, y), -b(x, y)) }
}

// shape bundles a region with its material and its bounding box.
func shape(name, material string, yield, depthMM float64, dist func(x, y float64) float64, minX, minY, maxX, maxY float64) Shape {
	return Shape{Name: name, Material: material, Yield: yield, DepthMM: depthMM, Distance: dist,
		MinX: minX, MinY: minY, MaxX: maxX, MaxY: maxY}
}

// sortDots orders dot centres by row (y descending) then x, as they appear
// in an image.
func sortDots(d [][2]float64) {
	sort.Slice(d, func(i, j int) bool {
		if d[i][1] != d[j][1] {
			return d[i][1] > d[j][1]
		}
		return d[i][0] < d[j][0]
	})
}
