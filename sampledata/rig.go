package sampledata

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"reflect"
	"strings"

	"spotloom/internal/strictjson"
)

// RigFormat is the value of the "format" key of every rig file.
const RigFormat = "spotloom-rig/1"

// Rig describes a flying-spot scanner to simulate: a collimator wheel turning
// in front of a source, an index sensor on the wheel, a scan head moved across
// the scene, a position sensor on the head, a detector chain and an ADC. Every
// quantity carries its unit in its JSON name.
//
// Geometry. The wheel angle grows with time at the wheel's rate. Wheel
// aperture j (j = 0 … aperture_count−1) opens the field when the wheel angle
// is j·360°/aperture_count + aperture_errors_deg[j] (modulo 360°) and closes
// it field_deg later; while open, the beam angle from the field axis is
// θ = (wheel angle − field start angle) − field_deg/2, so the sweep runs from
// −field_deg/2 to +field_deg/2 at the wheel's angular rate. The beam meets the
// target plane at distance_mm at x = distance_mm·tan θ (x = 0 on the field
// axis). Between fields the beam is off.
type Rig struct {
	Format       string         `json:"format"`
	Name         string         `json:"name" rig:"optional"`
	SampleRateHz float64        `json:"sample_rate_hz"`
	DurationS    float64        `json:"duration_s"`
	FieldDeg     float64        `json:"field_deg"`    // full sweep angle of one line
	DistanceMM   float64        `json:"distance_mm"`  // source to target plane
	SpotFWHMMM   float64        `json:"spot_fwhm_mm"` // beam spot full width at half maximum on the target plane
	Wheel        Wheel          `json:"wheel"`
	Index        IndexSensor    `json:"index"`
	Motion       Motion         `json:"motion"`
	Position     PositionSensor `json:"position_sensor"`
	Detector     Detector       `json:"detector"`
	ADC          ADC            `json:"adc"`
	// Sweep is "wheel" (or empty) for a collimator wheel or polygon, or
	// "sine" for a resonant mirror (see SweepSine).
	Sweep string `json:"sweep,omitempty" rig:"optional"`
}

// Sweep kinds of a rig.
const (
	SweepWheel = "wheel"
	// SweepSine is a resonant mirror. The wheel then describes the
	// mirror's phase: rev_per_min is 60 × the oscillation frequency (its
	// wobble a slow drift of the frequency), the wheel angle is the phase
	// φ, and the beam angle is θ = (field_deg/2)·sin φ, so field_deg is
	// the full swing. aperture_count is 2: a forward line while φ runs
	// from −90° to 90° and a backward line from 90° to 270°, the beam
	// always on. The index sensor fires once per period (pulses_per_rev
	// 1), lead_deg of phase before φ = 0, which is the recipe's
	// sweep.delay_deg for the sine law.
	SweepSine = "sine"
)

func (r Rig) sine() bool { return r.Sweep == SweepSine }

// fieldSpanDeg is the wheel rotation (or mirror phase) a field lasts.
func (r Rig) fieldSpanDeg() float64 {
	if r.sine() {
		return 180
	}
	return r.FieldDeg
}

// fieldOriginDeg is the wheel angle at which aperture 0's nominal field
// opens: 0 for a wheel, φ = −90° for a mirror's forward line.
func (r Rig) fieldOriginDeg() float64 {
	if r.sine() {
		return -90
	}
	return 0
}

// beamAngleRad is the beam angle from the field axis at wheel angle phi
// inside the field that opened at startDeg.
func (r Rig) beamAngleRad(phi, startDeg float64) float64 {
	const rad = math.Pi / 180
	if r.sine() {
		return r.FieldDeg / 2 * rad * math.Sin(phi*rad)
	}
	return (phi - startDeg - r.FieldDeg/2) * rad
}

// beamRateRadS is the fastest angular rate of the beam at the mean speed.
func (r Rig) beamRateRadS() float64 {
	omega := r.Wheel.RevPerMin * 2 * math.Pi / 60
	if r.sine() {
		return r.FieldDeg / 2 * math.Pi / 180 * omega
	}
	return omega
}

