package sampledata

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestHandStroke(t *testing.T) {
	m := DemoRig().Motion
	p := newMotionPath(m, 20, rand.New(rand.NewPCG(1, 2)))
	if y := p.at(m.StartRestS); y != m.StartMM {
		t.Errorf("y at the end of the first rest = %g, want %g", y, m.StartMM)
	}
	if y := p.at(m.StartRestS + m.StrokeS + 0.01); math.Abs(y-(m.StartMM+m.TravelMM)) > 1e-9 {
		t.Errorf("y after the stroke = %g, want %g", y, m.StartMM+m.TravelMM)
	}
	// Forward only, never faster than five times the mean speed, and one
	// pause: at least pause_s·0.9 with no movement inside the stroke.
	mean := m.TravelMM / m.StrokeS
	still, longestStill := 0.0, 0.0
	const dt = 0.001
	for ts := m.StartRestS + 0.6; ts < m.StartRestS+m.StrokeS-0.6; ts += dt {
		v := (p.at(ts+dt) - p.at(ts)) / dt
		if v < -1e-9 || v > 5*mean {
			t.Fatalf("speed %g mm/s at %g s", v, ts)
		}
		if v < 1e-6 {
			still += dt
			longestStill = math.Max(longestStill, still)
		} else {
			still = 0
		}
	}
	if longestStill < 0.9*m.PauseS {
		t.Errorf("longest pause %g s, want at least %g s", longestStill, 0.9*m.PauseS)
	}
}

