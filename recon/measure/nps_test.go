package measure

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"spotloom/recon"
)

func noiseFrame(w, h int, px, py, sigma float64, seed uint64) *recon.Frame {
	f := blankFrame(w, h, px, py, 5, 100)
	rng := rand.New(rand.NewPCG(seed, 7))
	for i := range f.Pix {
		f.Pix[i] = float32(50 + sigma*rng.NormFloat64())
	}
	return f
}

func TestNPSOfWhiteNoise(t *testing.T) {
	// White noise of variance σ² has the flat spectrum σ²·px·py (the DFT
	// of uncorrelated samples, normalised as IEC 62220-1-1:2015 §7.2.4;
	// Parseval's theorem). A strong quadratic trend added to the frame
	// must be removed by the detrending of §7.2.3.
	const sigma, px, py = 2.0, 0.5, 0.8
	want := sigma * sigma * px * py
	for _, trend := range []bool{false, true} {
		f := noiseFrame(256, 256, px, py, sigma, 3)
		if trend {
			for row := 0; row < f.Height; row++ {
				for col := 0; col < f.Width; col++ {
					x, y := float64(col)/256, float64(row)/256
					f.Pix[row*f.Width+col] += float32(40*x + 25*y*y - 30*x*y)
				}
			}
		}
		res, err := NPS(f, Rect{xOf(f, 0), yOf(f, 0), xOf(f, 255), yOf(f, 255)})
		if err != nil {
			t.Fatal(err)
		}
		if res.ROISize != 128 || res.ROIs != 9 {
			t.Errorf("%d ROIs of %d, want 9 of 128 (half-overlapping, §7.2.3)", res.ROIs, res.ROISize)
		}
		// Parseval: the spectrum's integral is the variance, σ².
		if math.Abs(res.PowerSum-sigma*sigma)/(sigma*sigma) > 0.03 {
			t.Errorf("trend %v: ∫NPS %.4f, σ² %.4f", trend, res.PowerSum, sigma*sigma)
		}
		all := mean(res.Radial)
		if math.Abs(all-want)/want > 0.03 {
			t.Errorf("trend %v: mean radial NPS %.5f mm², want σ²·px·py = %.5f", trend, all, want)
		}
		// One noise frame gives each ring a scatter of about
		// 1/√(bins·ROIs): groups of eight rings from the second on must
		// each lie within 10 % of flat.
		for k := 1; k+8 <= len(res.Radial); k += 8 {
			if g := mean(res.Radial[k : k+8]); math.Abs(g-want)/want > 0.1 {
				t.Errorf("trend %v: NPS %.5f at %.3f … %.3f lp/mm, want %.5f", trend, g, res.FrequencyLPMM[k], res.FrequencyLPMM[k+7], want)
			}
		}
		if last := res.FrequencyLPMM[len(res.FrequencyLPMM)-1]; math.Abs(last-0.5/py) > 1/(128*py) {
			t.Errorf("radial average ends at %.4f lp/mm, the lower Nyquist frequency is %.4f", last, 0.5/py)
		}
		t.Logf("trend %v: mean %.5f (want %.5f), variance %.4f (σ² %.4f)", trend, all, want, res.Variance, sigma*sigma)
	}
}

func TestNPSAlongXOfFilteredNoise(t *testing.T) {
	// Averaging neighbours along x, v[c] = (n[c] + n[c+1])/2, multiplies
	// the spectrum by |H(u)|² = cos²(π·u·px) (closed form of the two-tap
	// filter's transform), so the cut along x falls from σ²·px·py/2 at 0
	// to 0 at Nyquist, and the cut along y stays flat at σ²·px·py/2.
	const sigma, px, py = 1.0, 1.0, 1.0
	raw := noiseFrame(257, 256, px, py, sigma, 9)
	f := blankFrame(256, 256, px, py, 5, 100)
	for row := 0; row < 256; row++ {
		for col := 0; col < 256; col++ {
			f.Pix[row*256+col] = (raw.Pix[row*257+col] + raw.Pix[row*257+col+1]) / 2
		}
	}
	res, err := NPS(f, Rect{xOf(f, 0), yOf(f, 0), xOf(f, 255), yOf(f, 255)})
	if err != nil {
		t.Fatal(err)
	}
	base := sigma * sigma * px * py / 2
	// Groups of eight frequencies, against the closed form's mean over
	// the same frequencies, within 10 % of the level at zero.
	for k := 1; k+8 <= len(res.FrequencyXLPMM); k += 8 {
		var want float64
		for _, u := range res.FrequencyXLPMM[k : k+8] {
			want += 2 * base * math.Pow(math.Cos(math.Pi*u*px), 2) / 8
		}
		if g := mean(res.AlongX[k : k+8]); math.Abs(g-want) > 0.1*2*base {
			t.Errorf("along x at %.3f … %.3f lp/mm: %.4f, want %.4f", res.FrequencyXLPMM[k], res.FrequencyXLPMM[k+7], g, want)
		}
	}
	meanY := mean(res.AlongY[1:])
	// Along y the cut averages lines near u = 0, where cos² ≈ 1 … 0.99.
	if math.Abs(meanY-2*base)/(2*base) > 0.05 {
		t.Errorf("along y mean %.4f, want %.4f", meanY, 2*base)
	}
}

func mean(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

func TestNPSRefusals(t *testing.T) {
	f := noiseFrame(64, 64, 1, 1, 1, 1)
	if _, err := NPS(f, Rect{5, 100, 20, 85}); err == nil {
		t.Error("a 16 × 16 region was measured")
	}
	f.Covered[40*64+40] = false
	if _, err := NPS(f, Rect{xOf(f, 0), yOf(f, 0), xOf(f, 63), yOf(f, 63)}); !errors.Is(err, ErrNoData) {
		t.Errorf("a region with a hole: %v, want ErrNoData", err)
	}
}