// Wheel is the rotating collimator wheel.
type Wheel struct {
	ApertureCount int     `json:"aperture_count"`
	RevPerMin     float64 `json:"rev_per_min"` // mean speed
	// WobblePct is the peak of a slow sinusoidal speed change, in percent of
	// rev_per_min, with period WobblePeriodS.
	WobblePct     float64 `json:"wobble_pct"`
	WobblePeriodS float64 `json:"wobble_period_s"`
	// RevJitterPct is the RMS of a random speed step drawn anew at every
	// revolution, in percent of rev_per_min.
	RevJitterPct float64 `json:"rev_jitter_pct"`
	// ApertureErrorsDeg is the angular error of each wheel aperture: aperture
	// j opens the field this many degrees later than its nominal place. Empty
	// means all zero.
	ApertureErrorsDeg []float64 `json:"aperture_errors_deg" rig:"optional"`
	// StartAngleDeg is the wheel angle at the first sample; empty (null) means
	// drawn from the seed. The simulator moves it out of any index pulse so
	// that the capture never starts inside one.
	StartAngleDeg *float64 `json:"start_angle_deg" rig:"optional"`
}

// IndexSensor is the sensor that marks the wheel's position.
type IndexSensor struct {
	// PulsesPerRev is aperture_count (one mark per aperture, LeadDeg before
	// each aperture's nominal field start) or 1 (one mark, LeadDeg before the
	// nominal field start of wheel aperture 0).
	PulsesPerRev  int     `json:"pulses_per_rev"`
	LeadDeg       float64 `json:"lead_deg"`        // mark angle before the nominal field start
	PulseWidthDeg float64 `json:"pulse_width_deg"` // wheel rotation while the pulse is high
	// RiseTimeS is the length of the linear ramp of each edge; the index
	// edge time is the middle of the rising ramp (the 50 % crossing).
	RiseTimeS float64 `json:"rise_time_s"`
	JitterS   float64 `json:"jitter_s"` // RMS timing jitter of each edge
	LevelV    float64 `json:"level_v"`  // pulse height (the low level is 0 V)
	NoiseV    float64 `json:"noise_v"`  // RMS Gaussian noise
}

// Motion kinds.
const (
	MotionHand    = "hand"    // a head pushed by hand: smooth random speed with pauses
	MotionMotor   = "motor"   // constant speed
	MotionStepper = "stepper" // equal steps, one pulse per step on a steps channel
)

// Motion is the cross-scan movement of the head. The head rests StartRestS
// at StartMM, then makes StrokeCount strokes of TravelMM, each StrokeS long,
// alternately forward and back, resting TurnRestS at each turn, and rests at
// the end until the capture ends.
type Motion struct {
	Kind        string  `json:"kind"`
	StartMM     float64 `json:"start_mm"`
	TravelMM    float64 `json:"travel_mm"`
	StrokeS     float64 `json:"stroke_s"`
	StrokeCount int     `json:"stroke_count"`
	StartRestS  float64 `json:"start_rest_s"`
	TurnRestS   float64 `json:"turn_rest_s" rig:"optional"`
	// Hand: SpeedVariationPct is the RMS speed change of a stroke around
	// its smooth mean profile; PauseCount pauses of PauseS each are put at
	// random places in each stroke.
	SpeedVariationPct float64 `json:"speed_variation_pct" rig:"optional"`
	PauseCount        int     `json:"pause_count" rig:"optional"`
	PauseS            float64 `json:"pause_s" rig:"optional"`
	// BackStepCount times in each stroke the hand stops, moves BackStepMM
	// back over 0.6 s and goes on (a reversal within the stroke).
	BackStepCount int     `json:"back_step_count" rig:"optional"`
	BackStepMM    float64 `json:"back_step_mm" rig:"optional"`
	// Stepper: MMPerStep per step, the steps evenly spread over the stroke;
	// each step is a pulse StepPulseS long and StepLevelV high on the steps
	// channel (with the index sensor's rise time), and the head moves the
	// step while the pulse is high.
	MMPerStep  float64 `json:"mm_per_step" rig:"optional"`
	StepPulseS float64 `json:"step_pulse_s" rig:"optional"`
	StepLevelV float64 `json:"step_level_v" rig:"optional"`
}

// Position sensor kinds.
const (
	SensorDC   = "dc"   // a DC level on the position channel
	SensorTone = "tone" // a carrier tone whose peak amplitude is the level
	SensorNone = "none" // no position channel
)

