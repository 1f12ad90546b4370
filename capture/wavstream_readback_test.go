package capture

import (
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"
)

// ReadBack must give, for values inside and beyond full scale, both the
// closed form of the stored type (PCM of n bits is two's complement with
// full scale 2^(n-1), rounded to nearest and clipped to its range;
// Microsoft/IBM, Multimedia Programming Interface and Data Specifications
// 1.0, "Data Format of the Samples"; IEEE 754 single precision for float)
// and what capture.Open reads from the written file.
func TestWAVStreamReadBack(t *testing.T) {
	for _, tc := range []struct {
		sampleType string
		bits       int // 0 for float
	}{{"int16", 16}, {"int24", 24}, {"float32", 0}} {
		t.Run(tc.sampleType, func(t *testing.T) {
			const channels, frames = 3, 2500
			rng := rand.New(rand.NewPCG(1, 2))
			in := make([]float32, channels*frames)
			for i := range in {
				in[i] = float32(rng.Float64()*2.4 - 1.2) // some beyond full scale
			}
			path := filepath.Join(t.TempDir(), "rb.wav")
			s, err := CreateWAVStream(path, WAVStreamFormat{RateHz: 8000, Channels: channels, SampleType: tc.sampleType})
			if err != nil {
				t.Fatal(err)
			}
			back := make([]float32, len(in))
			s.ReadBack(back, in)
			if err := s.Write(in); err != nil {
				t.Fatal(err)
			}
			if err := s.Close(); err != nil {
				t.Fatal(err)
			}
			rec, err := Open(path, Options{})
			if err != nil {
				t.Fatal(err)
			}
			bad := 0
			for i, v := range in {
				want := float64(v)
				if tc.bits > 0 {
					full := math.Ldexp(1, tc.bits-1)
					want = min(max(math.Round(want*full), -full), full-1) / full
				}
				got := back[i]
				read := rec.Channels[i%channels].Samples[i/channels]
				if float64(got) != want || got != read {
					if bad++; bad <= 3 {
						t.Errorf("sample %d: %v read back as %v, closed form %v, file holds %v", i, v, got, want, read)
					}
				}
			}
		})
	}
}
