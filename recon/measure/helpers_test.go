package measure

import (
	"math"

	"spotloom/recon"
)

// blankFrame is a w×h frame, every pixel with data, centre of column 0 at
// originX and of row 0 at originY.
func blankFrame(w, h int, px, py, originX, originY float64) *recon.Frame {
	f := &recon.Frame{Width: w, Height: h, Pix: make([]float32, w*h), Covered: make([]bool, w*h),
		PitchXMM: px, PitchYMM: py, OriginXMM: originX, OriginYMM: originY}
	for i := range f.Covered {
		f.Covered[i] = true
	}
	return f
}

// edgeFrame renders a straight edge through (xc, yc) running at angleDeg
// from the +x axis, blurred by a Gaussian of sigmaMM, from lo (on the left
// of the edge's direction) to hi, integrated over each pixel's area: the
// integral along the axis that crosses the edge most steeply is exact,
// ∫Φ(a·t + c) dt = [G(a·t + c)]/a with G(u) = u·Φ(u) + φ(u) (Φ, φ the
// standard normal distribution and density), and the other axis takes the
// mean of 64 midpoint samples.
func edgeFrame(w, h int, px, py, xc, yc, angleDeg, sigmaMM, lo, hi float64) *recon.Frame {
	f := blankFrame(w, h, px, py, 0, float64(h-1)*py)
	sin, cos := math.Sincos(angleDeg * math.Pi / 180)
	nx, ny := sin/sigmaMM, -cos/sigmaMM // normal over σ: u = n·(p − c)
	G := func(u float64) float64 { return u*phi(u) + math.Exp(-u*u/2)/math.Sqrt(2*math.Pi) }
	const sub = 64
	for row := 0; row < h; row++ {
		for col := 0; col < w; col++ {
			x, y := xOf(f, float64(col)), yOf(f, float64(row))
			var sum float64
			for k := 0; k < sub; k++ {
				t := (float64(k)+0.5)/sub - 0.5
				if math.Abs(nx) >= math.Abs(ny) {
					yy := y + t*py
					c := ny * (yy - yc)
					a, b := nx*(x-px/2-xc)+c, nx*(x+px/2-xc)+c
					sum += (G(b) - G(a)) / (b - a)
				} else {
					xx := x + t*px
					c := nx * (xx - xc)
					a, b := ny*(y-py/2-yc)+c, ny*(y+py/2-yc)+c
					sum += (G(b) - G(a)) / (b - a)
				}
			}
			f.Pix[row*w+col] = float32(lo + (hi-lo)*sum/sub)
		}
	}
	return f
}

// phi is the standard normal distribution function.
func phi(u float64) float64 { return 0.5 * math.Erfc(-u/math.Sqrt2) }
