package measure

import (
	"errors"
	"fmt"
	"math"

	"spotloom/recon"
)

// Rect is a rectangle in the frame's millimetres; the corners may be given
// in any order.
type Rect struct {
	X0 float64 `json:"x0_mm"`
	Y0 float64 `json:"y0_mm"`
	X1 float64 `json:"x1_mm"`
	Y1 float64 `json:"y1_mm"`
}

// Line is a straight line between two points in the frame's millimetres.
type Line struct {
	X0 float64 `json:"x0_mm"`
	Y0 float64 `json:"y0_mm"`
	X1 float64 `json:"x1_mm"`
	Y1 float64 `json:"y1_mm"`
}

func (r Rect) String() string {
	return fmt.Sprintf("%g,%g … %g,%g mm", r.X0, r.Y0, r.X1, r.Y1)
}

// ErrNoData is returned (wrapped) when a region holds no pixel with data.
var ErrNoData = errors.New("no pixel with data")

// pixelBox is a range of columns and rows, ends included.
type pixelBox struct{ c0, r0, c1, r1 int }

func (b pixelBox) width() int  { return b.c1 - b.c0 + 1 }
func (b pixelBox) height() int { return b.r1 - b.r0 + 1 }

// colOf and rowOf are the fractional pixel coordinates of a position.
func colOf(f *recon.Frame, x float64) float64 { return (x - f.OriginXMM) / f.PitchXMM }
func rowOf(f *recon.Frame, y float64) float64 { return (f.OriginYMM - y) / f.PitchYMM }

// xOf and yOf are the position of a pixel centre.
func xOf(f *recon.Frame, col float64) float64 { return f.OriginXMM + col*f.PitchXMM }
func yOf(f *recon.Frame, row float64) float64 { return f.OriginYMM - row*f.PitchYMM }

// box returns the pixels whose centres lie inside r, or an error when the
// rectangle does not meet the frame.
func box(f *recon.Frame, r Rect) (pixelBox, error) {
	for _, v := range []float64{r.X0, r.Y0, r.X1, r.Y1} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return pixelBox{}, fmt.Errorf("the rectangle %v is not made of numbers", r)
		}
	}
	ca, cb := colOf(f, r.X0), colOf(f, r.X1)
	ra, rb := rowOf(f, r.Y0), rowOf(f, r.Y1)
	b := pixelBox{
		c0: int(math.Ceil(math.Min(ca, cb) - 1e-9)), c1: int(math.Floor(math.Max(ca, cb) + 1e-9)),
		r0: int(math.Ceil(math.Min(ra, rb) - 1e-9)), r1: int(math.Floor(math.Max(ra, rb) + 1e-9)),
	}
	if b.c1 < 0 || b.r1 < 0 || b.c0 >= f.Width || b.r0 >= f.Height || b.c1 < b.c0 || b.r1 < b.r0 {
		return b, fmt.Errorf("the rectangle %v lies outside the frame (x %.5g … %.5g mm, y %.5g … %.5g mm)", r, xOf(f, 0), xOf(f, float64(f.Width-1)), yOf(f, float64(f.Height-1)), yOf(f, 0))
	}
	b.c0, b.r0 = max(b.c0, 0), max(b.r0, 0)
	b.c1, b.r1 = min(b.c1, f.Width-1), min(b.r1, f.Height-1)
	return b, nil
}

// RegionStats are the statistics of the pixels with data in a rectangle.
type RegionStats struct {
	Mean   float64 `json:"mean"`
	SD     float64 `json:"sd"`  // sample standard deviation (n − 1)
	SNR    float64 `json:"snr"` // Mean / SD (0 when SD is 0)
	Pixels int     `json:"pixels"`
}

// Region returns the statistics of the pixels with data whose centres lie
// in r.
func Region(f *recon.Frame, r Rect) (RegionStats, error) {
	b, err := box(f, r)
	if err != nil {
		return RegionStats{}, err
	}
	// Two passes (mean, then squared deviations) keep the SD exact for
	// values far from zero.
	var sum float64
	n := 0
	for row := b.r0; row <= b.r1; row++ {
		for col := b.c0; col <= b.c1; col++ {
			if v, ok := f.At(col, row); ok {
				sum += float64(v)
				n++
			}
		}
	}
	if n == 0 {
		return RegionStats{}, fmt.Errorf("the rectangle %v: %w", r, ErrNoData)
	}
	s := RegionStats{Mean: sum / float64(n), Pixels: n}
	if n > 1 {
		var ss float64
		for row := b.r0; row <= b.r1; row++ {
			for col := b.c0; col <= b.c1; col++ {
				if v, ok := f.At(col, row); ok {
					d := float64(v) - s.Mean
					ss += d * d
				}
			}
		}
		s.SD = math.Sqrt(ss / float64(n-1))
	}
	if s.SD > 0 {
		s.SNR = s.Mean / s.SD
	}
	return s, nil
}

