package sampledata

import (
	"strconv"

	"spotloom/recon/recipe"
)

// Channel numbers of a simulated capture, in order: detector, index, then
// position when the rig has a position sensor on an input of its own, then
// steps for a stepper.
func (r Rig) channelNames() []string {
	names := []string{"detector", "index"}
	if (r.Position.Kind == SensorDC || r.Position.Kind == SensorTone) && !r.Position.SharesIndexInput {
		names = append(names, "position")
	}
	if r.Motion.Kind == MotionStepper {
		names = append(names, "steps")
	}
	return names
}

// Recipe is the recipe a builder of this rig would write from its drawings:
// the channels, the index pulses per revolution, the apertures, the field,
// the distance, a flat projection, the cross-scan source and its
// calibration taken from the position sensor's nominal volts per mm (two
// points, at motion.start_mm and at the end of position_sensor.range_mm;
// the sensor's non-linearity is not in it, as a builder would not know
// it), the carrier frequency for a tone sensor, mm per step for a stepper,
// the speed for a motor without a sensor, the detector's AC-coupling corner
// (the builder knows the recorder's input), and a 1 mm pitch. Everything the
// engine finds automatically (threshold, hysteresis, delay, sine period,
// carrier strength) is left nil, and the aperture offsets are left empty.
func (r Rig) Recipe() recipe.Recipe {
	channel := map[string]recipe.ChannelRef{}
	for i, n := range r.channelNames() {
		channel[n] = recipe.ChannelRef(strconv.Itoa(i))
	}
	if r.Position.SharesIndexInput {
		channel["position"] = channel["index"]
	}
	rows := recipe.Rows{Strokes: "merge", Calibration: [][2]float64{}}
	switch {
	case r.Position.Kind == SensorDC || r.Position.Kind == SensorTone:
		rows.Source = recipe.SourcePosition
		if r.Position.Kind == SensorTone {
			rows.Source = recipe.SourceTone
			hz := r.Position.CarrierHz
			rows.CarrierHz = &hz
		}
		y0 := r.Motion.StartMM
		y1 := r.Motion.StartMM + r.Position.RangeMM
		rows.Calibration = [][2]float64{
			{r.Position.OffsetV + r.Position.VoltsPerMM*y0, y0},
			{r.Position.OffsetV + r.Position.VoltsPerMM*y1, y1},
		}
	case r.Motion.Kind == MotionStepper:
		rows.Source = recipe.SourceSteps
		mm := r.Motion.MMPerStep
		rows.MMPerStep = &mm
	default:
		rows.Source = recipe.SourceEven
		speed := r.Motion.TravelMM / r.Motion.StrokeS
		rows.SpeedMMS = &speed
	}
	law, baseline := recipe.LawUniform, "beam-off"
	if r.sine() {
		// A mirror's beam never goes off, so there is no baseline.
		law, baseline = recipe.LawSine, "none"
	}
	return recipe.Recipe{
		Format: recipe.RecipeFormat,
		Channels: recipe.Channels{
			Detector: channel["detector"],
			Index:    channel["index"],
			Position: channel["position"],
			Steps:    channel["steps"],
		},
		Timing: recipe.Timing{
			Edge:         "rising",
			PulsesPerRev: r.Index.PulsesPerRev,
		},
		Sweep: recipe.Sweep{
			Apertures:          r.Wheel.ApertureCount,
			Law:                law,
			FieldDeg:           r.FieldDeg,
			ApertureOffsetsDeg: []float64{},
			Projection:         "flat",
			DistanceMM:         r.DistanceMM,
			SineKeep:           0.9,
			Table:              [][2]float64{},
		},
		Rows:   rows,
		Signal: recipe.Signal{Baseline: baseline, ACCornerHz: r.Detector.ACCouplingCornerHz, AfterglowUS: recipe.Float(0)},
		Image:  recipe.Image{PitchMM: 1.0, FillGapsPx: 2},
	}
}

// DemoRecipe is DemoRig().Recipe().
func DemoRecipe() recipe.Recipe { return DemoRig().Recipe() }
