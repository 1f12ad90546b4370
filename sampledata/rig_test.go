package sampledata

import (
	"bytes"
	"encoding/json"
	"reflect"
	"strings"
	"testing"

	"spotloom/recon/recipe"
)

func TestDemoRigIsValidAndOurOwn(t *testing.T) {
	r := DemoRig()
	if err := r.Validate(); err != nil {
		t.Fatalf("demo rig: %v", err)
	}
	// The demo must not use the trade's check values (330 rev/min, four
	// apertures, 25° field; common practice, no published source).
	if r.Wheel.RevPerMin == 330 || r.Wheel.ApertureCount == 4 || r.FieldDeg == 25 {
		t.Errorf("demo rig uses the check values: %g rev/min, %d apertures, %g°", r.Wheel.RevPerMin, r.Wheel.ApertureCount, r.FieldDeg)
	}
	want := [...]float64{6, 420, 30, 500, 5, 96000, 3}
	got := [...]float64{float64(r.Wheel.ApertureCount), r.Wheel.RevPerMin, r.FieldDeg, r.DistanceMM, r.SpotFWHMMM, r.SampleRateHz, float64(len(r.channelNames()))}
	if got != want {
		t.Errorf("demo rig = %v, want %v", got, want)
	}
}

// TestSoundCardRigIsValid: the sound-card rig passes the rig check, reads
// its position as a tone and records the detector through a high-pass.
func TestSoundCardRigIsValid(t *testing.T) {
	r := SoundCardRig()
	if err := r.Validate(); err != nil {
		t.Fatalf("sound-card rig: %v", err)
	}
	if r.Position.Kind != SensorTone || !(r.Detector.ACCouplingCornerHz > 0) || r.Recipe().Rows.Source != recipe.SourceTone {
		t.Errorf("sound-card rig: position %q, corner %g Hz", r.Position.Kind, r.Detector.ACCouplingCornerHz)
	}
}

func TestRigJSONRoundTrip(t *testing.T) {
	r := DemoRig()
	back, err := ParseRig(r.JSON())
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(back, r) {
		t.Errorf("round trip changed the rig:\n%s\n%s", r.JSON(), back.JSON())
	}
	// Every key of the JSON carries a unit or is a name, kind, count or list.
	var tree map[string]any
	if err := json.Unmarshal(r.JSON(), &tree); err != nil {
		t.Fatal(err)
	}
	unitless := map[string]bool{"format": true, "name": true, "kind": true, "wheel": true, "index": true, "motion": true,
		"position_sensor": true, "detector": true, "adc": true, "bits": true}
	var walk func(prefix string, m map[string]any)
	walk = func(prefix string, m map[string]any) {
		for k, v := range m {
			if sub, ok := v.(map[string]any); ok {
				walk(prefix+k+".", sub)
			}
			if unitless[k] {
				continue
			}
			ok := false
			for _, suffix := range []string{"_hz", "_s", "_deg", "_mm", "_pct", "_v", "_cps", "_per_min", "_per_mm", "_per_rev", "_count", "_mcps", "_per_step"} {
				if strings.HasSuffix(k, suffix) {
					ok = true
				}
			}
			if !ok {
				t.Errorf("key %s%s has no unit in its name", prefix, k)
			}
		}
	}
	walk("", tree)
}

// rigWith returns the demo rig JSON with one key changed (value "" deletes it).
func rigWith(t *testing.T, path, value string) []byte {
	t.Helper()
	var tree map[string]any
	if err := json.Unmarshal(DemoRig().JSON(), &tree); err != nil {
		t.Fatal(err)
	}
	keys := strings.Split(path, ".")
	m := tree
	for _, k := range keys[:len(keys)-1] {
		m = m[k].(map[string]any)
	}
	last := keys[len(keys)-1]
	if value == "" {
		delete(m, last)
	} else {
		var v any
		if err := json.Unmarshal([]byte(value), &v); err != nil {
			t.Fatal(err)
		}
		m[last] = v
	}
	data, err := json.Marshal(tree)
	if err != nil {
		t.Fatal(err)
	}
	return data
}