// CNR is the contrast-to-noise ratio of two regions, |m₁ − m₂| divided by
// the root mean square of their standard deviations. It is +Inf when both
// regions are noiseless and differ.
func CNR(a, b RegionStats) float64 {
	noise := math.Sqrt((a.SD*a.SD + b.SD*b.SD) / 2)
	c := math.Abs(a.Mean - b.Mean)
	if noise == 0 {
		if c == 0 {
			return 0
		}
		return math.Inf(1)
	}
	return c / noise
}

// Distance is the length of l in mm.
func Distance(l Line) float64 { return math.Hypot(l.X1-l.X0, l.Y1-l.Y0) }

// ProfilePoint is one sample of a line profile.
type ProfilePoint struct {
	DistanceMM float64
	Value      float64
}

// Profile samples the frame along l every min(pitch) mm, each value the
// mean of bilinear samples across a band of bandMM centred on the line
// (one sample on the line when bandMM is at most a pitch). Samples whose
// interpolation would touch a pixel without data are left out.
func Profile(f *recon.Frame, l Line, bandMM float64) ([]ProfilePoint, error) {
	length := Distance(l)
	switch {
	case math.IsNaN(length) || math.IsInf(length, 0):
		return nil, fmt.Errorf("the line %g,%g → %g,%g is not made of numbers", l.X0, l.Y0, l.X1, l.Y1)
	case length == 0:
		return nil, fmt.Errorf("the line %g,%g → %g,%g has no length", l.X0, l.Y0, l.X1, l.Y1)
	case !(bandMM >= 0) || math.IsInf(bandMM, 0):
		return nil, fmt.Errorf("the band width %g mm must be zero or more", bandMM)
	}
	step := math.Min(f.PitchXMM, f.PitchYMM)
	ux, uy := (l.X1-l.X0)/length, (l.Y1-l.Y0)/length
	nx, ny := -uy, ux // normal
	across := 1
	if bandMM > step {
		across = int(math.Round(bandMM/step)) + 1
	}
	n := int(math.Floor(length/step+1e-9)) + 1
	var out []ProfilePoint
	for i := 0; i < n; i++ {
		d := float64(i) * step
		var sum float64
		got := 0
		for k := 0; k < across; k++ {
			off := 0.0
			if across > 1 {
				off = -bandMM/2 + bandMM*float64(k)/float64(across-1)
			}
			x, y := l.X0+ux*d+nx*off, l.Y0+uy*d+ny*off
			if v, ok := bilinear(f, colOf(f, x), rowOf(f, y)); ok {
				sum += v
				got++
			}
		}
		if got == across {
			out = append(out, ProfilePoint{DistanceMM: d, Value: sum / float64(got)})
		}
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("the line %g,%g → %g,%g: %w on it inside the frame", l.X0, l.Y0, l.X1, l.Y1, ErrNoData)
	}
	return out, nil
}

// bilinear interpolates the frame at fractional pixel coordinates; ok is
// false when any of the pixels it needs is outside or has no data.
func bilinear(f *recon.Frame, col, row float64) (float64, bool) {
	c0, r0 := int(math.Floor(col)), int(math.Floor(row))
	fc, fr := col-float64(c0), row-float64(r0)
	var v [4]float64
	for k, p := range [4][2]int{{c0, r0}, {c0 + 1, r0}, {c0, r0 + 1}, {c0 + 1, r0 + 1}} {
		w := [4]float64{(1 - fc) * (1 - fr), fc * (1 - fr), (1 - fc) * fr, fc * fr}[k]
		if w == 0 {
			continue
		}
		pv, ok := f.At(p[0], p[1])
		if !ok {
			return 0, false
		}
		v[k] = w * float64(pv)
	}
	return v[0] + v[1] + v[2] + v[3], true
}
