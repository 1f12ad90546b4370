package recon

import (
	"context"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// These tests check the engine against the simulator's ground truth
// (sampledata.Truth): true dot centres, true wheel speed, true delay and
// offsets, and the true scene raster. The truth itself is analytic: dot
// centres are the scene's closed-form grid, the wheel speed and delay are
// the rig's numbers, and the raster is the scene's shapes rendered without
// the scanner. The fit and the correlation are cross-checked with gonum's
// stat package, an independent library.

// handRig is the demo rig with a hand-driven head making three strokes
// (two reversals), a 0.5 % speed wobble and aperture errors of ±0.3°. The
// position sensor is linear here, since the recipe's two-point calibration
// cannot know a bow.
func handRig() sampledata.Rig {
	rig := sampledata.DemoRig()
	rig.DurationS = 9
	rig.Wheel.WobblePct = 0.5
	rig.Wheel.ApertureErrorsDeg = []float64{0, 0.3, -0.3, 0.2, -0.1, -0.25}
	rig.Motion.StartRestS = 0.5
	rig.Motion.StrokeCount = 3
	rig.Motion.StrokeS = 2.5
	rig.Motion.TravelMM = 160
	rig.Motion.TurnRestS = 0.2
	rig.Motion.PauseCount = 0
	rig.Position.NonlinearityPct = 0
	return rig
}

// truthDotFit measures the centroid of each true dot in the frame (the
// dots are holes, darker than the sheet: weights are how far a pixel lies
// below the midpoint between the darkest and brightest pixel, inside a
// window of one dot diameter around the true centre) and returns the RMS residual after
// removing the mean shift, and the x and y scale of measured against true.
func truthDotFit(t *testing.T, f *Frame, dots [][2]float64, diameter float64) (rms, scaleX, scaleY float64, n int) {
	t.Helper()
	lo, hi := math.Inf(1), math.Inf(-1)
	for i, v := range f.Pix {
		if f.Covered[i] {
			lo = math.Min(lo, float64(v))
			hi = math.Max(hi, float64(v))
		}
	}
	thr := (lo + hi) / 2
	var tx, ty, mx, my []float64
	for _, d := range dots {
		var sw, sx, sy float64
		complete := true
		for row := 0; row < f.Height; row++ {
			y := f.OriginYMM - float64(row)*f.PitchYMM
			if math.Abs(y-d[1]) > diameter {
				continue
			}
			for col := 0; col < f.Width; col++ {
				x := f.OriginXMM + float64(col)*f.PitchXMM
				if math.Abs(x-d[0]) > diameter {
					continue
				}
				v, ok := f.At(col, row)
				if !ok {
					complete = false
					continue
				}
				if w := thr - float64(v); w > 0 {
					sw += w
					sx += w * x
					sy += w * y
				}
			}
		}
		if complete && sw > 0 {
			tx, ty = append(tx, d[0]), append(ty, d[1])
			mx, my = append(mx, sx/sw), append(my, sy/sw)
		}
	}
	n = len(tx)
	if n < 5 {
		t.Fatalf("only %d dots measured", n)
	}
	var dx, dy float64
	for i := range tx {
		dx += mx[i] - tx[i]
		dy += my[i] - ty[i]
	}
	dx /= float64(n)
	dy /= float64(n)
	ss := 0.0
	for i := range tx {
		ex, ey := mx[i]-tx[i]-dx, my[i]-ty[i]-dy
		ss += ex*ex + ey*ey
	}
	scaleX, scaleY = lineSlope(tx, mx), lineSlope(ty, my)
	// The scale is the least-squares slope of measured against true
	// centres; gonum's stat.LinearRegression (an independent library)
	// must give the same slope.
	for _, c := range []struct {
		name     string
		tr, ms   []float64
		ourSlope float64
	}{{"x", tx, mx, scaleX}, {"y", ty, my, scaleY}} {
		if _, beta := stat.LinearRegression(c.tr, c.ms, nil, false); math.Abs(beta-c.ourSlope) > 1e-9 {
			t.Fatalf("%s scale %.12f, gonum stat.LinearRegression gives %.12f", c.name, c.ourSlope, beta)
		}
	}
	return math.Sqrt(ss / float64(n)), scaleX, scaleY, n
}

// handDotGrid is the dot grid scanned by the hand rig (seed 7), in a new
// session, with its truth.
func handDotGrid(t *testing.T) (sampledata.Rig, *Session, *sampledata.Truth) {
	t.Helper()
	rig := handRig()
	rec, truth, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	return rig, NewSession(rec), truth
}

// dotRMS is the RMS distance of the first frame's dot centres from the
// truth's after a translation fit (truthDotFit).
func dotRMS(t *testing.T, res *Result, truth *sampledata.Truth) float64 {
	t.Helper()
	rms, _, _, _ := truthDotFit(t, res.Frames[0], truth.Dots, truth.DotDiameterMM)
	return rms
}

func TestDotGridAgainstTruth(t *testing.T) {
	ctx := context.Background()
	rig, s, truth := handDotGrid(t)
	r := rig.Recipe()
	r.Rows.Strokes = "merge"

	// Offsets measured from the capture against the truth's (the truth
	// gives offset[0] = 0; ours have zero mean, so compare differences).
	off, err := EstimateApertureOffsets(ctx, s, r)
	if err != nil {
		t.Fatal(err)
	}
	tm := meanOf(truth.ApertureOffsetsDeg)
	for k := range off {
		want := truth.ApertureOffsetsDeg[k] - tm
		if math.Abs(off[k]-want) > 0.05 {
			t.Errorf("aperture %d offset %.3f°, truth %.3f° (mean removed)", k, off[k], want)
		}
	}
	r.Sweep.ApertureOffsetsDeg = off
	res, err := s.Build(ctx, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	rep := res.Report
	// Field start of aperture k = delay + offset[k], ours and the truth's.
	for k := range off {
		got := rep.DelayDeg + off[k]
		want := truth.DelayDeg + truth.ApertureOffsetsDeg[k]
		if math.Abs(got-want) > 0.3 {
			t.Errorf("aperture %d field starts %.3f° after its edge, truth %.3f°", k, got, want)
		}
	}
	if e := math.Abs(rep.RPMMean-truth.RevPerMinMean) / truth.RevPerMinMean; e > 0.002 {
		t.Errorf("rpm %.3f, truth %.3f (%.3f %%)", rep.RPMMean, truth.RevPerMinMean, 100*e)
	}
	if rep.Strokes != rig.Motion.StrokeCount {
		t.Errorf("%d strokes found, truth %d", rep.Strokes, rig.Motion.StrokeCount)
	}
	rms, sx, sy, n := truthDotFit(t, res.Frames[0], truth.Dots, truth.DotDiameterMM)
	t.Logf("%d dots: rms %.3f mm, scale x %.5f y %.5f; delay %.3f (truth %.3f); rpm %.3f (truth %.3f); warnings %q",
		n, rms, sx, sy, rep.DelayDeg, truth.DelayDeg, rep.RPMMean, truth.RevPerMinMean, rep.Warnings)
	if rms > 0.5 {
		t.Errorf("dot centres %.3f mm RMS from the truth after a translation fit, want ≤ 0.5 mm", rms)
	}
	if math.Abs(sx-1) > 0.005 || math.Abs(sy-1) > 0.005 {
		t.Errorf("scale x %.5f y %.5f, want 1 within 0.5 %%", sx, sy)
	}
}

func TestAutomaticDelayAgainstTruth(t *testing.T) {
	ctx := context.Background()
	rig := handRig()
	rig.DurationS = 4
	rec, truth, err := sampledata.Simulate(ctx, rig, "parcel", sampledata.SimOptions{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	s := NewSession(rec)
	r := rig.Recipe()
	// With the true offsets given, the delay is the truth's delay_deg.
	r.Sweep.ApertureOffsetsDeg = truth.ApertureOffsetsDeg
	got, err := s.Resolve(ctx, r)
	if err != nil {
		t.Fatal(err)
	}
	d := *got.Sweep.DelayDeg
	t.Logf("automatic delay %.3f°, truth %.3f°", d, truth.DelayDeg)
	if math.Abs(d-truth.DelayDeg) > 0.3 {
		t.Errorf("automatic delay %.3f°, truth %.3f°", d, truth.DelayDeg)
	}
}

func TestParcelCorrelation(t *testing.T) {
	rig := sampledata.DemoRig()
	c, _, _ := parcelCorrelation(t, rig)
	if c < 0.9 {
		t.Errorf("correlation with the truth raster %.3f, want ≥ 0.9", c)
	}
}

// An AC-coupled detector (a sound card, 5 Hz corner): the baseline from
// the beam-off intervals and the step-based delay keep the image.
func TestParcelACCoupled(t *testing.T) {
	rig := sampledata.DemoRig()
	rig.Detector.ACCouplingCornerHz = 5
	rig.Detector.OffsetV = 0
	c, res, truth := parcelCorrelation(t, rig)
	if c < 0.9 {
		t.Errorf("AC-coupled: correlation %.3f, want ≥ 0.9", c)
	}
	if d := res.Report.DelayDeg - truth.DelayDeg; math.Abs(d) > 0.3 {
		t.Errorf("AC-coupled: delay %.3f°, truth %.3f°", res.Report.DelayDeg, truth.DelayDeg)
	}
}

// parcelCorrelation builds the parcel scanned by rig with the rig's recipe
// and returns the Pearson correlation of the frame with the truth raster
// over covered pixels (the truth read at each frame pixel's centre,
// nearest pixel: both grids have a 1 mm pitch).
func parcelCorrelation(t *testing.T, rig sampledata.Rig) (float64, *Result, *sampledata.Truth) {
	t.Helper()
	return parcelCorrelationWith(t, rig, nil)
}

// parcelCorrelationWith is parcelCorrelation with the rig's recipe changed
// by edit first (when not nil).
func parcelCorrelationWith(t *testing.T, rig sampledata.Rig, edit func(*recipe.Recipe)) (float64, *Result, *sampledata.Truth) {
	t.Helper()
	ctx := context.Background()
	rec, truth, err := sampledata.Simulate(ctx, rig, "parcel", sampledata.SimOptions{Seed: sampledata.DemoSeed, TruthPitchMM: 1})
	if err != nil {
		t.Fatal(err)
	}
	r := rig.Recipe()
	if edit != nil {
		edit(&r)
	}
	res, err := NewSession(rec).Build(ctx, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	c := truthCorrelation(t, res.Frames[0], truth)
	t.Logf("delay %.3f° (truth %.3f° + offsets); warnings %q", res.Report.DelayDeg, truth.DelayDeg, res.Report.Warnings)
	return c, res, truth
}

// truthCorrelation is the Pearson correlation of a frame with the
// simulator's truth raster over the frame's covered pixels inside it (the
// truth read at each pixel's centre, nearest pixel: both grids have a 1 mm
// pitch), cross-checked with gonum's stat.Correlation.
func truthCorrelation(t *testing.T, f *Frame, truth *sampledata.Truth) float64 {
	t.Helper()
	img := truth.ImageRaster()
	// Pearson correlation over covered pixels inside the truth raster,
	// the truth read at each frame pixel's centre (nearest pixel: both
	// grids have a 1 mm pitch).
	var a, b []float64
	for row := 0; row < f.Height; row++ {
		y := f.OriginYMM - float64(row)*f.PitchYMM
		tr := int(math.Round((img.OriginYMM - y) / img.PitchMM))
		if tr < 0 || tr >= img.Height {
			continue
		}
		for col := 0; col < f.Width; col++ {
			x := f.OriginXMM + float64(col)*f.PitchXMM
			tc := int(math.Round((x - img.OriginXMM) / img.PitchMM))
			v, ok := f.At(col, row)
			if !ok || tc < 0 || tc >= img.Width {
				continue
			}
			a = append(a, float64(v))
			b = append(b, float64(img.Pix[tr*img.Width+tc]))
		}
	}
	c := pearson(a, b)
	// Cross-check the correlation with gonum's stat.Correlation (an
	// independent library).
	if g := stat.Correlation(a, b, nil); math.Abs(g-c) > 1e-9 {
		t.Fatalf("correlation %.12f, gonum stat.Correlation gives %.12f", c, g)
	}
	t.Logf("correlation %.4f over %d pixels", c, len(a))
	return c
}

// A negative-going detector (a photomultiplier anode pulling its output
// down): the automatic delay still finds the field start within 0.3° of
// the truth and warns that signal.invert is off; with invert on, the image
// correlates with the truth raster as well as a positive detector's does.
func TestParcelNegativeDetector(t *testing.T) {
	rig := sampledata.DemoRig()
	rig.Detector.GainVPerMCPS = -rig.Detector.GainVPerMCPS
	rig.Detector.OffsetV = -rig.Detector.OffsetV
	c, res, truth := parcelCorrelationWith(t, rig, nil)
	if d := res.Report.DelayDeg - truth.DelayDeg; math.Abs(d) > 0.3 {
		t.Errorf("negative detector: delay %.3f°, truth %.3f°", res.Report.DelayDeg, truth.DelayDeg)
	}
	if !slices.Contains(res.Report.Warnings, WarnNegativeDetector) {
		t.Errorf("no negative-detector warning: %q", res.Report.Warnings)
	}
	if c > -0.9 {
		t.Errorf("not inverted: correlation %.3f, want ≤ −0.9 (a negative image)", c)
	}
	c, res, _ = parcelCorrelationWith(t, rig, func(r *recipe.Recipe) { r.Signal.Invert = true })
	if c < 0.9 {
		t.Errorf("inverted: correlation %.3f, want ≥ 0.9", c)
	}
	if slices.Contains(res.Report.Warnings, WarnNegativeDetector) {
		t.Errorf("negative-detector warning with invert on")
	}
	// A positive detector is never called negative.
	_, res, _ = parcelCorrelation(t, sampledata.DemoRig())
	if slices.Contains(res.Report.Warnings, WarnNegativeDetector) {
		t.Errorf("positive detector called negative")
	}
}

// pearson is the sample correlation coefficient.
func pearson(a, b []float64) float64 {
	ma, mb := meanOf(a), meanOf(b)
	var sab, saa, sbb float64
	for i := range a {
		sab += (a[i] - ma) * (b[i] - mb)
		saa += (a[i] - ma) * (a[i] - ma)
		sbb += (b[i] - mb) * (b[i] - mb)
	}
	return sab / math.Sqrt(saa*sbb)
}

func TestRepairedPulsesAgainstTruth(t *testing.T) {
	ctx := context.Background()
	rig := sampledata.DemoRig()
	rig.DurationS = 5
	rec, truth, err := sampledata.Simulate(ctx, rig, "parcel", sampledata.SimOptions{Seed: 11})
	if err != nil {
		t.Fatal(err)
	}
	idx := rec.Channels[truth.Channels["index"]].Samples
	rate := rec.SampleRateHz
	edges := truth.IndexEdgesS
	low := idx[int(edges[2]*rate)-50]
	high := idx[int(edges[2]*rate)+20]
	// Delete 5 pulses (two of them neighbours) well inside the capture.
	for _, k := range []int{10, 40, 41, 90, 150} {
		a := int(edges[k]*rate) - 20
		for i := a; i < a+int(0.004*rate) && i < len(idx); i++ {
			idx[i] = low
		}
	}
	// Add 3 short spurious pulses between true ones.
	for _, k := range []int{20, 60, 120} {
		mid := int((edges[k] + edges[k+1]) / 2 * rate)
		for i := mid; i < mid+10; i++ {
			idx[i] = high
		}
	}
	res, err := NewSession(rec).Build(ctx, rig.Recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	rep := res.Report
	if rep.PulsesMissing != 5 || rep.LinesRepaired != 5 || rep.PulsesExtra != 3 {
		t.Errorf("missing %d, lines repaired %d, extra %d; want 5, 5, 3; warnings %q", rep.PulsesMissing, rep.LinesRepaired, rep.PulsesExtra, rep.Warnings)
	}
	if len(res.Lines) != len(truth.Lines) {
		t.Errorf("%d lines, truth %d", len(res.Lines), len(truth.Lines))
	}
	// Every line's edge where the truth has it (repaired ones within a
	// fraction of a degree of wheel rotation).
	for i := range min(len(res.Lines), len(truth.Lines)) {
		// 20 µs for a found edge (jitter 3 µs, ramp 20 µs); a filled-in
		// edge within the time of 0.3° of wheel rotation (rpm·6 °/s).
		tol := 20e-6
		if res.Lines[i].Repaired {
			tol = 0.3 / (rig.Wheel.RevPerMin * 6)
		}
		if d := math.Abs(res.Lines[i].EdgeS - truth.Lines[i].EdgeS); d > tol {
			t.Errorf("line %d edge at %.6f s, truth %.6f s (repaired %v)", i, res.Lines[i].EdgeS, truth.Lines[i].EdgeS, res.Lines[i].Repaired)
		}
	}
}
