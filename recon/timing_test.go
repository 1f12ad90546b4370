package recon

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"spotloom/capture"
)

// Otsu on a hand-computed three-level case: values 0 (×4), 1 (×2), 4 (×2)
// and 5 (×2). Splitting after 0, 1 or 4 gives between-class variances
// σ_B² = w0·w1·(m0−m1)² of 2.667, 4.167 and 2.25 (worked by hand from Otsu
// 1979, eq. 18), so the best split is between 1 and 4, with class means
// 1/3 and 4.5; the total variance is 4.4, so η = 4.167/4.4 = 0.947.
func TestOtsuHandComputed(t *testing.T) {
	var v []float32
	for _, p := range []struct {
		level float32
		n     int
	}{{0, 4}, {1, 2}, {4, 2}, {5, 2}} {
		for range p.n {
			v = append(v, p.level)
		}
	}
	o := Otsu(v)
	if !(o.Threshold > 1 && o.Threshold < 4) {
		t.Errorf("threshold %g, want between 1 and 4", o.Threshold)
	}
	if math.Abs(o.LowMean-1.0/3) > 1e-9 || math.Abs(o.HighMean-4.5) > 1e-9 {
		t.Errorf("class means %g and %g, want 1/3 and 4.5", o.LowMean, o.HighMean)
	}
	if math.Abs(o.Separability-4.1667/4.4) > 0.01 {
		t.Errorf("η %g, want 0.947", o.Separability)
	}
}

// Common practice, no published source: a collimator wheel at 330 rev/min
// with 4 apertures sweeping a 25° field makes 22 lines/s and spends about
// 12.6 ms per line in the field (25/90 of 1/22 s = 12.63 ms).
func TestCommonPracticeLineRate(t *testing.T) {
	rig := baseRig()
	rig.rpm, rig.fieldDeg, rig.seconds = 330, 25, 1.5
	res, err := NewSession(rig.recording()).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.Report.LineRateHz-22) > 0.02 {
		t.Errorf("line rate %g Hz, want 22", res.Report.LineRateHz)
	}
	if math.Abs(res.Report.SweepMS-12.63) > 0.05 {
		t.Errorf("sweep %g ms, want about 12.6", res.Report.SweepMS)
	}
}

func TestRepairSynthetic(t *testing.T) {
	rig := baseRig()
	rig.seconds = 3
	rig.dropPulses = []int{5, 17, 18, 30, 44}
	rig.extraPulseAt = []float64{0.4121, 1.3333, 2.2468}
	res, err := NewSession(rig.recording()).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Report.PulsesMissing != 5 || res.Report.PulsesExtra != 3 {
		t.Errorf("missing %d extra %d, want 5 and 3: %q", res.Report.PulsesMissing, res.Report.PulsesExtra, res.Report.Warnings)
	}
	found := strings.Join(res.Report.Warnings, "\n")
	if !strings.Contains(found, "5 index pulses were missing and were filled in") {
		t.Errorf("warnings %q do not say the pulses were filled in", found)
	}
}

func TestOnePulsePerRevolution(t *testing.T) {
	rig := baseRig()
	rig.onePerRev = true
	res, err := NewSession(rig.recording()).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.Report.DelayDeg-rig.delayDeg) > 0.3 {
		t.Errorf("delay %g, want %g", res.Report.DelayDeg, rig.delayDeg)
	}
	rms, sx, _, _ := dotFit(t, res.Frames[0], 20, 0.6)
	if rms > 0.5 || math.Abs(sx-1) > 0.005 {
		t.Errorf("one pulse per revolution: rms %.3f, scale %.4f", rms, sx)
	}
}

// flatChannel is Gaussian noise between lo and hi (σ a sixth of the
// range, clamped), like a disconnected or stuck input.
func flatChannel(n int, lo, hi float32) []float32 {
	rng := rand.New(rand.NewPCG(3, 4))
	v := make([]float32, n)
	for i := range v {
		x := float32(float64(lo+hi)/2 + float64(hi-lo)/6*rng.NormFloat64())
		v[i] = min(max(x, lo), hi)
	}
	return v
}

