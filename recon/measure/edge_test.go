package measure

import (
	"errors"
	"math"
	"testing"
)

// gaussEdgeMTF is the closed-form MTF of a Gaussian-blurred edge sampled
// by square pixels: the Gaussian's transform exp(−2π²σ²f²) times the
// pixel aperture seen along the edge normal, a px·|cos θ| by py·|sin θ|
// pair of rectangles, |sinc(px·cos θ·f)·sinc(py·sin θ·f)| (θ the slant
// from the pixel axis; for θ → 0 this is the familiar |sinc(pitch·f)|).
// Goodman, "Introduction to Fourier Optics", 3rd ed., Table 2.1 (Gaussian
// and rectangle transform pairs).
func gaussEdgeMTF(f, sigma, pAcross, pAlong, slantDeg float64) float64 {
	s, c := math.Sincos(slantDeg * math.Pi / 180)
	return math.Exp(-2*math.Pi*math.Pi*sigma*sigma*f*f) *
		math.Abs(sinc(pAcross*math.Abs(c)*f)*sinc(pAlong*math.Abs(s)*f))
}

// solveLevel finds f where mtf(f) = level by bisection on [0, hi].
func solveLevel(mtf func(float64) float64, level, hi float64) float64 {
	lo := 0.0
	for i := 0; i < 60; i++ {
		mid := (lo + hi) / 2
		if mtf(mid) > level {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

func TestEdgeAgainstGaussianClosedForm(t *testing.T) {
	cases := []struct {
		name             string
		px, py           float64
		angleDeg         float64
		sigma            float64
		wantOrientation  EdgeOrientation
		pAcross, pAlong  float64
		slantFromAxisDeg float64
	}{
		{"near-vertical 5°", 1, 1, 95, 0.6, EdgeAlongY, 1, 1, 5},
		{"near-vertical −7°, 0.5 mm pitch", 0.5, 0.5, 83, 0.4, EdgeAlongY, 0.5, 0.5, 7},
		{"near-horizontal 5°, 0.5 × 1 mm pitch", 0.5, 1, 5, 1.0, EdgeAlongX, 1, 0.5, 5},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			const w, h = 48, 48
			f := edgeFrame(w, h, c.px, c.py, float64(w-1)*c.px/2, float64(h-1)*c.py/2, c.angleDeg, c.sigma, 0.1, 0.9)
			res, err := Edge(f, Rect{xOf(f, 2), yOf(f, 2), xOf(f, w-3), yOf(f, h-3)})
			if err != nil {
				t.Fatal(err)
			}
			if res.Orientation != c.wantOrientation {
				t.Errorf("orientation %v, want %v", res.Orientation, c.wantOrientation)
			}
			// The angle the edge was drawn at is the truth.
			if math.Abs(res.AngleDeg-c.angleDeg) > 0.05 {
				t.Errorf("angle %.3f°, drawn at %g°", res.AngleDeg, c.angleDeg)
			}
			if res.MTF[0] != 1 {
				t.Errorf("MTF(0) = %g, want 1 (ISO 12233:2017 Annex D normalises at zero)", res.MTF[0])
			}
			model := func(fr float64) float64 { return gaussEdgeMTF(fr, c.sigma, c.pAcross, c.pAlong, c.slantFromAxisDeg) }
			nyquist := 0.5 / c.pAcross
			worst := 0.0
			for i, fr := range res.FrequencyLPMM {
				if fr > nyquist {
					break
				}
				// Binning at a quarter pitch (ISO 12233:2017 Annex D)
				// averages the edge over a bin, lowering the response by
				// up to sinc(f·p/4) (2.6 % at Nyquist), which the standard
				// leaves in; hence 0.015 rather than rounding error.
				if d := math.Abs(res.MTF[i] - model(fr)); d > worst {
					worst = d
				}
			}
			if worst > 0.015 {
				t.Errorf("MTF differs from the closed form by up to %.4f below Nyquist, want ≤ 0.015", worst)
			}
			want50 := solveLevel(model, 0.5, 1/c.pAcross)
			if math.Abs(res.MTF50LPMM-want50)/want50 > 0.02 {
				t.Errorf("MTF50 %.4f lp/mm, closed form %.4f", res.MTF50LPMM, want50)
			}
			want10 := solveLevel(model, 0.1, 1/c.pAcross)
			if math.Abs(res.MTF10LPMM-want10)/want10 > 0.02 {
				t.Errorf("MTF10 %.4f lp/mm, closed form %.4f", res.MTF10LPMM, want10)
			}
			t.Logf("angle %.3f°, MTF50 %.4f (closed form %.4f), MTF10 %.4f (%.4f), worst difference %.4f",
				res.AngleDeg, res.MTF50LPMM, want50, res.MTF10LPMM, want10, worst)
		})
	}
}

func TestEdgeDarkToBrightEitherWay(t *testing.T) {
	// The response of an edge does not depend on which side is bright: the
	// MTF is the modulus of the LSF's transform (ISO 12233:2017 Annex D),
	// and swapping lo and hi only negates the LSF.
	a := edgeFrame(40, 40, 1, 1, 19.5, 19.5, 95, 0.7, 0.1, 0.9)
	b := edgeFrame(40, 40, 1, 1, 19.5, 19.5, 95, 0.7, 0.9, 0.1)
	r := Rect{2, 2, 37, 37}
	ra, err := Edge(a, r)
	if err != nil {
		t.Fatal(err)
	}
	rb, err := Edge(b, r)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(ra.MTF50LPMM-rb.MTF50LPMM) > 1e-6 || math.Abs(ra.AngleDeg-rb.AngleDeg) > 1e-6 {
		t.Errorf("bright left MTF50 %.6f at %.4f°, bright right %.6f at %.4f°", ra.MTF50LPMM, ra.AngleDeg, rb.MTF50LPMM, rb.AngleDeg)
	}
}

func TestEdgeRefusals(t *testing.T) {
	// An edge exactly on the pixel axis cannot be oversampled (ISO
	// 12233:2017 asks for a slanted edge); a rectangle off the frame and
	// one with no data are refused too.
	straight := edgeFrame(40, 40, 1, 1, 19.3, 19.5, 90, 0.7, 0.1, 0.9)
	if _, err := Edge(straight, Rect{2, 2, 37, 37}); err == nil {
		t.Error("an edge on the pixel axis was measured")
	}
	slanted := edgeFrame(40, 40, 1, 1, 19.5, 19.5, 95, 0.7, 0.1, 0.9)
	if _, err := Edge(slanted, Rect{100, 100, 120, 120}); err == nil {
		t.Error("a rectangle outside the frame was measured")
	}
	for i := range slanted.Covered {
		slanted.Covered[i] = false
	}
	if _, err := Edge(slanted, Rect{2, 2, 37, 37}); !errors.Is(err, ErrNoData) {
		t.Errorf("no data: %v, want ErrNoData", err)
	}
}