func TestRigErrorsNameTheKeyAndRange(t *testing.T) {
	cases := []struct {
		path, value string
		want        []string
	}{
		{"wheel.rev_per_min", "", []string{"wheel.rev_per_min is missing", "greater than 0"}},
		{"distance_mm", "", []string{"distance_mm is missing", "greater than 0 and at most 100000 mm"}},
		{"wheel.rev_per_min", "-420", []string{"wheel.rev_per_min is -420", "greater than 0"}},
		{"spot_fwhm_mm", "-5", []string{"spot_fwhm_mm is -5", "greater than 0"}},
		{"detector.dark_rate_cps", "-1", []string{"detector.dark_rate_cps is -1", "from 0 to"}},
		// Six apertures are 60° apart: a 65° field leaves no beam-off gap.
		{"field_deg", "65", []string{"field_deg is 65", "below 60", "aperture spacing is 60°"}},
		// 5 mm spot, beam at the 15° field edge 500·ω/cos²15° ≈ 23.9 m/s at
		// the fastest wheel speed: 2 samples per spot need ≈ 9.6 kHz.
		{"sample_rate_hz", "5000", []string{"sample_rate_hz is 5000", "samples per spot width", "at least 9"}},
		// 0.1° at 420 rev/min is swept in 40 µs: 3.8 samples at 96 kHz.
		{"field_deg", "0.1", []string{"sample_rate_hz is 96000 (3.8 samples across the field)", "for 16 samples across the 0.1° field"}},
		{"duration_s", "2000", []string{"duration_s is 2000 (1.92e+08 samples at 96000 Hz)", "at most 1041.67 s at this rate"}},
		// Each stop takes at most 0.6 s (a back-step) plus 0.3 s of tapers and
		// must fit in half its share of 80 % of 12 s: 0.4·12/0.9 → 5.
		{"motion.pause_count", "10", []string{"motion.pause_count is 10 with 0 back-steps", "at most 5 pauses and back-steps together"}},
		{"motion.back_step_mm", "150", []string{"motion.back_step_mm is 150", "from 0 to 100 mm"}},
		{"index.pulses_per_rev", "4", []string{"index.pulses_per_rev is 4", "1 (once per revolution) or 6"}},
		{"motion.kind", `"rocket"`, []string{`motion.kind is "rocket"`, "hand, motor, stepper"}},
		{"position_sensor.kind", `"none"`, []string{"position_sensor.kind", "hand-driven head needs a position sensor"}},
		{"wheel.aperture_errors_deg", "[0, 0.1]", []string{"wheel.aperture_errors_deg", "one value per aperture (6)"}},
		{"wheel.spin_direction", `"cw"`, []string{`rig: unknown key "wheel.spin_direction" at line 1, column `, `in "wheel": allowed keys are aperture_count, rev_per_min`}},
		{"wheel.rev_per_min", `"fast"`, []string{`rig: key "wheel.rev_per_min" at line 1, column `, `holds the text "fast", expected a number`}},
	}
	for _, c := range cases {
		_, err := ParseRig(rigWith(t, c.path, c.value))
		if err == nil {
			t.Errorf("%s=%s: no error", c.path, c.value)
			continue
		}
		msg := err.Error()
		if strings.Contains(msg, "\n") {
			t.Errorf("%s=%s: error has more than one line: %q", c.path, c.value, msg)
		}
		for _, w := range c.want {
			if !strings.Contains(msg, w) {
				t.Errorf("%s=%s: error %q does not contain %q", c.path, c.value, msg, w)
			}
		}
	}
}

func TestOptionalKeysMayBeLeftOut(t *testing.T) {
	data := rigWith(t, "wheel.aperture_errors_deg", "")
	r, err := ParseRig(data)
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Wheel.ApertureErrorsDeg) != 0 {
		t.Errorf("errors = %v, want none", r.Wheel.ApertureErrorsDeg)
	}
}

func TestToneNeedsPositiveAmplitude(t *testing.T) {
	r := DemoRig()
	r.Position.Kind = SensorTone
	r.Position.CarrierHz = 1000
	// offset −0.8 V at 0 mm: the tone's amplitude would be negative.
	err := r.Validate()
	if err == nil || !strings.Contains(err.Error(), "position_sensor.offset_v") || !strings.Contains(err.Error(), "above 0 V") {
		t.Fatalf("err = %v, want offset_v above 0 V", err)
	}
	r.Position.OffsetV = 0.05
	r.Position.VoltsPerMM = 0.002
	if err := r.Validate(); err != nil {
		t.Fatal(err)
	}
}

