package sampledata

import (
	"context"
	"math"
	"strings"
	"testing"
)

// The two-input rig passes the rig check and makes a capture of two
// channels, the second both the index and the position (in the truth and
// in the rig's recipe); that channel is the sum of what the three-input
// version of the same rig puts on its index and position inputs (a
// resistor summing two signals), to within the rounding of the two
// conversions (one step each, 2·full_scale/2^bits).
func TestStereoSoundCardRig(t *testing.T) {
	stereo := StereoSoundCardRig()
	if err := stereo.Validate(); err != nil {
		t.Fatal(err)
	}
	three := stereo
	three.Position.SharesIndexInput = false
	opts := SimOptions{Seed: 9, DurationS: 1, Noiseless: true}
	sum, truth, err := Simulate(context.Background(), stereo, "parcel", opts)
	if err != nil {
		t.Fatal(err)
	}
	apart, _, err := Simulate(context.Background(), three, "parcel", opts)
	if err != nil {
		t.Fatal(err)
	}
	if len(sum.Channels) != 2 || truth.Channels["index"] != 1 || truth.Channels["position"] != 1 {
		t.Fatalf("%d channels, truth channels %v", len(sum.Channels), truth.Channels)
	}
	if c := stereo.Recipe().Channels; c.Index != "1" || c.Position != "1" {
		t.Errorf("recipe channels %+v, want index and position 1", c)
	}
	step := 2 * stereo.ADC.FullScaleV / math.Exp2(float64(stereo.ADC.Bits))
	worst := 0.0
	for i, v := range sum.Channels[1].Samples {
		want := float64(apart.Channels[1].Samples[i]) + float64(apart.Channels[2].Samples[i])
		worst = math.Max(worst, math.Abs(float64(v)-want))
	}
	if worst > 1.01*step {
		t.Errorf("shared channel differs from index + position by up to %.3g V, one step is %.3g V", worst, step)
	}
}

// A shared input is checked: only a tone can share it, the carrier must
// stand well above the line rate, and pulses on the tone's peak must fit
// the converter.
func TestStereoRigChecks(t *testing.T) {
	for _, tc := range []struct {
		change func(*Rig)
		words  string
	}{
		{func(r *Rig) { r.Position.Kind = SensorDC }, "only a tone can share the index input"},
		{func(r *Rig) { r.Position.CarrierHz = 300 }, "position_sensor.carrier_hz is 300; allowed: at least 420 Hz"},
		{func(r *Rig) { r.Index.LevelV = 0.8 }, "index.level_v is 0.8"},
	} {
		r := StereoSoundCardRig()
		tc.change(&r)
		if err := r.Validate(); err == nil || !strings.Contains(err.Error(), tc.words) {
			t.Errorf("error %v, want %q", err, tc.words)
		}
	}
}