func TestBadInputs(t *testing.T) {
	ctx := context.Background()
	rig := baseRig()
	rig.seconds = 1
	good := rig.recording()
	n := good.Frames()
	with := func(ch int, samples []float32) *capture.Recording {
		r := *good
		r.Channels = append([]capture.Channel{}, good.Channels...)
		r.Channels[ch].Samples = samples
		return &r
	}
	cases := []struct {
		name string
		rec  *capture.Recording
		edit func(r *wheelRig)
		want []string
	}{
		{"no index edges", with(1, flatChannel(n, 0.02, 0.03)), nil, []string{"index channel 1 (index) stays between 0.02 V and 0.03 V: no pulses", "check"}},
		{"index stuck high", with(1, flatChannel(n, 4.98, 5.01)), nil, []string{"stays between 4.98 V and 5.01 V: no pulses"}},
		{"position never moves", with(2, flatChannel(n, 1.2, 1.2001)), nil, []string{"the head did not move", "rows.source even"}},
	}
	for _, c := range cases {
		_, err := NewSession(c.rec).Build(ctx, rig.recipe(), nil)
		if err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: error %q does not say %q", c.name, err, w)
			}
		}
	}

	r := rig.recipe()
	r.Channels.Position = "7"
	if _, err := NewSession(good).Build(ctx, r, nil); err == nil || !strings.Contains(err.Error(), "channels.position: channel 7 does not exist") {
		t.Errorf("missing channel: %v", err)
	}
	r = rig.recipe()
	r.Channels.Position = r.Channels.Detector
	if _, err := NewSession(good).Build(ctx, r, nil); err == nil || !strings.Contains(err.Error(), "both name channel 0") {
		t.Errorf("one channel in two roles: %v", err)
	}
	r = rig.recipe()
	r.Sweep.FieldDeg = 100
	if _, err := NewSession(good).Build(ctx, r, nil); err == nil || !strings.Contains(err.Error(), "sweep.field_deg") || !strings.Contains(err.Error(), "90° apart") {
		t.Errorf("field wider than the aperture spacing: %v", err)
	}

	// A wheel whose speed swings by ±15 % (30 % range) is reported.
	wob := baseRig()
	wob.wobblePct = 15
	wob.seconds = 3
	res, err := NewSession(wob.recording()).Build(ctx, wob.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(res.Report.Warnings, " "), "the index period varies by") {
		t.Errorf("no warning for a 30 %% period swing: %q", res.Report.Warnings)
	}
}

// TestCancel: a build cancelled before it starts or inside any stage
// returns an error that wraps context.Canceled, so callers tell a stopped
// build from a failed one with errors.Is, never by the message.
func TestCancel(t *testing.T) {
	rig := baseRig()
	rec := rig.recording()
	for _, stage := range []string{"", "timing", "rows", "delay", "placement", "gridding"} {
		ctx, cancel := context.WithCancel(context.Background())
		if stage == "" {
			cancel()
		}
		_, err := NewSession(rec).Build(ctx, rig.recipe(), func(s string, f float64) {
			if s == stage && f == 0 {
				cancel()
			}
		})
		cancel()
		if !errors.Is(err, context.Canceled) {
			t.Errorf("cancelled in stage %q: err = %v, want one wrapping context.Canceled", stage, err)
		}
	}
}

// An index sensor that sticks high for half a second: the silence is not
// filled with invented lines, and the report says when it happened.
func TestIndexStuckForAWhile(t *testing.T) {
	rig := baseRig()
	rig.seconds = 3
	rec := rig.recording()
	idx := rec.Channels[1].Samples
	for i := int(1.0 * rig.rateHz); i < int(1.5*rig.rateHz); i++ {
		idx[i] = 5
	}
	res, err := NewSession(rec).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	w := strings.Join(res.Report.Warnings, " ")
	if !strings.Contains(w, "no index pulses between 0.9") || !strings.Contains(w, "s and 1.5") {
		t.Errorf("warnings %q", res.Report.Warnings)
	}
	for _, l := range res.Lines {
		if l.EdgeS > 1.0 && l.EdgeS < 1.49 {
			t.Errorf("line %d invented inside the silence at %.3f s", l.Number, l.EdgeS)
		}
	}
	if res.Report.PulsesMissing != 0 {
		t.Errorf("%d pulses filled in across a long silence", res.Report.PulsesMissing)
	}
}

// Falling edges of an inverted index signal time the same lines as the
// rising edges of the plain one (the pulse's trailing edge of the plain
// signal is its leading edge when inverted).
func TestFallingEdge(t *testing.T) {
	rig := baseRig()
	plain := rig.recording()
	inv := rig.recording()
	for i, v := range inv.Channels[1].Samples {
		inv.Channels[1].Samples[i] = 5 - v
	}
	a, err := NewSession(plain).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	r := rig.recipe()
	r.Timing.Edge = "falling"
	b, err := NewSession(inv).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Lines) != len(b.Lines) {
		t.Fatalf("%d and %d lines", len(a.Lines), len(b.Lines))
	}
	for i := range a.Lines {
		if d := math.Abs(a.Lines[i].EdgeS - b.Lines[i].EdgeS); d > 1e-7 {
			t.Errorf("line %d: edges %.7f and %.7f s", i, a.Lines[i].EdgeS, b.Lines[i].EdgeS)
		}
	}
}