func TestUnknownScene(t *testing.T) {
	_, err := Scene("teapot")
	if err == nil || !strings.Contains(err.Error(), "parcel, dot-grid, edge-card, bars, sheet") {
		t.Fatalf("err = %v", err)
	}
}

// TestCommonPracticeTiming: a wheel at 330 rev/min with 4 apertures gives
// 22 lines/s and sweeps a 25° field in about 12.6 ms (the trade quotes 12–15
// ms). Common practice, no published source. Checked both on the nominal
// figures and on the simulated line times.
func TestCommonPracticeTiming(t *testing.T) {
	r := DemoRig()
	r.Wheel.ApertureCount = 4
	r.Wheel.RevPerMin = 330
	r.Wheel.WobblePct, r.Wheel.RevJitterPct = 0, 0
	r.Wheel.ApertureErrorsDeg = nil
	r.Index.PulsesPerRev = 4
	r.FieldDeg = 25
	r.DurationS = 2
	if got := r.LineRateHz(); got != 22 {
		t.Errorf("line rate %g, want 22 lines/s", got)
	}
	if got := r.SweepS() * 1000; got < 12.5 || got > 12.7 {
		t.Errorf("sweep %g ms, want about 12.6 ms", got)
	}
	_, truth, err := SimulateScene(t.Context(), r, dotGridScene(), SimOptions{Seed: 3, Noiseless: true})
	if err != nil {
		t.Fatal(err)
	}
	lines := truth.Lines
	rate := float64(len(lines)-1) / (lines[len(lines)-1].FieldStartS - lines[0].FieldStartS)
	if rate < 21.99 || rate > 22.01 {
		t.Errorf("simulated line rate %g lines/s, want 22", rate)
	}
	for _, l := range lines {
		if ms := (l.FieldEndS - l.FieldStartS) * 1000; ms < 12.5 || ms > 12.7 || ms < 12 || ms > 15 {
			t.Fatalf("line %d sweeps in %g ms, want about 12.6 (12–15)", l.Number, ms)
		}
	}
}

func TestDemoRecipe(t *testing.T) {
	r := DemoRecipe()
	if err := r.Validate(); err != nil {
		t.Fatalf("demo recipe does not validate: %v", err)
	}
	if r.Sweep.DelayDeg != nil || r.Timing.Threshold != nil || r.Timing.Hysteresis != nil || r.Sweep.SinePeriodS != nil {
		t.Errorf("automatic values are set: %s", r.JSON())
	}
	if r.Channels.Detector != "0" || r.Channels.Index != "1" || r.Channels.Position != "2" {
		t.Errorf("channels %+v", r.Channels)
	}
	if r.Sweep.Apertures != 6 || r.Timing.PulsesPerRev != 6 || r.Sweep.FieldDeg != 30 || r.Sweep.DistanceMM != 500 ||
		r.Sweep.Projection != "flat" || r.Image.PitchMM != 1 || r.Rows.Source != "position" {
		t.Errorf("recipe does not match the rig: %s", r.JSON())
	}
	// The calibration is the sensor's nominal line: 0.004 V/mm from −0.8 V.
	want := [][2]float64{{-0.8, 0}, {0.8, 400}}
	if !reflect.DeepEqual(r.Rows.Calibration, want) {
		t.Errorf("calibration %v, want %v", r.Rows.Calibration, want)
	}
}