// PositionSensor is the sensor on the head (a potentiometer). Its level is
// OffsetV + VoltsPerMM·y plus a bow of NonlinearityPct of the span over
// RangeMM (largest in the middle of the range), plus noise. With kind "tone"
// the channel carries level·sin(2π·CarrierHz·t). SharesIndexInput puts that
// tone on the index channel, added to the pulses, as on a two-input sound
// card (the capture then has two channels: detector, index with tone).
type PositionSensor struct {
	Kind            string  `json:"kind"`
	VoltsPerMM      float64 `json:"volts_per_mm" rig:"optional"`
	OffsetV         float64 `json:"offset_v" rig:"optional"`
	RangeMM         float64 `json:"range_mm" rig:"optional"` // from motion.start_mm
	NonlinearityPct float64 `json:"nonlinearity_pct" rig:"optional"`
	NoiseV          float64 `json:"noise_v" rig:"optional"`
	CarrierHz       float64 `json:"carrier_hz" rig:"optional"`
	// SharesIndexInput: kind tone only; carrier_hz well above the line rate.
	SharesIndexInput bool `json:"shares_index_input,omitempty" rig:"optional"`
}

// Detector is the detector chain: photon counting, then the phosphor's
// afterglow, the amplifier's low-pass, AC coupling, gain and offset.
type Detector struct {
	FullScatterRateCPS float64 `json:"full_scatter_rate_cps"` // photons/s at scatter yield 1 on the field axis
	DarkRateCPS        float64 `json:"dark_rate_cps"`         // photons/s with the beam off
	AfterglowS         float64 `json:"afterglow_s"`           // phosphor decay time constant, 0 = none
	LowPassCornerHz    float64 `json:"low_pass_corner_hz"`    // amplifier single-pole corner, 0 = none
	ACCouplingCornerHz float64 `json:"ac_coupling_corner_hz"` // single-pole high-pass corner, 0 = DC coupled
	GainVPerMCPS       float64 `json:"gain_v_per_mcps"`       // volts per million photons per second
	OffsetV            float64 `json:"offset_v"`
	NoiseV             float64 `json:"noise_v"` // RMS electronics noise
}

// ADC is the converter shared by all channels.
type ADC struct {
	Bits       int     `json:"bits"`         // 0 = ideal (no quantisation), else 4 to 32
	FullScaleV float64 `json:"full_scale_v"` // inputs clip at ±full_scale_v
}

// MaxSamples is the longest capture the simulator makes, in samples per
// channel (it holds about 20 bytes per sample while it works).
const MaxSamples = 100_000_000

// minLineSamples is the fewest samples a line may span.
const minLineSamples = 16

// ApertureSpacingDeg is the nominal wheel angle between neighbouring apertures.
func (r Rig) ApertureSpacingDeg() float64 {
	if r.Wheel.ApertureCount <= 0 {
		return 360
	}
	return 360 / float64(r.Wheel.ApertureCount)
}

// LineRateHz is the nominal number of lines per second.
func (r Rig) LineRateHz() float64 {
	return r.Wheel.RevPerMin / 60 * float64(r.Wheel.ApertureCount)
}

// SweepS is the nominal time the beam takes to cross the field.
func (r Rig) SweepS() float64 {
	if r.Wheel.RevPerMin <= 0 {
		return 0
	}
	return r.fieldSpanDeg() / (r.Wheel.RevPerMin * 6)
}

// SpotSigmaMM is the standard deviation of the Gaussian beam spot:
// FWHM = 2·sqrt(2·ln 2)·σ.
func (r Rig) SpotSigmaMM() float64 { return r.SpotFWHMMM / fwhmPerSigma }

var fwhmPerSigma = 2 * math.Sqrt(2*math.Ln2)

// HalfWidthMM is the x of the field edge on the target plane.
func (r Rig) HalfWidthMM() float64 {
	return r.DistanceMM * math.Tan(r.FieldDeg/2*math.Pi/180)
}

// MirrorRig is our own resonant-mirror laser scanner, built from the
// demo rig: a mirror swinging 30° peak to peak at 100 Hz (a forward and a
// backward line every 10 ms), an index photodiode 30° of phase before the
// swing's centre, a 3 mm spot and a fast photodiode without afterglow.
func MirrorRig() Rig {
	r := DemoRig()
	r.Name = "resonant mirror"
	r.Sweep = SweepSine
	r.SpotFWHMMM = 3
	r.Wheel = Wheel{ApertureCount: 2, RevPerMin: 6000, WobblePct: 0.05, WobblePeriodS: 7}
	r.Index.PulsesPerRev = 1
	r.Index.LeadDeg = 30
	r.Index.PulseWidthDeg = 20
	r.Index.JitterS = 1e-6
	r.Detector.AfterglowS = 0
	r.Detector.LowPassCornerHz = 0
	return r
}

