package measure

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat"

	"spotloom/recon"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// These tests measure frames the engine builds from the simulator's
// captures and compare with what the simulator was told: the spot size,
// the edge angles and the dot centres (sampledata.Truth).

func simulateFrame(t *testing.T, rig sampledata.Rig, scene string, noiseless bool, edit func(r *recipe.Recipe)) (*recon.Frame, *sampledata.Truth) {
	t.Helper()
	ctx := context.Background()
	rec, truth, err := sampledata.Simulate(ctx, rig, scene, sampledata.SimOptions{Seed: 11, Noiseless: noiseless})
	if err != nil {
		t.Fatal(err)
	}
	r := rig.Recipe()
	r.Rows.Strokes = "merge"
	if edit != nil {
		edit(&r)
	}
	res, err := recon.NewSession(rec).Build(ctx, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	return res.Frames[0], truth
}

func TestEdgeCardAgainstSpotSize(t *testing.T) {
	// The detector's afterglow and amplifier low-pass are turned off (they
	// blur along the sweep by an amount that changes across the field),
	// and so are the wheel's aperture errors (lines of different
	// apertures would sit a little apart along x): this test is about
	// the spot.
	rig := sampledata.DemoRig()
	rig.Detector.AfterglowS = 0
	rig.Detector.LowPassCornerHz = 0
	rig.Wheel.ApertureErrorsDeg = make([]float64, rig.Wheel.ApertureCount)
	f, truth := simulateFrame(t, rig, "edge-card", true, nil)
	sigma := rig.SpotSigmaMM()
	p := f.PitchXMM
	// The frame's response is the Gaussian spot's, exp(−2π²σ²f²), times
	// the engine's bilinear splat, a tent of one pitch each side whose
	// transform is sinc²(p·f) (Goodman, "Introduction to Fourier Optics",
	// Table 2.1, closed forms). The sweep's sample spacing is far below a
	// pitch and left out.
	model := func(fr float64) float64 {
		return math.Exp(-2*math.Pi*math.Pi*sigma*sigma*fr*fr) * sinc(p*fr) * sinc(p*fr)
	}
	want50 := solveLevel(model, 0.5, 1/p)
	checked := 0
	for _, e := range truth.Features {
		if e.Kind != "edge" {
			continue
		}
		r := Rect{e.XMM - 20, e.YMM - 20, e.XMM + 20, e.YMM + 20}
		res, err := Edge(f, r)
		if err != nil {
			t.Logf("%s: %v", e.Name, err)
			continue
		}
		checked++
		// The truth's edge direction, as drawn by the scene.
		want := math.Mod(e.AngleDeg+180, 180)
		if math.Abs(res.AngleDeg-want) > 0.1 {
			t.Errorf("%s: angle %.3f°, truth %.3f°", e.Name, res.AngleDeg, want)
		}
		if math.Abs(res.MTF50LPMM-want50)/want50 > 0.04 {
			t.Errorf("%s (%v): MTF50 %.4f lp/mm, spot %.2f mm FWHM and splat give %.4f", e.Name, res.Orientation, res.MTF50LPMM, rig.SpotFWHMMM, want50)
		}
		t.Logf("%s: %v, angle %.3f° (truth %.3f°), MTF50 %.4f lp/mm (closed form %.4f), MTF10 %.4f", e.Name, res.Orientation, res.AngleDeg, want, res.MTF50LPMM, want50, res.MTF10LPMM)
	}
	if checked < 3 {
		t.Errorf("only %d of the card's edges measured", checked)
	}
}

func TestDotGridAgainstTruth(t *testing.T) {
	// The position sensor is made linear, since a two-point calibration
	// cannot know a bow; the recipe's distance is 3 % long and its
	// calibration 5 % short, so the frame is 3 % wide and 5 % short, and
	// the correction must bring back the rig's true numbers.
	rig := sampledata.DemoRig()
	rig.Position.NonlinearityPct = 0
	var trueCal [][2]float64
	f, truth := simulateFrame(t, rig, "dot-grid", false, func(r *recipe.Recipe) {
		trueCal = append(trueCal, r.Rows.Calibration...)
		r.Sweep.DistanceMM *= 1.03
		for i := range r.Rows.Calibration {
			r.Rows.Calibration[i][1] *= 0.95
		}
	})
	g, err := Grid(f, 25)
	if err != nil {
		t.Fatal(err)
	}
	// Truth: every dot that lies wholly inside the scanned area.
	if g.Found < len(truth.Dots)*8/10 {
		t.Errorf("%d dots found, the truth holds %d", g.Found, len(truth.Dots))
	}
	if math.Abs(g.ScaleX-1.03) > 0.005 || math.Abs(g.ScaleY-0.95) > 0.005 {
		t.Errorf("scale %.5f × %.5f, the recipe makes 1.03 × 0.95", g.ScaleX, g.ScaleY)
	}
	if math.Abs(g.RotationDeg) > 0.2 || math.Abs(g.ShearDeg) > 0.2 {
		t.Errorf("rotation %.3f°, shear %.3f°: the simulated grid is square to the scan", g.RotationDeg, g.ShearDeg)
	}
	if g.RMSMM > 0.6 {
		t.Errorf("residual RMS %.3f mm", g.RMSMM)
	}
	c, err := GridCorrection(f.Recipe, g)
	if err != nil {
		t.Fatal(err)
	}
	if e := math.Abs(c.Recipe.Sweep.DistanceMM-rig.DistanceMM) / rig.DistanceMM; e > 0.005 {
		t.Errorf("corrected distance %.2f mm, the rig's %.2f mm", c.Recipe.Sweep.DistanceMM, rig.DistanceMM)
	}
	for i, p := range c.Recipe.Rows.Calibration {
		if math.Abs(p[1]-trueCal[i][1]) > 0.005*math.Abs(trueCal[len(trueCal)-1][1]-trueCal[0][1]) {
			t.Errorf("corrected calibration point %d %v, the rig's %v", i, p, trueCal[i])
		}
	}
	t.Logf("%d dots (truth %d): scale %.5f × %.5f, rotation %.3f°, shear %.3f°, RMS %.3f mm, worst %.3f mm; %q",
		g.Found, len(truth.Dots), g.ScaleX, g.ScaleY, g.RotationDeg, g.ShearDeg, g.RMSMM, g.MaxMM, c.Steps)
}

func TestUniformSheetNoise(t *testing.T) {
	// The simulator's uniform sheet carries photon noise only. Parseval's
	// theorem (closed form) makes the spectrum's integral the variance of
	// the region about its trend; gonum's stat.Variance of the ROIs'
	// pixels gives that variance independently. The engine's bilinear
	// splat averages neighbouring samples, so the noise is not white: the
	// spectrum near Nyquist lies below the low-frequency level.
	rig := sampledata.DemoRig()
	f, truth := simulateFrame(t, rig, "sheet", false, nil)
	cy := (truth.YRangeMM[0] + truth.YRangeMM[1]) / 2
	r := Rect{-100, cy - 100, 100, cy + 100}
	res, err := NPS(f, r)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := box(f, r)
	var vals []float64
	for row := b.r0; row <= b.r1; row++ {
		for col := b.c0; col <= b.c1; col++ {
			v, _ := f.At(col, row)
			vals = append(vals, float64(v))
		}
	}
	detrend(vals, b.width(), b.height())
	want := stat.Variance(vals, nil)
	if math.Abs(res.PowerSum-want)/want > 0.05 {
		t.Errorf("∫NPS = %.5g, the detrended variance (gonum) %.5g", res.PowerSum, want)
	}
	low := mean(res.Radial[1:4])
	high := mean(res.Radial[len(res.Radial)-4:])
	if !(high < low) {
		t.Errorf("NPS near Nyquist %.4g, at low frequency %.4g: gridded noise should fall", high, low)
	}
	t.Logf("%d ROIs of %d px: ∫NPS %.5g, variance %.5g; NPS low %.4g, near Nyquist %.4g mm²", res.ROIs, res.ROISize, res.PowerSum, want, low, high)
}
