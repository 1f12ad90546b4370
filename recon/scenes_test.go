package recon

import (
	"context"
	"math"
	"testing"

	"spotloom/sampledata"
)

// Every built-in scene builds with the demo rig's recipe, with the delay
// and speed found within the limits of the truth (the rig's own
// numbers), and the report's line rate agrees with the closed form.
func TestEveryScene(t *testing.T) {
	for _, name := range sampledata.SceneNames() {
		rig := sampledata.DemoRig()
		rec, truth, err := sampledata.Simulate(context.Background(), rig, name, sampledata.SimOptions{Seed: 5, DurationS: 8})
		if err != nil {
			t.Fatal(err)
		}
		r := rig.Recipe()
		r.Sweep.ApertureOffsetsDeg = truth.ApertureOffsetsDeg
		res, err := NewSession(rec).Build(context.Background(), r, nil)
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		rep := res.Report
		t.Logf("%s: delay %.3f (truth %.3f), rpm %.3f (truth %.3f), lines %d (truth %d), warnings %q", name, rep.DelayDeg, truth.DelayDeg, rep.RPMMean, truth.RevPerMinMean, rep.Lines, len(truth.Lines), rep.Warnings)
		if math.Abs(rep.DelayDeg-truth.DelayDeg) > 0.3 {
			t.Errorf("%s: delay %.3f°, truth %.3f°", name, rep.DelayDeg, truth.DelayDeg)
		}
		if math.Abs(rep.RPMMean-truth.RevPerMinMean)/truth.RevPerMinMean > 0.002 {
			t.Errorf("%s: rpm %.3f, truth %.3f", name, rep.RPMMean, truth.RevPerMinMean)
		}
		if rep.Lines != len(truth.Lines) {
			t.Errorf("%s: %d lines, truth %d", name, rep.Lines, len(truth.Lines))
		}
		// Closed form for a wheel with one index pulse per aperture: line
		// rate = apertures × rev/min / 60, here from the report's own two
		// figures, which the engine measures separately (lines from the
		// line periods, rev/min from whole revolutions).
		if want := float64(r.Sweep.Apertures) * rep.RPMMean / 60; math.Abs(rep.LineRateHz-want) > 0.002*want {
			t.Errorf("%s: line rate %.3f/s, apertures × rpm / 60 = %.3f/s", name, rep.LineRateHz, want)
		}
	}
}

// Each way the simulator reads the head (DC potentiometer, tone on an
// AC-coupled input, stepper pulses, a motor of known speed) gives line
// positions close to the truth's.
func TestEveryPositionSource(t *testing.T) {
	variants := map[string]func(r *sampledata.Rig){
		"dc": func(r *sampledata.Rig) { r.Position.NonlinearityPct = 0 },
		"tone": func(r *sampledata.Rig) {
			r.Position.Kind = sampledata.SensorTone
			r.Position.CarrierHz = 1500
			r.Position.OffsetV = 0.1
			r.Position.VoltsPerMM = 0.0015
			r.Position.NonlinearityPct = 0
		},
		"stepper": func(r *sampledata.Rig) {
			r.Motion.Kind = sampledata.MotionStepper
			r.Motion.MMPerStep = 0.25
			r.Motion.StepPulseS = 0.0005
			r.Motion.StepLevelV = 0.7
			r.Position.Kind = sampledata.SensorNone
		},
		"motor": func(r *sampledata.Rig) {
			r.Motion.Kind = sampledata.MotionMotor
			r.Motion.StartRestS = 0 // source even: moving from the first sample
			r.Position.Kind = sampledata.SensorNone
		},
	}
	for name, edit := range variants {
		rig := sampledata.DemoRig()
		rig.DurationS = 10
		rig.Motion.StartRestS = 1
		rig.Motion.StrokeS = 8
		rig.Motion.TravelMM = 200
		rig.Motion.PauseCount = 0
		edit(&rig)
		if err := rig.Validate(); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		rec, truth, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 9})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		res, err := NewSession(rec).Build(context.Background(), rig.Recipe(), nil)
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		// Step counts start from zero at the first sample: compare the
		// head's travel there, not its absolute position.
		shift := 0.0
		if name == "stepper" {
			shift = truth.Lines[0].YMM - res.Lines[0].YMM
		}
		worst := 0.0
		n := min(len(res.Lines), len(truth.Lines))
		for i := 0; i < n; i++ {
			if name == "motor" && truth.Lines[i].FieldEndS > rig.Motion.StrokeS {
				break // the motor stops at the end of its stroke; source even does not
			}
			worst = math.Max(worst, math.Abs(res.Lines[i].YMM+shift-truth.Lines[i].YMM))
		}
		t.Logf("%s: worst line position error %.3f mm over %d lines; warnings %q", name, worst, n, res.Report.Warnings)
		if worst > 0.5 {
			t.Errorf("%s: line positions up to %.3f mm from the truth", name, worst)
		}
	}
}

// One index pulse per revolution: lines at equal fractions of it, the
// delay and offsets measured as the truth defines them for that case
// (offset k after delay + k·360°/apertures), every line found.
func TestOnePulsePerRevolutionAgainstTruth(t *testing.T) {
	ctx := context.Background()
	rig := sampledata.DemoRig()
	rig.DurationS = 8
	rig.Index.PulsesPerRev = 1
	rig.Position.NonlinearityPct = 0 // the two-point calibration cannot know a bow
	rec, truth, err := sampledata.Simulate(ctx, rig, "dot-grid", sampledata.SimOptions{Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	s := NewSession(rec)
	r := rig.Recipe()
	off, err := EstimateApertureOffsets(ctx, s, r)
	if err != nil {
		t.Fatal(err)
	}
	r.Sweep.ApertureOffsetsDeg = off
	res, err := s.Build(ctx, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	for k := range off {
		got := res.Report.DelayDeg + off[k]
		want := truth.DelayDeg + truth.ApertureOffsetsDeg[k]
		if math.Abs(got-want) > 0.3 {
			t.Errorf("aperture %d field starts %.3f° after its line start, truth %.3f°", k, got, want)
		}
	}
	if len(res.Lines) != len(truth.Lines) {
		t.Errorf("%d lines, truth %d", len(res.Lines), len(truth.Lines))
	}
	if e := math.Abs(res.Report.RPMMean-truth.RevPerMinMean) / truth.RevPerMinMean; e > 0.002 {
		t.Errorf("rpm %.3f, truth %.3f", res.Report.RPMMean, truth.RevPerMinMean)
	}
	rms, sx, sy, n := truthDotFit(t, res.Frames[0], truth.Dots, truth.DotDiameterMM)
	t.Logf("one pulse per revolution: %d dots, rms %.3f mm, scale %.5f %.5f, offsets %.3f (truth %.3f)", n, rms, sx, sy, off, truth.ApertureOffsetsDeg)
	if rms > 0.5 || math.Abs(sx-1) > 0.005 {
		t.Errorf("rms %.3f mm, scale x %.5f", rms, sx)
	}
}