// DemoRig is our own demonstration rig: a six-aperture wheel at 420 rev/min
// sweeping a 30° field onto a plane 500 mm away with a 5 mm spot, read at
// 96 kHz on three channels (detector, index, position), and a head pushed by
// hand about 400 mm in about 12 s within a 20 s capture.
func DemoRig() Rig {
	return Rig{
		Format:       RigFormat,
		Name:         "demo bench wheel",
		SampleRateHz: 96000,
		DurationS:    20,
		FieldDeg:     30,
		DistanceMM:   500,
		SpotFWHMMM:   5,
		Wheel: Wheel{
			ApertureCount:     6,
			RevPerMin:         420,
			WobblePct:         0.6,
			WobblePeriodS:     4.5,
			RevJitterPct:      0.15,
			ApertureErrorsDeg: []float64{0, 0.12, -0.08, 0.05, -0.15, 0.09},
		},
		Index: IndexSensor{
			PulsesPerRev:  6,
			LeadDeg:       9,
			PulseWidthDeg: 4,
			RiseTimeS:     20e-6,
			JitterS:       3e-6,
			LevelV:        0.8,
			NoiseV:        0.01,
		},
		Motion: Motion{
			Kind:              MotionHand,
			StartMM:           0,
			TravelMM:          400,
			StrokeS:           12,
			StrokeCount:       1,
			StartRestS:        4,
			SpeedVariationPct: 25,
			PauseCount:        1,
			PauseS:            0.5,
		},
		Position: PositionSensor{
			Kind:            SensorDC,
			VoltsPerMM:      0.004,
			OffsetV:         -0.8,
			RangeMM:         400,
			NonlinearityPct: 0.4,
			NoiseV:          0.002,
		},
		Detector: Detector{
			FullScatterRateCPS: 5e6,
			DarkRateCPS:        2000,
			AfterglowS:         10e-6,
			LowPassCornerHz:    20000,
			ACCouplingCornerHz: 0,
			GainVPerMCPS:       0.25,
			OffsetV:            -0.8,
			NoiseV:             0.004,
		},
		ADC: ADC{Bits: 16, FullScaleV: 1},
	}
}

// JSON returns the rig as indented JSON ending in a newline.
func (r Rig) JSON() []byte {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	// A Rig holds only numbers, strings and slices: encoding cannot fail.
	_ = enc.Encode(r)
	return buf.Bytes()
}

// ParseRig decodes a rig file strictly (strictjson.Decode): unknown or
// repeated keys, wrong types and missing quantities are errors naming the
// key (with its line:column, or for a missing quantity its allowed range);
// the rig is then validated.
func ParseRig(data []byte) (Rig, error) {
	var r Rig
	present, err := strictjson.Decode(data, &r, "rig")
	if err != nil {
		var je *strictjson.Error
		if errors.As(err, &je) && je.Kind == strictjson.UnknownKey {
			return Rig{}, fmt.Errorf("%w (run \"spotloom simulate --print-rig\" for every key)", err)
		}
		return Rig{}, err
	}
	if path := firstMissing(reflect.TypeOf(r), present, ""); path != "" {
		allowed := r.allowed()[path]
		if allowed == "" {
			return Rig{}, fmt.Errorf("%s is missing", path)
		}
		return Rig{}, fmt.Errorf("%s is missing; allowed: %s", path, allowed)
	}
	if err := r.Validate(); err != nil {
		return Rig{}, err
	}
	return r, nil
}

// LoadRig reads and validates a rig file; errors start with the path.
func LoadRig(path string) (Rig, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return Rig{}, err
	}
	r, err := ParseRig(data)
	if err != nil {
		return Rig{}, fmt.Errorf("%s: %w", path, err)
	}
	return r, nil
}

// firstMissing walks the rig's struct type and returns the dotted path of
// the first required key the file did not give ("" when none). Keys tagged
// rig:"optional" may be left out.
func firstMissing(t reflect.Type, present strictjson.Present, prefix string) string {
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		name := strings.Split(f.Tag.Get("json"), ",")[0]
		if name == "" || name == "-" {
			continue
		}
		path := prefix + name
		if !present[path] {
			if f.Tag.Get("rig") == "optional" {
				continue
			}
			return path
		}
		if f.Type.Kind() == reflect.Struct {
			if p := firstMissing(f.Type, present, path+"."); p != "" {
				return p
			}
		}
	}
	return ""
}

// Validate checks every quantity; the error names the first bad key and its
// allowed range.
func (r Rig) Validate() error {
	c := checker{}
	r.check(&c)
	return c.err
}