func TestRecipeForOtherRigs(t *testing.T) {
	tone := DemoRig()
	tone.Position = PositionSensor{Kind: SensorTone, VoltsPerMM: 0.0015, OffsetV: 0.1, RangeMM: 400, CarrierHz: 2000}
	stepper := stepperRig()
	motor := DemoRig()
	motor.Motion.Kind = MotionMotor
	motor.Motion.StartRestS = 0
	motor.Position.Kind = SensorNone
	cases := []struct {
		name  string
		rig   Rig
		check func(r recipe.Recipe) bool
	}{
		{"tone", tone, func(r recipe.Recipe) bool {
			return r.Rows.Source == "tone" && r.Rows.CarrierHz != nil && *r.Rows.CarrierHz == 2000 &&
				r.Rows.Calibration[0] == [2]float64{0.1, 0} && r.Rows.Calibration[1] == [2]float64{0.1 + 0.0015*400, 400}
		}},
		{"stepper", stepper, func(r recipe.Recipe) bool {
			return r.Rows.Source == "steps" && r.Channels.Steps == "2" && r.Channels.Position == "" &&
				r.Rows.MMPerStep != nil && *r.Rows.MMPerStep == 0.5
		}},
		{"motor", motor, func(r recipe.Recipe) bool {
			return r.Rows.Source == "even" && r.Rows.SpeedMMS != nil && *r.Rows.SpeedMMS == 400.0/12
		}},
	}
	for _, c := range cases {
		if err := c.rig.Validate(); err != nil {
			t.Errorf("%s rig: %v", c.name, err)
			continue
		}
		r := c.rig.Recipe()
		if err := r.Validate(); err != nil {
			t.Errorf("%s recipe: %v", c.name, err)
		}
		if !c.check(r) {
			t.Errorf("%s recipe: %s", c.name, r.JSON())
		}
	}
}

// stepperRig is the demo rig with a stepper-driven head and no position
// sensor: 0.5 mm steps over 400 mm in 12 s.
func stepperRig() Rig {
	r := DemoRig()
	r.Motion = Motion{Kind: MotionStepper, TravelMM: 400, StrokeS: 12, StrokeCount: 1, StartRestS: 1,
		MMPerStep: 0.5, StepPulseS: 0.002, StepLevelV: 0.7}
	r.Position = PositionSensor{Kind: SensorNone}
	return r
}

// A rig file is read by the same strict parser as a recipe: a byte-order
// mark is accepted, a key given twice and a null quantity are errors with
// the key and its line:column.
func TestRigStrictJSON(t *testing.T) {
	data := DemoRig().JSON()
	r, err := ParseRig(append([]byte("\xEF\xBB\xBF"), data...))
	if err != nil {
		t.Fatalf("rig with a byte-order mark: %v", err)
	}
	if !bytes.Equal(r.JSON(), data) {
		t.Errorf("BOM rig parsed differently")
	}
	// The indented rig has "name" on line 3; give it again just after.
	dup := bytes.Replace(data, []byte(`"name": `), []byte(`"name": "again", "name": `), 1)
	if _, err := ParseRig(dup); err == nil || !strings.Contains(err.Error(), `rig: key "name" at line 3, column 20 is given twice (first at line 3, column 3)`) {
		t.Errorf("duplicate key: %v", err)
	}
	null := rigWith(t, "wheel.rev_per_min", "null")
	if _, err := ParseRig(null); err == nil || !strings.Contains(err.Error(), `key "wheel.rev_per_min" at line 1, column`) || !strings.Contains(err.Error(), "is null: give a number") {
		t.Errorf("null quantity: %v", err)
	}
}

func TestMirrorRigRules(t *testing.T) {
	// A resonant mirror makes a forward and a backward line per period
	// and has one index pulse per period (Rig.Sweep, SweepSine).
	if err := MirrorRig().Validate(); err != nil {
		t.Fatalf("the mirror rig: %v", err)
	}
	for name, edit := range map[string]func(*Rig){
		"wheel.aperture_count":      func(r *Rig) { r.Wheel.ApertureCount = 6 },
		"index.pulses_per_rev":      func(r *Rig) { r.Index.PulsesPerRev = 2 },
		"wheel.aperture_errors_deg": func(r *Rig) { r.Wheel.ApertureErrorsDeg = []float64{0, 0.1} },
		"sweep":                     func(r *Rig) { r.Sweep = "polygon" },
	} {
		r := MirrorRig()
		edit(&r)
		if err := r.Validate(); err == nil || !strings.Contains(err.Error(), name) {
			t.Errorf("%s: %v", name, err)
		}
	}
	if r := MirrorRig().Recipe(); r.Sweep.Law != "sine" || r.Signal.Baseline != "none" || r.Timing.PulsesPerRev != 1 {
		t.Errorf("mirror recipe: law %s, baseline %s, %d pulses per revolution", r.Sweep.Law, r.Signal.Baseline, r.Timing.PulsesPerRev)
	}
}
