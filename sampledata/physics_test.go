package sampledata

import (
	"context"
	"errors"
	"math"
	"runtime"
	"testing"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// uniformScene has the same yield everywhere.
func uniformScene(yield float64) SceneModel {
	return SceneModel{Name: "uniform", BackgroundYield: yield}
}

// quietRig is the demo rig with a narrow field (cos²θ within 0.12 % of 1),
// a steady wheel and an ideal, DC-coupled, filter-free detector chain whose
// output is counts/64 volts, so counts can be read back exactly.
func quietRig(fieldDeg float64) Rig {
	r := DemoRig()
	r.DurationS = 2
	r.FieldDeg = fieldDeg
	r.Wheel.WobblePct, r.Wheel.RevJitterPct = 0, 0
	r.Detector.AfterglowS, r.Detector.LowPassCornerHz, r.Detector.ACCouplingCornerHz = 0, 0, 0
	r.Detector.NoiseV, r.Detector.OffsetV = 0, 0
	r.Detector.GainVPerMCPS = 1e6 / (64 * r.SampleRateHz)
	r.ADC.Bits = 0
	return r
}

// countsOf reads counts back from quietRig's detector volts.
func countsOf(v float32) float64 { return math.Round(float64(v) * 64) }

// inField returns the samples well inside each line's field and well
// outside any field (one sample of margin at each end).
func inField(truth *Truth, n int) (inside, outside []int) {
	fs := truth.SampleRateHz
	on := make([]bool, n)
	for _, l := range truth.Lines {
		i0, i1 := int(math.Ceil(l.FieldStartS*fs))+1, int(math.Ceil(l.FieldEndS*fs))-2
		for i := max(i0-3, 0); i <= min(i1+3, n-1); i++ {
			on[i] = true
		}
		for i := max(i0, 0); i <= min(i1, n-1); i++ {
			inside = append(inside, i)
		}
	}
	first := int(math.Ceil(truth.Lines[0].FieldStartS * fs))
	for i := first; i < n; i++ {
		if !on[i] {
			outside = append(outside, i)
		}
	}
	return inside, outside
}

// chiSquarePoisson compares counts with a Poisson distribution of mean
// lambda (gonum's distuv.Poisson) and returns the statistic and the 99.9 %
// critical value of distuv.ChiSquared with bins−1 degrees of freedom (the
// mean is known, not fitted). Bins with an expected count under 5 are
// pooled into their neighbours.
func chiSquarePoisson(counts []float64, lambda float64) (chi2, critical float64, bins int) {
	p := distuv.Poisson{Lambda: lambda}
	n := float64(len(counts))
	hist := map[int]float64{}
	for _, c := range counts {
		hist[int(c)]++
	}
	// Bin edges: start a new bin each time the expected count reaches 5.
	var obs, exp []float64
	o, e := 0.0, 0.0
	kMax := int(lambda + 10*math.Sqrt(lambda) + 10)
	for k := 0; k <= kMax; k++ {
		o += hist[k]
		e += n * p.Prob(float64(k))
		if e >= 5 {
			obs, exp = append(obs, o), append(exp, e)
			o, e = 0, 0
		}
	}
	// The upper tail beyond kMax goes into the last bin.
	for k, c := range hist {
		if k > kMax {
			o += c
		}
	}
	e += n * (1 - p.CDF(float64(kMax)))
	obs[len(obs)-1] += o
	exp[len(exp)-1] += e
	for i := range obs {
		d := obs[i] - exp[i]
		chi2 += d * d / exp[i]
	}
	critical = distuv.ChiSquared{K: float64(len(obs) - 1)}.Quantile(0.999)
	return chi2, critical, len(obs)
}

// TestPhotonCountsArePoisson checks the counts of a flat region against
// gonum's Poisson distribution with a chi-square goodness-of-fit test, and
// that mean and variance agree, both for the beam on (mean ≈ 20, the
// transformed-rejection path) and for the beam off (dark counts, mean 3,
// the inversion path).
func TestPhotonCountsArePoisson(t *testing.T) {
	r := quietRig(4)
	fs := r.SampleRateHz
	r.Detector.DarkRateCPS = 3 * fs
	r.Detector.FullScatterRateCPS = (20 - 3) * fs / 0.5
	rec, truth, err := SimulateScene(t.Context(), r, uniformScene(0.5), SimOptions{Seed: 11})
	if err != nil {
		t.Fatal(err)
	}
	det := rec.Channels[0].Samples
	inside, outside := inField(truth, len(det))
	for _, region := range []struct {
		name    string
		samples []int
		lambda  float64
	}{
		// cos²θ over a 4° field is 1 − 0.0006 on average (±2°).
		{"beam on", inside, 3 + 17*(1-math.Pow(math.Sin(2*math.Pi/180), 2)/3)},
		{"beam off", outside, 3},
	} {
		counts := make([]float64, len(region.samples))
		for j, i := range region.samples {
			counts[j] = countsOf(det[i])
		}
		if len(counts) < 5000 {
			t.Fatalf("%s: only %d samples", region.name, len(counts))
		}
		chi2, crit, bins := chiSquarePoisson(counts, region.lambda)
		if chi2 > crit {
			t.Errorf("%s: chi-square %.1f over %d bins exceeds the 99.9 %% value %.1f", region.name, chi2, bins, crit)
		}
		mean, variance := stat.MeanVariance(counts, nil)
		// Standard error of the mean is sqrt(λ/n); of the variance about
		// λ·sqrt(2/n) for a Poisson variable.
		n := float64(len(counts))
		if d := math.Abs(mean - region.lambda); d > 4*math.Sqrt(region.lambda/n) {
			t.Errorf("%s: mean %.4f, want %.4f", region.name, mean, region.lambda)
		}
		if d := math.Abs(variance - mean); d > 5*region.lambda*math.Sqrt(2/n)+0.01 {
			t.Errorf("%s: variance %.4f differs from mean %.4f", region.name, variance, mean)
		}
		t.Logf("%s: %d samples, mean %.3f, variance %.3f, chi-square %.1f (%d bins, 99.9%% = %.1f)", region.name, len(counts), mean, variance, chi2, bins, crit)
	}
}

// TestSpotFWHM checks the spot against the Gaussian closed form
// FWHM = 2·sqrt(2·ln 2)·σ: across the sweep, in the noise-free detector
// trace of a thin line, the width at half maximum times the beam speed
// equals 2·sqrt(2·ln 2)·sqrt(σ² + dwell²/12), dwell being the beam's travel
// in one sample; along the cross-scan axis the blurred raster of a thin
// line has width spot_fwhm_mm. Near the field edge, at beam angle θ, both
// grow with the slant range D/cos θ: by 1/cos²θ along the sweep (the
// oblique plane stretches it once more) and by 1/cos θ across it.
func TestSpotFWHM(t *testing.T) {
	r := quietRig(30)
	r.DurationS = 0.5
	thetaEdge := 12 * math.Pi / 180
	xEdge := r.DistanceMM * math.Tan(thetaEdge)
	// 0.1 mm scattering lines on nothing along y, at x = 0 and near the
	// field edge.
	thin := SceneModel{Name: "thin lines", BackgroundYield: 0, Shapes: []Shape{
		shape("line at centre", "foil", 1, 0, boxDistance(0, 0, 0.1, 2000, 0, 0), -0.05, -1000, 0.05, 1000),
		shape("line near edge", "foil", 1, 0, boxDistance(xEdge, 0, 0.1, 2000, 0, 0), xEdge-0.05, -1000, xEdge+0.05, 1000),
	}}
	rec, truth, err := SimulateScene(t.Context(), r, thin, SimOptions{Seed: 1, Noiseless: true})
	if err != nil {
		t.Fatal(err)
	}
	fs := r.SampleRateHz
	det := rec.Channels[0].Samples
	sigma := r.SpotFWHMMM / (2 * math.Sqrt(2*math.Ln2))
	for _, l := range truth.Lines[:5] {
		i0, i1 := int(math.Ceil(l.FieldStartS*fs)), int(l.FieldEndS*fs)
		mid := (i0 + i1) / 2
		omega := l.RevPerMin * 2 * math.Pi / 60
		for _, c := range []struct {
			name   string
			theta  float64
			window []float32
		}{
			{"centre", 0, det[i0 : i0+(i1-i0)*3/4]},
			{"edge", thetaEdge, det[mid+(i1-mid)/3 : i1]},
		} {
			cos2 := math.Cos(c.theta) * math.Cos(c.theta)
			dwell := r.DistanceMM * omega / cos2 / fs // mm per sample at θ
			want := 2 * math.Sqrt(2*math.Ln2) * math.Sqrt(sigma*sigma/(cos2*cos2)+dwell*dwell/12)
			got := halfMaxWidth(c.window) * dwell
			if math.Abs(got-want) > 0.015*want {
				t.Errorf("line %d, %s: FWHM along the sweep %.3f mm, want %.3f mm", l.Number, c.name, got, want)
			}
			if l.Number == 0 {
				t.Logf("%s: FWHM along the sweep %.4f mm, closed form %.4f mm", c.name, got, want)
			}
		}
	}
	// Across the sweep: sample the blurred rasters across a line along x,
	// placed 0, 1/6, 1/3 and 1/2 pixel off the raster's pixel centres. The raster adds up
	// to pitch²/4 of variance for a line midway between pixel centres
	// (pitch = σ/3: at most 1.4 % of σ, plus the bilinear read-back), so
	// each width is held to 2.5 % and their mean to 1.5 %.
	probe, err := newSpotSampler(r, SceneModel{Name: "empty"}, 0, 0, -50, 50)
	if err != nil {
		t.Fatal(err)
	}
	pitch := probe.centre.PitchMM
	for _, theta := range []float64{0, thetaEdge} {
		want := r.SpotFWHMMM / math.Cos(theta)
		mean := 0.0
		for k := 0; k < 4; k++ {
			// Pixel centres lie at OriginYMM − row·pitch.
			y0 := probe.centre.OriginYMM - math.Floor(probe.centre.OriginYMM/pitch)*pitch + float64(k)*pitch/6
			across := SceneModel{Name: "line along x", Shapes: []Shape{
				shape("line", "foil", 1, 0, boxDistance(0, y0, 2000, 0.1, 0, 0), -1000, y0-0.05, 1000, y0+0.05),
			}}
			s, err := newSpotSampler(r, across, 0, 0, -50, 50)
			if err != nil {
				t.Fatal(err)
			}
			profile := make([]float32, 2001)
			for i := range profile {
				profile[i] = float32(s.at(r.DistanceMM*math.Tan(theta), y0-10+float64(i)*0.01, math.Cos(theta)))
			}
			got := halfMaxWidth(profile) * 0.01
			mean += got / 4
			if math.Abs(got-want) > 0.025*want {
				t.Errorf("θ = %.0f°, line %.2f pixel off a pixel centre: FWHM across the sweep %.3f mm, want %.3f mm", theta*180/math.Pi, float64(k)/6, got, want)
			}
		}
		if math.Abs(mean-want) > 0.015*want {
			t.Errorf("θ = %.0f°: mean FWHM across the sweep %.3f mm, want %.3f mm", theta*180/math.Pi, mean, want)
		}
		t.Logf("θ = %.0f°: mean FWHM across the sweep %.4f mm, want %.4f mm", theta*180/math.Pi, mean, want)
	}
}

// halfMaxWidth is the width in samples of the peak of v at half its
// maximum above the minimum, with linear interpolation at both crossings.
func halfMaxWidth(v []float32) float64 {
	peak, lo := 0, v[0]
	for i, x := range v {
		if x > v[peak] {
			peak = i
		}
		lo = min(lo, x)
	}
	half := (v[peak] + lo) / 2
	left := peak
	for left > 0 && v[left-1] > half {
		left--
	}
	right := peak
	for right < len(v)-1 && v[right+1] > half {
		right++
	}
	l := float64(left) - float64(v[left]-half)/float64(v[left]-v[left-1])
	r := float64(right) + float64(v[right]-half)/float64(v[right]-v[right+1])
	return r - l
}

// TestStepResponses checks the afterglow and the amplifier low-pass against
// the closed form 1 − exp(−t/τ) of a single-pole system's step response, at
// the beam-on step that starts every line, and the AC coupling against
// exp(−t/τ).
func TestStepResponses(t *testing.T) {
	fs := 96000.0
	cases := []struct {
		name      string
		afterglow float64
		corner    float64
	}{
		{"afterglow 100 µs", 100e-6, 0},
		{"low-pass 1.5 kHz", 0, 1500},
	}
	for _, c := range cases {
		r := quietRig(4)
		r.Detector.DarkRateCPS = 0
		r.Detector.AfterglowS = c.afterglow
		r.Detector.LowPassCornerHz = c.corner
		tau := c.afterglow
		if c.corner > 0 {
			tau = 1 / (2 * math.Pi * c.corner)
		}
		rec, truth, err := SimulateScene(t.Context(), r, uniformScene(0.5), SimOptions{Seed: 1, Noiseless: true})
		if err != nil {
			t.Fatal(err)
		}
		det := rec.Channels[0].Samples
		// Final value: the yield times cos²θ at the field centre, in volts.
		final := r.Detector.GainVPerMCPS * r.Detector.FullScatterRateCPS * 0.5 / 1e6
		for _, l := range truth.Lines[:4] {
			i0 := int(math.Ceil(l.FieldStartS * fs))
			for m := 0; m < 60; m++ {
				want := final * (1 - math.Exp(-float64(m+1)/(fs*tau)))
				got := float64(det[i0+m])
				// cos²θ within ±2° of the axis changes the level by < 0.13 %.
				if math.Abs(got-want) > 0.002*final {
					t.Fatalf("%s: line %d, %d samples after the step: %.6f, want %.6f", c.name, l.Number, m, got, want)
				}
			}
		}
	}
	// AC coupling: a step of counts through detectorChain.
	r := quietRig(4)
	r.Detector.DarkRateCPS = 0
	r.Detector.ACCouplingCornerHz = 20
	tau := 1 / (2 * math.Pi * 20.0)
	step := make([]float32, 20000)
	for i := 100; i < len(step); i++ {
		step[i] = 10
	}
	detectorChain(r, step)
	amplitude := 10 * fs / 1e6
	for m := 0; m < len(step)-100; m += 97 {
		want := amplitude * math.Exp(-float64(m+1)/(fs*tau))
		if got := float64(step[100+m]); math.Abs(got-want) > 1e-5*amplitude {
			t.Fatalf("AC coupling %d samples after the step: %g, want %g", m, got, want)
		}
	}
}

// TestIndexEdgesMatchTruth finds the rising edges of the simulated index
// channel (with its noise and jitter) at half the pulse level and checks
// each lies within one sample of the truth.
func TestIndexEdgesMatchTruth(t *testing.T) {
	for _, perRev := range []int{6, 1} {
		r := DemoRig()
		r.DurationS = 3
		r.Index.PulsesPerRev = perRev
		rec, truth, err := Simulate(t.Context(), r, "dot-grid", SimOptions{Seed: 5})
		if err != nil {
			t.Fatal(err)
		}
		fs := r.SampleRateHz
		idx := rec.Channels[1].Samples
		half := float32(r.Index.LevelV / 2)
		var edges []float64
		armed := idx[0] < half
		for i := 1; i < len(idx); i++ {
			if armed && idx[i] >= half {
				a := float64(half-idx[i-1]) / float64(idx[i]-idx[i-1])
				edges = append(edges, (float64(i-1)+a)/fs)
				armed = false
			}
			if idx[i] < float32(0.25*r.Index.LevelV) {
				armed = true
			}
		}
		if len(edges) != len(truth.IndexEdgesS) {
			t.Fatalf("%d per rev: found %d edges, truth has %d", perRev, len(edges), len(truth.IndexEdgesS))
		}
		for k := range edges {
			if d := math.Abs(edges[k] - truth.IndexEdgesS[k]); d > 1/fs {
				t.Errorf("%d per rev: edge %d at %.7f s, truth %.7f s (%.2f samples)", perRev, k, edges[k], truth.IndexEdgesS[k], d*fs)
			}
		}
		wantLines := len(truth.IndexEdgesS)
		if perRev == 1 {
			wantLines *= r.Wheel.ApertureCount
		}
		if n := len(truth.Lines); n > wantLines || n < wantLines-r.Wheel.ApertureCount {
			t.Errorf("%d per rev: %d lines for %d edges", perRev, n, len(truth.IndexEdgesS))
		}
	}
}

// TestDelayDefinition checks the truth's delay and aperture offsets against
// the line times: for line n the field starts delay + offset[n mod N] (plus
// k·360°/N for once per revolution) of wheel rotation after its edge, and
// the beam-on step in the detector lands on the first sample at or after
// the field start.
func TestDelayDefinition(t *testing.T) {
	for _, perRev := range []int{6, 1} {
		r := quietRig(30)
		r.Detector.DarkRateCPS = 0
		r.Index.PulsesPerRev = perRev
		r.Wheel.ApertureErrorsDeg = []float64{0, 0.3, -0.2, 0.1, -0.4, 0.25}
		rec, truth, err := SimulateScene(t.Context(), r, uniformScene(0.5), SimOptions{Seed: 9, Noiseless: true})
		if err != nil {
			t.Fatal(err)
		}
		fs := r.SampleRateHz
		degPerS := r.Wheel.RevPerMin * 6
		det := rec.Channels[0].Samples
		j0 := truth.FirstWheelAperture
		if got, want := truth.DelayDeg, r.Index.LeadDeg+r.Wheel.ApertureErrorsDeg[j0]; got != want {
			t.Errorf("%d per rev: delay %g, want lead + error of wheel aperture %d = %g", perRev, got, j0, want)
		}
		for _, l := range truth.Lines {
			k := l.Number % r.Wheel.ApertureCount
			want := truth.DelayDeg + truth.ApertureOffsetsDeg[k]
			if perRev == 1 {
				want += float64(k) * 360 / float64(r.Wheel.ApertureCount)
			}
			if got := (l.FieldStartS - l.EdgeS) * degPerS; math.Abs(got-want) > 1e-6 {
				t.Fatalf("%d per rev: line %d field starts %.6f° after its edge, want %.6f°", perRev, l.Number, got, want)
			}
			i0 := int(math.Ceil(l.FieldStartS * fs))
			if i0 < len(det) && (det[i0-1] != 0 || det[i0] == 0) {
				t.Fatalf("%d per rev: line %d: beam-on step not at sample %d (%g, %g)", perRev, l.Number, i0, det[i0-1], det[i0])
			}
		}
	}
}

// TestDeterministic checks that the same seed gives the same capture on one
// core and on all, and another seed a different one.
func TestDeterministic(t *testing.T) {
	r := DemoRig()
	r.DurationS = 1.5
	a, _, err := Simulate(t.Context(), r, "parcel", SimOptions{Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	old := runtime.GOMAXPROCS(1)
	b, _, err := Simulate(t.Context(), r, "parcel", SimOptions{Seed: 7})
	runtime.GOMAXPROCS(old)
	if err != nil {
		t.Fatal(err)
	}
	c, _, err := Simulate(t.Context(), r, "parcel", SimOptions{Seed: 8})
	if err != nil {
		t.Fatal(err)
	}
	same, differ := true, false
	for ch := range a.Channels {
		for i, v := range a.Channels[ch].Samples {
			if b.Channels[ch].Samples[i] != v {
				same = false
			}
			if c.Channels[ch].Samples[i] != v {
				differ = true
			}
		}
	}
	if !same {
		t.Error("one core and all cores give different samples for the same seed")
	}
	if !differ {
		t.Error("seeds 7 and 8 give the same samples")
	}
}

// TestQuantisation checks the ADC step 2·FS/2^bits and the clipping.
func TestQuantisation(t *testing.T) {
	q := ADC{Bits: 8, FullScaleV: 1}.quantiser()
	step := 2.0 / 256
	for _, c := range []struct{ in, want float64 }{
		{0.5 * step, step}, {0.49 * step, 0}, {-3.2 * step, -3 * step}, {5, 1 - step}, {-5, -1},
	} {
		if got := float64(q.quantise(c.in)); math.Abs(got-c.want) > 1e-7 {
			t.Errorf("quantise(%g) = %g, want %g", c.in, got, c.want)
		}
	}
}

// TestCancel checks that a cancelled context stops the simulation.
func TestCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(t.Context())
	cancel()
	if _, _, err := Simulate(ctx, DemoRig(), "parcel", SimOptions{}); !errors.Is(err, context.Canceled) {
		t.Fatalf("err = %v, want context.Canceled", err)
	}
}

// TestDelayMean checks delay_mean_deg against its definition, the mean over
// apertures of delay_deg + aperture_offsets_deg[k] (the least-squares
// delay with zero offsets).
func TestDelayMean(t *testing.T) {
	r := DemoRig()
	r.DurationS = 0.5
	_, truth, err := Simulate(t.Context(), r, "bars", SimOptions{Seed: 6})
	if err != nil {
		t.Fatal(err)
	}
	mean := 0.0
	for _, o := range truth.ApertureOffsetsDeg {
		mean += (truth.DelayDeg + o) / float64(len(truth.ApertureOffsetsDeg))
	}
	if math.Abs(mean-truth.DelayMeanDeg) > 1e-12 {
		t.Errorf("delay_mean_deg %g, mean of delay + offsets %g", truth.DelayMeanDeg, mean)
	}
}
