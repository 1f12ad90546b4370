package sampledata_test

import (
	"context"
	"fmt"

	"spotloom/sampledata"
)

// Simulate a short dot-grid capture with the demo rig and read its truth.
func ExampleSimulate() {
	rig := sampledata.DemoRig()
	rec, truth, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 1, DurationS: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%d channels, %d samples at %g Hz\n", len(rec.Channels), rec.Frames(), rec.SampleRateHz)
	fmt.Printf("%.0f lines/s, sweep %.2f ms, delay %.2f°\n", truth.LineRateHz, truth.SweepMS, truth.DelayDeg)
	// Output:
	// 3 channels, 96000 samples at 96000 Hz
	// 42 lines/s, sweep 11.90 ms, delay 9.05°
}

// The recipe a builder of the demo rig would write: the delay is left for
// the engine to find.
func ExampleRig_Recipe() {
	r := sampledata.DemoRig().Recipe()
	fmt.Println(r.Sweep.Apertures, r.Sweep.FieldDeg, r.Sweep.DistanceMM, r.Rows.Source, r.Rows.Calibration, r.Sweep.DelayDeg == nil)
	// Output:
	// 6 30 500 position [[-0.8 0] [0.8 400]] true
}