// allowed maps every checked key to its allowed range, for messages about
// missing keys.
func (r Rig) allowed() map[string]string {
	c := checker{}
	r.check(&c)
	return c.allowed
}

// checker collects the first error and the allowed range of every key.
type checker struct {
	err     error
	allowed map[string]string
}

func (c *checker) note(path, allowed string) {
	if c.allowed == nil {
		c.allowed = map[string]string{}
	}
	c.allowed[path] = allowed
}

func (c *checker) fail(path, seen, allowed string) {
	c.note(path, allowed)
	if c.err == nil {
		c.err = fmt.Errorf("%s is %s; allowed: %s", path, seen, allowed)
	}
}

// bound is one end of a range.
type bound struct {
	v    float64
	open bool // excluded
}

func incl(v float64) bound { return bound{v: v} }
func excl(v float64) bound { return bound{v: v, open: true} }

func rangeText(lo, hi bound, unit string) string {
	u := ""
	if unit != "" {
		u = " " + unit
	}
	switch {
	case !lo.open && !hi.open:
		return fmt.Sprintf("from %g to %g%s", lo.v, hi.v, u)
	case lo.open && !hi.open:
		return fmt.Sprintf("greater than %g and at most %g%s", lo.v, hi.v, u)
	case !lo.open && hi.open:
		return fmt.Sprintf("from %g to below %g%s", lo.v, hi.v, u)
	}
	return fmt.Sprintf("greater than %g and below %g%s", lo.v, hi.v, u)
}

func (c *checker) num(path string, v float64, lo, hi bound, unit string) {
	allowed := rangeText(lo, hi, unit)
	c.note(path, allowed)
	bad := math.IsNaN(v) || math.IsInf(v, 0) ||
		v < lo.v || (lo.open && v == lo.v) || v > hi.v || (hi.open && v == hi.v)
	if bad {
		c.fail(path, fmt.Sprintf("%g", v), allowed)
	}
}

// numOrZero accepts 0 (meaning "none") or a value in the range.
func (c *checker) numOrZero(path string, v float64, lo, hi bound, unit, zeroMeans string) {
	allowed := fmt.Sprintf("0 (%s) or %s", zeroMeans, rangeText(lo, hi, unit))
	c.note(path, allowed)
	if v == 0 {
		return
	}
	bad := math.IsNaN(v) || math.IsInf(v, 0) ||
		v < lo.v || (lo.open && v == lo.v) || v > hi.v || (hi.open && v == hi.v)
	if bad {
		c.fail(path, fmt.Sprintf("%g", v), allowed)
	}
}

func (c *checker) choice(path, v string, options ...string) {
	allowed := strings.Join(options, ", ")
	c.note(path, allowed)
	for _, o := range options {
		if v == o {
			return
		}
	}
	c.fail(path, fmt.Sprintf("%q", v), allowed)
}

// checkSharedInput checks a position tone that shares the index input:
// the two must be told apart (the tone a narrow carrier at least ten line
// rates up, well clear of the pulse train's strongest lines) and their sum
// must fit the converter.
func (r Rig) checkSharedInput(c *checker) {
	p := r.Position
	c.note("position_sensor.shares_index_input", "true with kind tone, carrier_hz at least 10 line rates, index.level_v plus the tone's peak below adc.full_scale_v")
	if p.Kind != SensorTone {
		c.fail("position_sensor.shares_index_input", "true with kind "+fmt.Sprintf("%q", p.Kind), "false, or kind tone (only a tone can share the index input)")
		return
	}
	if lines := r.LineRateHz(); p.CarrierHz < 10*lines {
		c.fail("position_sensor.carrier_hz", fmt.Sprint(p.CarrierHz), fmt.Sprintf("at least %g Hz (10 line rates) when the tone shares the index input", 10*lines))
	}
	m := r.Motion
	peak := math.Max(math.Abs(p.OffsetV+p.VoltsPerMM*m.StartMM), math.Abs(p.OffsetV+p.VoltsPerMM*(m.StartMM+m.TravelMM)))
	peak *= 1 + p.NonlinearityPct/100
	if sum := math.Abs(r.Index.LevelV) + peak; sum >= r.ADC.FullScaleV {
		c.fail("index.level_v", fmt.Sprint(r.Index.LevelV), fmt.Sprintf("below %g V, so that the pulses on the tone's peak (%g V) stay inside the converter's %g V", r.ADC.FullScaleV-peak, peak, r.ADC.FullScaleV))
	}
}

