package recon

import (
	"context"
	"encoding/binary"
	"math"
	"testing"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// FuzzBuild: any samples give frames or an error, never a panic. The
// bytes become three channels of int8 samples (scaled to volts) and a few
// recipe choices.
func FuzzBuild(f *testing.F) {
	rig := baseRig()
	rig.rateHz, rig.seconds = 8000, 0.5
	rec := rig.recording()
	seed := make([]byte, 0, 3*len(rec.Channels[0].Samples)+2)
	seed = append(seed, 0, 0)
	for i := range rec.Channels[0].Samples {
		for c := 0; c < 3; c++ {
			seed = append(seed, byte(int8(math.Max(-127, math.Min(127, float64(rec.Channels[c].Samples[i])*25)))))
		}
	}
	f.Add(seed)
	f.Add([]byte{1, 2, 3, 4, 5, 6, 7, 8, 9})
	f.Add(make([]byte, 3000))
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) < 2 {
			return
		}
		choice := binary.LittleEndian.Uint16(data)
		data = data[2:]
		n := len(data) / 3
		ch := make([]capture.Channel, 3)
		for c := range ch {
			ch[c].Samples = make([]float32, n)
			for i := 0; i < n; i++ {
				v := float32(int8(data[3*i+c])) / 25
				if c == 0 && data[3*i]&0x7f == 0x7f {
					v = float32(math.NaN())
				}
				ch[c].Samples[i] = v
			}
		}
		rec := &capture.Recording{SampleRateHz: 2000 + float64(choice%7)*1000, Channels: ch}
		r := rig.recipe()
		r.Sweep.Law = recipe.Laws[choice%3]
		if r.Sweep.Law == recipe.LawTable {
			r.Sweep.Table = [][2]float64{{0.1, -50}, {0.4, 50}}
		}
		r.Rows.Source = []recipe.RowSource{recipe.SourcePosition, recipe.SourceTone, recipe.SourceEven}[(choice/3)%3]
		speed := 10.0
		r.Rows.SpeedMMS = &speed
		r.Rows.Strokes = []string{"merge", "split", "first"}[(choice/9)%3]
		r.Image.PitchMM = 2
		res, err := NewSession(rec).Build(context.Background(), r, nil)
		if err == nil && len(res.Frames) == 0 {
			t.Fatal("no error and no frame")
		}
	})
}
