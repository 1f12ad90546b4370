package recon

import (
	"context"
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// notchGainClosedForm is the gain of the forward-and-backward notch at f:
// the biquad's |H(e^{jω})|² = (cos ω − cos ω0)² / ((cos ω − cos ω0)² +
// α² sin² ω), from its numerator 1 − 2 cos ω0 z⁻¹ + z⁻² and denominator
// (1+α) − 2 cos ω0 z⁻¹ + (1−α) z⁻² on the unit circle (coefficients from
// R. Bristow-Johnson's audio EQ cookbook, notch); the two passes multiply
// H by its conjugate, so the zero-phase filter's gain is |H|².
func notchGainClosedForm(f, fc, bw, rateHz float64) float64 {
	w, w0 := 2*math.Pi*f/rateHz, 2*math.Pi*fc/rateHz
	alpha := math.Sin(w0) / (2 * fc / bw)
	d := math.Cos(w) - math.Cos(w0)
	return d * d / (d*d + alpha*alpha*math.Sin(w)*math.Sin(w))
}

// The zero-phase notch's impulse response, transformed with gonum's FFT
// (an independent library), has the closed-form gain at every frequency
// and no phase (its transform is real: the response is symmetric).
func TestNotchResponseMatchesClosedForm(t *testing.T) {
	const rate, fc, n = 48000.0, 1500.0, 1 << 14
	bw := fc * notchBandwidthFraction
	x := make([]float32, n)
	x[n/2] = 1
	h := notchZeroPhase(x, fc, bw, rate)
	seq := make([]float64, n)
	for i := range seq {
		// Rotate so the impulse sits at index 0: the transform of a
		// zero-phase response is then real.
		seq[i] = float64(h[(i+n/2)%n])
	}
	coef := fourier.NewFFT(n).Coefficients(nil, seq)
	worst, worstPhase := 0.0, 0.0
	for k, c := range coef {
		f := float64(k) * rate / n
		want := notchGainClosedForm(f, fc, bw, rate)
		worst = math.Max(worst, math.Abs(cmplx.Abs(c)-want))
		if cmplx.Abs(c) > 0.01 {
			worstPhase = math.Max(worstPhase, math.Abs(imag(c)/cmplx.Abs(c)))
		}
	}
	// The float32 output carries rounding of about 1e-7 per sample.
	if worst > 1e-4 || worstPhase > 1e-3 {
		t.Errorf("gain differs from the closed form by up to %.3g, phase up to %.3g rad", worst, worstPhase)
	}
	if g := notchGainClosedForm(fc, fc, bw, rate); g != 0 {
		t.Errorf("closed form at the carrier %g, want 0", g)
	}
	// −3 dB at fc ± bw/2 for one pass: the definition of the bandwidth
	// (cookbook: Q = fc/bw), to within the bilinear warping of a narrow band.
	if g := notchGainClosedForm(fc+bw/2, fc, bw, rate); math.Abs(g-0.5) > 0.02 {
		t.Errorf("one-pass power at fc + bw/2 = %.3f, want 0.5", g)
	}
}

// A tone that starts with the capture leaves the notch at once: the ends
// are extended with the tone itself, so there is no ringing at the start
// or the end (a plain filter would pass the whole amplitude at first).
func TestNotchNoRingingAtTheEnds(t *testing.T) {
	const rate, fc = 48000.0, 1234.5
	x := make([]float32, 24000)
	for i := range x {
		x[i] = float32(0.5*math.Sin(2*math.Pi*fc*float64(i)/rate+0.7) + 0.1)
	}
	y := notchZeroPhase(x, fc, fc*notchBandwidthFraction, rate)
	worst := 0.0
	for _, v := range y {
		worst = math.Max(worst, math.Abs(float64(v)-0.1)) // DC passes the notch (gain 1 at 0 Hz)
	}
	if worst > 0.005 {
		t.Errorf("the tone leaks through the notch by up to %.4f (1 %% of its amplitude allowed)", worst)
	}
}

// sharedSignal is a channel of index pulses (rectangles of pulseV, width
// widthS, every periodS) on a tone of amplitude amp(t) at fc: the two-input
// rig's channel. It returns the samples and the pulses' sample spans.
func sharedSignal(rate, fc, seconds, pulseV, widthS, periodS float64, amp func(float64) float64) ([]float32, [][2]int) {
	n := int(seconds * rate)
	x := make([]float32, n)
	var spans [][2]int
	for t0 := 0.01; t0+widthS < seconds; t0 += periodS {
		a, b := int(math.Ceil(t0*rate)), int(math.Ceil((t0+widthS)*rate))
		spans = append(spans, [2]int{a, b})
		for i := a; i < b; i++ {
			x[i] = float32(pulseV)
		}
	}
	for i := range x {
		t := float64(i) / rate
		x[i] += float32(amp(t) * math.Sin(2*math.Pi*fc*t+0.3))
	}
	return x, spans
}

// The tone's amplitude read around the pulses is the amplitude the signal
// was made with (a closed form), block by block; mixing over the pulses
// instead (the plain lock-in) is off by many times that, so the pulses
// must be left out.
func TestMaskedToneAmplitude(t *testing.T) {
	const rate, fc = 96000.0, 1500.0
	amp := func(t float64) float64 { return 0.2 + 0.1*t }
	x, spans := sharedSignal(rate, fc, 2, 0.4, 1.6e-3, 1/42.0, amp)
	guarded := make([][2]int, len(spans))
	for i, s := range spans {
		guarded[i] = [2]int{s[0] - 4, s[1] + 4}
	}
	in := rowsInput{channel: x, n: len(x), rateHz: rate, name: "1 (shared)", pulses: guarded}
	carrier := fc
	masked, blockLen, _, err := toneAmplitude(in, &carrier)
	if err != nil {
		t.Fatal(err)
	}
	in.pulses = nil
	plain, _, _, _ := toneAmplitude(in, &carrier)
	worst, worstPlain := 0.0, 0.0
	for j := 2; j < len(masked)-2; j++ {
		want := amp((float64(j*blockLen) + float64(blockLen)/2) / rate)
		worst = math.Max(worst, math.Abs(masked[j]-want))
		worstPlain = math.Max(worstPlain, math.Abs(plain[j]-want))
	}
	t.Logf("masked fit within %.2g of the amplitude, plain lock-in within %.2g", worst, worstPlain)
	if worst > 2e-4 {
		t.Errorf("masked tone amplitude off by up to %.3g (float32 samples; 2e-4 allowed)", worst)
	}
	if worstPlain < 50*worst {
		t.Errorf("the plain lock-in is off by only %.3g: the test's pulses do not disturb it", worstPlain)
	}
}

// The taken-apart channel finds every pulse of the made signal, each span
// covering its pulse and no more than a guard beside it.
func TestSharedChannelFindsThePulses(t *testing.T) {
	const rate, fc = 96000.0, 1500.0
	x, spans := sharedSignal(rate, fc, 1, 0.4, 1.6e-3, 1/42.0, func(t float64) float64 { return 0.3 })
	rec := &capture.Recording{SampleRateHz: rate, Channels: []capture.Channel{{Name: "shared", Samples: x}}}
	sh, err := NewSession(rec).sharedChannel(context.Background(), 0, fc)
	if err != nil {
		t.Fatal(err)
	}
	_, _, found := sh.spansFor(nil, nil)
	if len(found) != len(spans) {
		t.Fatalf("%d pulse spans found, %d made", len(found), len(spans))
	}
	guard := int(math.Ceil(pulseGuardS * rate))
	for i, s := range found {
		m := spans[i]
		if s[0] > m[0] || s[1] < m[1] || m[0]-s[0] > guard+2 || s[1]-m[1] > guard+2 {
			t.Errorf("span %d is %v, the pulse %v (guard %d samples)", i, s, m, guard)
		}
	}
	// The levels are the pulses' (0 and 0.4), the tone notched out.
	if math.Abs(sh.otsu.LowMean) > 0.01 || math.Abs(sh.otsu.HighMean-0.4) > 0.01 {
		t.Errorf("levels %.4f and %.4f, want 0 and 0.4", sh.otsu.LowMean, sh.otsu.HighMean)
	}
}

// Only a tone may share the index channel: the recipe check says so for a
// DC level, and the session keeps refusing the detector on the index.
func TestSharedChannelRecipeChecks(t *testing.T) {
	r := recipe.Default()
	r.Channels.Index, r.Channels.Position = "1", "1"
	r.Rows.Source = recipe.SourcePosition
	if err := r.Validate(); err == nil || !strings.Contains(err.Error(), "channels.position") {
		t.Errorf("position on the index channel with a DC source: %v", err)
	}
	r.Rows.Source = recipe.SourceTone
	if err := r.Validate(); err != nil {
		t.Errorf("tone on the index channel: %v", err)
	}
	x, _ := sharedSignal(48000, 1500, 1, 0.4, 1.6e-3, 1/42.0, func(float64) float64 { return 0.3 })
	rec := &capture.Recording{SampleRateHz: 48000, Channels: []capture.Channel{{Name: "det", Samples: x}, {Name: "shared", Samples: x}}}
	s := NewSession(rec)
	r.Channels.Detector, r.Channels.Index, r.Channels.Position = "0", "1", "1"
	if _, err := s.resolveChannels(&r); err != nil {
		t.Errorf("index and position on one channel with a tone: %v", err)
	}
	r.Channels.Detector = "1"
	if _, err := s.resolveChannels(&r); err == nil || !strings.Contains(err.Error(), "each role needs its own channel") {
		t.Errorf("detector on the index channel: %v", err)
	}
	// A carrier the 1 s capture holds only a few periods of is refused
	// before anything is sized from it.
	if _, err := s.sharedChannel(context.Background(), 1, 0.5); err == nil || !strings.Contains(err.Error(), "periods") {
		t.Errorf("a 0.5 Hz carrier: %v", err)
	}
	slow := 1e-9
	if _, _, _, err := toneAmplitude(rowsInput{channel: x, n: len(x), rateHz: 48000}, &slow); err == nil || !strings.Contains(err.Error(), "periods") {
		t.Errorf("a 1 nHz carrier: %v", err)
	}
}

// BenchmarkSharedChannel takes apart 10 s of a two-input channel at
// 96 kHz (notch both ways, pulse spans) and fits the tone around the
// pulses: the extra work a two-input capture costs over three inputs.
func BenchmarkSharedChannel(b *testing.B) {
	const rate, fc = 96000.0, 1500.0
	x, _ := sharedSignal(rate, fc, 10, 0.4, 1.6e-3, 1/42.0, func(t float64) float64 { return 0.2 + 0.02*t })
	rec := &capture.Recording{SampleRateHz: rate, Channels: []capture.Channel{{Name: "shared", Samples: x}}}
	carrier := fc
	b.SetBytes(int64(4 * len(x)))
	for b.Loop() {
		s := NewSession(rec)
		sh, err := s.sharedChannel(context.Background(), 0, fc)
		if err != nil {
			b.Fatal(err)
		}
		_, _, spans := sh.spansFor(nil, nil)
		in := rowsInput{channel: x, n: len(x), rateHz: rate, pulses: spans}
		if _, _, _, err := toneAmplitude(in, &carrier); err != nil {
			b.Fatal(err)
		}
	}
}
