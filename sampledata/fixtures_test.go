package sampledata

import (
	"bytes"
	"flag"
	"os"
	"path/filepath"
	"testing"
)

var updateFixtures = flag.Bool("update", false, "rewrite the rig fixtures in testdata/sampledata")

// fixtureRigs are the rig files in testdata/sampledata, each the demo rig
// with a few changes.
func fixtureRigs() map[string]Rig {
	stepper := stepperRig()
	stepper.Name = "stepper bench, no position sensor"
	stepper.DurationS = 14

	tone := DemoRig()
	tone.Name = "sound card with a tone-fed potentiometer"
	tone.Position = PositionSensor{Kind: SensorTone, VoltsPerMM: 0.0015, OffsetV: 0.1, RangeMM: 400,
		NonlinearityPct: 0.3, NoiseV: 0.001, CarrierHz: 1500}
	tone.Detector.ACCouplingCornerHz = 5
	tone.Motion.StartRestS, tone.Motion.StrokeS, tone.Motion.StrokeCount, tone.Motion.TurnRestS = 1, 8, 2, 1
	tone.Motion.BackStepCount, tone.Motion.BackStepMM = 1, 20

	motor := DemoRig()
	motor.Name = "motor carriage at constant speed, once-per-revolution index"
	motor.DurationS = 10
	motor.Motion = Motion{Kind: MotionMotor, TravelMM: 300, StrokeS: 10, StrokeCount: 1}
	motor.Position = PositionSensor{Kind: SensorNone}
	motor.Index.PulsesPerRev = 1
	motor.Index.LeadDeg = 20

	bad := DemoRig()
	bad.Wheel.RevPerMin = -420
	return map[string]Rig{
		"stepper.rig.json":            stepper,
		"tone.rig.json":               tone,
		"motor.rig.json":              motor,
		"bad-negative-speed.rig.json": bad,
	}
}

// TestFixturesUpToDate checks the committed rig fixtures against
// fixtureRigs; "go test ./sampledata -run TestFixturesUpToDate -update"
// rewrites them.
func TestFixturesUpToDate(t *testing.T) {
	dir := filepath.Join("..", "testdata", "sampledata")
	for name, rig := range fixtureRigs() {
		path := filepath.Join(dir, name)
		want := rig.JSON()
		if *updateFixtures {
			if err := os.WriteFile(path, want, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		got, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s is out of date: run go test ./sampledata -run TestFixturesUpToDate -update", path)
		}
		_, err = ParseRig(got)
		if (err == nil) == (name == "bad-negative-speed.rig.json") {
			t.Errorf("%s: ParseRig error %v", name, err)
		}
	}
}
