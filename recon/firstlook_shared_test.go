package recon

import (
	"context"
	"math"
	"strings"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// A first look at a two-input capture (sampledata.StereoSoundCardRig)
// finds the channel that carries the index pulses and the position tone
// and makes it both roles, read as a tone at the rig's carrier; on the
// three-input card, and on the demo rig, no channel is taken for both.
func TestFirstLookFindsSharedInput(t *testing.T) {
	ctx := context.Background()
	for _, tc := range []struct {
		name     string
		rig      sampledata.Rig
		shared   bool
		position string
	}{
		{"two inputs", sampledata.StereoSoundCardRig(), true, "1"},
		{"three inputs", sampledata.SoundCardRig(), false, "2"},
		{"demo", sampledata.DemoRig(), false, "2"},
	} {
		tc.rig.DurationS = 6
		rec, _, err := sampledata.Simulate(ctx, tc.rig, "parcel", sampledata.SimOptions{Seed: 2})
		if err != nil {
			t.Fatal(err)
		}
		for ch := range rec.Channels {
			_, _, ok := indexWithTone(rec.Channels[ch].Samples, rec.SampleRateHz)
			if want := tc.shared && ch == 1; ok != want {
				t.Errorf("%s: channel %d taken for pulses and a tone: %v, want %v", tc.name, ch, ok, want)
			}
		}
		look, err := FirstLook(ctx, NewSession(rec), recipe.Default(), Known{}, nil)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		c := look.Recipe.Channels
		if c.Detector != "0" || c.Index != "1" || string(c.Position) != tc.position {
			t.Errorf("%s: channels %+v, want detector 0, index 1, position %s", tc.name, c, tc.position)
		}
		said := strings.Contains(strings.Join(look.Notes, "\n"), "carries the index pulses and a")
		if said != tc.shared {
			t.Errorf("%s: notes %q", tc.name, look.Notes)
		}
		if !tc.shared {
			continue
		}
		// The carrier found is the rig's, within a tenth of the 1.46 Hz
		// bin of the 65536-point spectrum it is read from.
		if look.Recipe.Rows.Source != recipe.SourceTone || look.Recipe.Rows.CarrierHz == nil || math.Abs(*look.Recipe.Rows.CarrierHz-tc.rig.Position.CarrierHz) > 0.15 {
			t.Errorf("%s: rows %+v, want tone at %g Hz", tc.name, look.Recipe.Rows, tc.rig.Position.CarrierHz)
		}
	}
}