func (r Rig) check(c *checker) {
	c.choice("format", r.Format, RigFormat)
	c.num("sample_rate_hz", r.SampleRateHz, excl(0), incl(1e9), "Hz")
	c.num("duration_s", r.DurationS, excl(0), incl(3600), "s")
	if samples := r.DurationS * r.SampleRateHz; samples > MaxSamples && c.err == nil {
		c.fail("duration_s", fmt.Sprintf("%g (%.3g samples at %g Hz)", r.DurationS, samples, r.SampleRateHz),
			fmt.Sprintf("at most %.6g s at this rate (%g samples per channel)", MaxSamples/r.SampleRateHz, float64(MaxSamples)))
	}
	c.num("distance_mm", r.DistanceMM, excl(0), incl(1e5), "mm")
	c.num("spot_fwhm_mm", r.SpotFWHMMM, excl(0), incl(1000), "mm")

	w := r.Wheel
	c.num("wheel.aperture_count", float64(w.ApertureCount), incl(1), incl(64), "")
	spacing := r.ApertureSpacingDeg()
	if w.ApertureCount < 1 || w.ApertureCount > 64 {
		spacing = 360
	}
	// The field must leave a beam-off gap before the next aperture, and the
	// flat projection needs the whole field within ±90°.
	fieldMax := math.Min(spacing, 170)
	c.choice("sweep", r.Sweep, "", SweepWheel, SweepSine)
	if r.sine() {
		// A mirror's forward and backward lines fill each period.
		fieldMax = 170
		if w.ApertureCount != 2 {
			c.fail("wheel.aperture_count", fmt.Sprint(w.ApertureCount), "2 for a resonant mirror (a forward and a backward line per period)")
		}
		if r.Index.PulsesPerRev != 1 {
			c.fail("index.pulses_per_rev", fmt.Sprint(r.Index.PulsesPerRev), "1 for a resonant mirror (one pulse per period)")
		}
		for _, e := range w.ApertureErrorsDeg {
			if e != 0 {
				c.fail("wheel.aperture_errors_deg", fmt.Sprint(w.ApertureErrorsDeg), "empty or zero for a resonant mirror")
				break
			}
		}
	}
	c.num("field_deg", r.FieldDeg, excl(0), excl(fieldMax), fmt.Sprintf("degrees (the aperture spacing is %g°)", spacing))
	c.num("wheel.rev_per_min", w.RevPerMin, excl(0), incl(60000), "rev/min")
	c.num("wheel.wobble_pct", w.WobblePct, incl(0), incl(20), "%")
	c.num("wheel.wobble_period_s", w.WobblePeriodS, excl(0), incl(1e4), "s")
	c.num("wheel.rev_jitter_pct", w.RevJitterPct, incl(0), incl(10), "%")
	// The spot must span at least two samples where the beam is fastest
	// (the field edge, highest wheel speed).
	if c.err == nil {
		vMax := r.maxBeamSpeedMMS()
		need := 2 * vMax / r.SpotFWHMMM
		if r.SampleRateHz < need {
			c.fail("sample_rate_hz", fmt.Sprintf("%g (%.2f samples per spot width at the field edge)", r.SampleRateHz, r.SampleRateHz*r.SpotFWHMMM/vMax),
				fmt.Sprintf("at least %.0f Hz for 2 samples per %g mm spot", math.Ceil(need), r.SpotFWHMMM))
		}
		// A line must span enough samples to be a line at all.
		sweepS := r.FieldDeg / (w.RevPerMin * 6 * (1 + (w.WobblePct+4*w.RevJitterPct)/100))
		if needLine := minLineSamples / sweepS; r.SampleRateHz < needLine {
			c.fail("sample_rate_hz", fmt.Sprintf("%g (%.1f samples across the field)", r.SampleRateHz, r.SampleRateHz*sweepS),
				fmt.Sprintf("at least %.0f Hz for %d samples across the %g° field", math.Ceil(needLine), minLineSamples, r.FieldDeg))
		}
	}
	gap := spacing - r.FieldDeg
	errMax := math.Max(0, math.Min(5, gap/4))
	if n := len(w.ApertureErrorsDeg); n != 0 && n != w.ApertureCount {
		c.fail("wheel.aperture_errors_deg", fmt.Sprintf("a list of %d", n),
			fmt.Sprintf("empty or one value per aperture (%d)", w.ApertureCount))
	}
	for i, e := range w.ApertureErrorsDeg {
		c.num(fmt.Sprintf("wheel.aperture_errors_deg[%d]", i), e, incl(-errMax), incl(errMax), "degrees")
	}
	if w.StartAngleDeg != nil {
		c.num("wheel.start_angle_deg", *w.StartAngleDeg, incl(-1e6), incl(1e6), "degrees")
	}

	ix := r.Index
	ppr := fmt.Sprintf("1 (once per revolution) or %d (wheel.aperture_count)", w.ApertureCount)
	c.note("index.pulses_per_rev", ppr)
	if ix.PulsesPerRev != 1 && ix.PulsesPerRev != w.ApertureCount {
		c.fail("index.pulses_per_rev", fmt.Sprint(ix.PulsesPerRev), ppr)
	}
	markSpacing := spacing
	if ix.PulsesPerRev == 1 {
		markSpacing = 360
	}
	c.num("index.lead_deg", ix.LeadDeg, incl(0), excl(markSpacing), "degrees")
	c.num("index.pulse_width_deg", ix.PulseWidthDeg, excl(0), excl(markSpacing/2), "degrees")
	pulseS := 0.0
	if w.RevPerMin > 0 {
		pulseS = ix.PulseWidthDeg / (w.RevPerMin * 6) * (1 - w.WobblePct/100)
	}
	c.num("index.rise_time_s", ix.RiseTimeS, incl(0), excl(math.Max(pulseS/2, 1e-300)), "s (half the pulse)")
	c.num("index.jitter_s", ix.JitterS, incl(0), incl(math.Max(pulseS/10, 0)), "s (a tenth of the pulse)")
	c.num("index.level_v", ix.LevelV, excl(0), incl(1e3), "V")
	c.num("index.noise_v", ix.NoiseV, incl(0), incl(math.Max(ix.LevelV/4, 0)), "V (a quarter of the level)")

	m := r.Motion
	c.choice("motion.kind", m.Kind, MotionHand, MotionMotor, MotionStepper)
	c.num("motion.start_mm", m.StartMM, incl(-1e5), incl(1e5), "mm")
	c.num("motion.travel_mm", m.TravelMM, excl(0), incl(1e5), "mm")
	c.num("motion.stroke_s", m.StrokeS, excl(0), incl(3600), "s")
	c.num("motion.stroke_count", float64(m.StrokeCount), incl(1), incl(100), "")
	c.num("motion.start_rest_s", m.StartRestS, incl(0), incl(3600), "s")
	c.num("motion.turn_rest_s", m.TurnRestS, incl(0), incl(3600), "s")
	switch m.Kind {
	case MotionHand:
		c.num("motion.speed_variation_pct", m.SpeedVariationPct, incl(0), incl(60), "%")
		c.num("motion.pause_count", float64(m.PauseCount), incl(0), incl(20), "")
		c.num("motion.back_step_count", float64(m.BackStepCount), incl(0), incl(20), "")
		c.num("motion.back_step_mm", m.BackStepMM, incl(0), incl(m.TravelMM/4), "mm (a quarter of the travel)")
		// Pauses and back-steps share the middle 80 % of the stroke; each
		// must fit in half its share.
		if events := m.PauseCount + m.BackStepCount; events > 0 {
			share := 0.8 * m.StrokeS / float64(events)
			longest := math.Max(m.PauseS, backStepS) + 0.3
			if longest > share/2 && c.err == nil {
				most := int(0.4 * m.StrokeS / longest)
				c.fail("motion.pause_count", fmt.Sprintf("%d with %d back-steps", m.PauseCount, m.BackStepCount),
					fmt.Sprintf("at most %d pauses and back-steps together in a %g s stroke", most, m.StrokeS))
			}
		}
		c.num("motion.pause_s", m.PauseS, incl(0), incl(m.StrokeS/float64(2*(m.PauseCount+1))), "s (half the stroke shared among the pauses)")
	case MotionStepper:
		c.num("motion.mm_per_step", m.MMPerStep, excl(0), incl(math.Max(m.TravelMM/2, 0)), "mm")
		stepPeriod := 0.0
		if m.TravelMM > 0 && m.MMPerStep > 0 {
			stepPeriod = m.StrokeS * m.MMPerStep / m.TravelMM
		}
		c.num("motion.step_pulse_s", m.StepPulseS, excl(2/r.SampleRateHz), incl(stepPeriod/2), "s (two samples to half the step period)")
		c.num("motion.step_level_v", m.StepLevelV, excl(0), incl(1e3), "V")
		if m.StrokeCount != 1 {
			c.fail("motion.stroke_count", fmt.Sprint(m.StrokeCount), "1 for a stepper (a steps channel carries no direction)")
		}
	}

	p := r.Position
	c.choice("position_sensor.kind", p.Kind, SensorDC, SensorTone, SensorNone)
	if m.Kind == MotionHand && p.Kind == SensorNone {
		c.fail("position_sensor.kind", `"none"`, "dc or tone (a hand-driven head needs a position sensor)")
	}
	if p.Kind == SensorDC || p.Kind == SensorTone {
		vpm := p.VoltsPerMM
		allowed := "a non-zero value from -1000 to 1000 V/mm"
		c.note("position_sensor.volts_per_mm", allowed)
		if vpm == 0 || math.IsNaN(vpm) || math.Abs(vpm) > 1000 {
			c.fail("position_sensor.volts_per_mm", fmt.Sprint(vpm), allowed)
		}
		c.num("position_sensor.offset_v", p.OffsetV, incl(-1e3), incl(1e3), "V")
		c.num("position_sensor.range_mm", p.RangeMM, excl(0), incl(1e5), "mm")
		c.num("position_sensor.nonlinearity_pct", p.NonlinearityPct, incl(0), incl(10), "%")
		c.num("position_sensor.noise_v", p.NoiseV, incl(0), incl(1e3), "V")
	}
	if p.Kind == SensorTone {
		c.num("position_sensor.carrier_hz", p.CarrierHz, excl(0), excl(r.SampleRateHz/4), "Hz (a quarter of the sample rate)")
		// The tone's peak amplitude is the level, so it must stay positive
		// over the whole travel.
		lo := math.Min(m.StartMM, m.StartMM+m.TravelMM)
		hi := math.Max(m.StartMM, m.StartMM+m.TravelMM)
		minLevel := math.Min(p.OffsetV+p.VoltsPerMM*lo, p.OffsetV+p.VoltsPerMM*hi)
		if minLevel <= 0 && c.err == nil {
			need := -math.Min(p.VoltsPerMM*lo, p.VoltsPerMM*hi) + 0 // + 0 turns −0 into 0
			c.fail("position_sensor.offset_v", fmt.Sprint(p.OffsetV),
				fmt.Sprintf("above %g V, so that the tone's amplitude stays positive over the travel", need))
		}
	}
	if p.SharesIndexInput {
		r.checkSharedInput(c)
	}

	d := r.Detector
	nyq := r.SampleRateHz / 2
	c.num("detector.full_scatter_rate_cps", d.FullScatterRateCPS, excl(0), incl(1e12), "photons/s")
	c.num("detector.dark_rate_cps", d.DarkRateCPS, incl(0), incl(1e12), "photons/s")
	c.num("detector.afterglow_s", d.AfterglowS, incl(0), incl(1), "s")
	c.numOrZero("detector.low_pass_corner_hz", d.LowPassCornerHz, excl(0), excl(nyq), "Hz (half the sample rate)", "no low-pass")
	c.numOrZero("detector.ac_coupling_corner_hz", d.ACCouplingCornerHz, excl(0), excl(nyq), "Hz (half the sample rate)", "DC coupled")
	gainAllowed := "a non-zero value from -1e6 to 1e6 V per million photons/s"
	c.note("detector.gain_v_per_mcps", gainAllowed)
	if d.GainVPerMCPS == 0 || math.IsNaN(d.GainVPerMCPS) || math.Abs(d.GainVPerMCPS) > 1e6 {
		c.fail("detector.gain_v_per_mcps", fmt.Sprint(d.GainVPerMCPS), gainAllowed)
	}
	c.num("detector.offset_v", d.OffsetV, incl(-1e3), incl(1e3), "V")
	c.num("detector.noise_v", d.NoiseV, incl(0), incl(1e3), "V")

	c.numOrZero("adc.bits", float64(r.ADC.Bits), incl(4), incl(32), "", "ideal converter")
	c.num("adc.full_scale_v", r.ADC.FullScaleV, excl(0), incl(1e3), "V")

}

// maxBeamSpeedMMS is the fastest beam speed on the target plane: the field
// edge (dx/dθ = D/cos²θ) at the highest wheel speed.
func (r Rig) maxBeamSpeedMMS() float64 {
	omega := r.beamRateRadS() * (1 + (r.Wheel.WobblePct+4*r.Wheel.RevJitterPct)/100)
	if r.sine() {
		// Fastest at the centre of the swing, where θ = 0.
		return r.DistanceMM * omega
	}
	half := r.FieldDeg / 2 * math.Pi / 180
	return r.DistanceMM * omega / (math.Cos(half) * math.Cos(half))
}