func TestStrokesReverse(t *testing.T) {
	r := DemoRig()
	r.DurationS = 12
	r.Motion.StartRestS, r.Motion.StrokeS, r.Motion.StrokeCount, r.Motion.TurnRestS = 0.5, 5, 2, 0.5
	r.Motion.PauseCount = 0
	_, truth, err := Simulate(t.Context(), r, "parcel", SimOptions{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	top, strokes := 0.0, map[int]bool{}
	for _, l := range truth.Lines {
		top = math.Max(top, l.YMM)
		strokes[l.Stroke] = true
	}
	last := truth.Lines[len(truth.Lines)-1]
	if top != 400 || math.Abs(last.YMM) > 1e-9 || len(strokes) != 2 || last.Stroke != 1 {
		t.Errorf("top %g mm, last y %g mm, strokes %v; want 400, 0, {0,1}", top, last.YMM, strokes)
	}
}

func TestMotorIsEven(t *testing.T) {
	r := DemoRig()
	r.DurationS = 3
	r.Motion = Motion{Kind: MotionMotor, StartMM: 10, TravelMM: 90, StrokeS: 3, StrokeCount: 1}
	r.Position = PositionSensor{Kind: SensorNone}
	rec, truth, err := Simulate(t.Context(), r, "bars", SimOptions{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Channels) != 2 {
		t.Errorf("%d channels, want detector and index", len(rec.Channels))
	}
	// Constant speed from t = 0: y = start + speed·t.
	speed := *r.Recipe().Rows.SpeedMMS
	for _, l := range truth.Lines {
		mid := (l.FieldStartS + l.FieldEndS) / 2
		if want := 10 + speed*mid; math.Abs(l.YMM-want) > 1e-6 {
			t.Fatalf("line %d at y %g mm, want %g", l.Number, l.YMM, want)
		}
	}
}

// TestStepper checks one step pulse per step on the steps channel and that
// the head moves mm_per_step per pulse.
func TestStepper(t *testing.T) {
	r := stepperRig()
	r.DurationS = 4
	rec, truth, err := Simulate(t.Context(), r, "dot-grid", SimOptions{Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	steps := rec.Channels[2].Samples
	if rec.Channels[2].Name != "steps" {
		t.Fatalf("channel 2 is %q", rec.Channels[2].Name)
	}
	pulses := 0
	for i := 1; i < len(steps); i++ {
		if steps[i-1] < float32(r.Motion.StepLevelV/2) && steps[i] >= float32(r.Motion.StepLevelV/2) {
			pulses++
		}
	}
	// 800 steps in 12 s from t = 1 s: those starting before 4 s.
	period := r.Motion.StrokeS * r.Motion.MMPerStep / r.Motion.TravelMM
	want := int(math.Ceil((r.DurationS - r.Motion.StartRestS) / period))
	if pulses != want || len(truth.StepsS) != want {
		t.Errorf("%d pulses, %d true steps, want %d", pulses, len(truth.StepsS), want)
	}
	last := truth.Lines[len(truth.Lines)-1]
	stepsDone := math.Floor((last.FieldStartS-r.Motion.StartRestS)/period) + 1
	if d := last.YStartMM - stepsDone*r.Motion.MMPerStep; d > 1e-9 || d < -r.Motion.MMPerStep {
		t.Errorf("last line at y %g mm after %g steps of %g mm", last.YStartMM, stepsDone, r.Motion.MMPerStep)
	}
}

// TestPositionSensor checks the DC level against the recipe's calibration
// (off by no more than the sensor's bow of nonlinearity_pct of the span)
// and the tone's peak amplitude against the same law.
func TestPositionSensor(t *testing.T) {
	r := DemoRig()
	r.DurationS = 20
	rec, truth, err := Simulate(t.Context(), r, "parcel", SimOptions{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	cal := r.Recipe().Rows.Calibration
	mmPerV := (cal[1][1] - cal[0][1]) / (cal[1][0] - cal[0][0])
	bowMM := r.Position.NonlinearityPct / 100 * r.Position.RangeMM
	pos := rec.Channels[2].Samples
	fs := r.SampleRateHz
	worst := 0.0
	for _, l := range truth.Lines {
		i := int(math.Round((l.FieldStartS + l.FieldEndS) / 2 * fs))
		if i >= len(pos) {
			break
		}
		// Average 64 samples to bring the 2 mV noise down to 0.25 mV.
		sum := 0.0
		for k := i - 32; k < i+32; k++ {
			sum += float64(pos[k])
		}
		y := cal[0][1] + (sum/64-cal[0][0])*mmPerV
		worst = math.Max(worst, math.Abs(y-l.YMM))
	}
	if worst > bowMM+0.3 || worst < bowMM/4 {
		t.Errorf("calibrated position off by up to %.3f mm, want about the bow %.3f mm", worst, bowMM)
	}

	tone := DemoRig()
	tone.DurationS = 8
	tone.Position = PositionSensor{Kind: SensorTone, VoltsPerMM: 0.0015, OffsetV: 0.1, RangeMM: 400, CarrierHz: 1000, NoiseV: 0.001}
	rec, truth, err = Simulate(t.Context(), tone, "parcel", SimOptions{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	pos = rec.Channels[2].Samples
	period := int(math.Round(fs / tone.Position.CarrierHz))
	for n := 0; n < len(truth.Lines); n += 25 {
		l := truth.Lines[n]
		i := int(math.Round((l.FieldStartS + l.FieldEndS) / 2 * fs))
		if i+period >= len(pos) {
			break
		}
		// Peak amplitude of a sine = sqrt(2)·RMS over whole periods.
		sum := 0.0
		for k := i - period; k < i+period; k++ {
			sum += float64(pos[k]) * float64(pos[k])
		}
		peak := math.Sqrt(2 * sum / float64(2*period))
		want := tone.Position.OffsetV + tone.Position.VoltsPerMM*l.YMM
		if math.Abs(peak-want) > 0.001 {
			t.Errorf("line %d at %.1f mm: tone amplitude %.4f V, want %.4f V", l.Number, l.YMM, peak, want)
		}
	}
}

// TestBackSteps checks the hand's back-steps: each moves the head back by
// back_step_mm (two reversals), the stroke still ends at the far end, and
// the truth numbers the passes by reversals.
func TestBackSteps(t *testing.T) {
	r := DemoRig()
	r.Motion.BackStepCount, r.Motion.BackStepMM = 2, 15
	_, truth, err := Simulate(t.Context(), r, "parcel", SimOptions{Seed: 12})
	if err != nil {
		t.Fatal(err)
	}
	if len(truth.ReversalsS) != 4 {
		t.Fatalf("%d reversals, want 4: %v", len(truth.ReversalsS), truth.ReversalsS)
	}
	last := truth.Lines[len(truth.Lines)-1]
	if last.YMM != 400 || last.Stroke != 4 {
		t.Errorf("last line at %g mm in pass %d, want 400 mm in pass 4", last.YMM, last.Stroke)
	}
	// The depth of each back-step: the highest y before the reversal minus
	// the lowest after it, from the lines (0.8 mm apart at most).
	for k := 0; k < 4; k += 2 {
		top, bottom := 0.0, 1e9
		for _, l := range truth.Lines {
			if l.Stroke == k {
				top = math.Max(top, l.YMM)
			}
			if l.Stroke == k+1 {
				bottom = math.Min(bottom, l.YMM)
			}
		}
		if d := top - bottom; math.Abs(d-15) > 1 {
			t.Errorf("back-step %d moved %.2f mm back, want 15 mm", k/2+1, d)
		}
	}
}
