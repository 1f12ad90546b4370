package capture

import (
	"errors"
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

// WriteKept must give, block by block (blocks larger than the stream's
// buffer among them), what ReadBack gives and what capture.Open reads from
// the file, and for PCM the closed form of the stored type (two's
// complement of n bits with full scale 2^(n-1), unsigned 8-bit offset by
// 128, rounded to nearest and clipped; Microsoft/IBM, Multimedia
// Programming Interface and Data Specifications 1.0, "Data Format of the
// Samples"; IEEE 754 for float, a float32 kept as it is).
func TestWAVStreamWriteKept(t *testing.T) {
	for _, tc := range []struct {
		sampleType string
		bits       int // 0 for float
	}{{"uint8", 8}, {"int16", 16}, {"int24", 24}, {"int32", 32}, {"float32", 0}, {"float64", 0}} {
		t.Run(tc.sampleType, func(t *testing.T) {
			const channels = 4
			rng := rand.New(rand.NewPCG(3, 4))
			path := filepath.Join(t.TempDir(), "kept.wav")
			s, err := CreateWAVStream(path, WAVStreamFormat{RateHz: 192000, Channels: channels, SampleType: tc.sampleType})
			if err != nil {
				t.Fatal(err)
			}
			var in, kept []float32
			for _, frames := range []int{1, 7000, 30000, 3, 1920} {
				block := make([]float32, channels*frames)
				for i := range block {
					block[i] = float32(rng.Float64()*2.4 - 1.2) // some beyond full scale
				}
				got := make([]float32, len(block))
				if err := s.WriteKept(got, block); err != nil {
					t.Fatal(err)
				}
				back := make([]float32, len(block))
				s.ReadBack(back, block)
				for i := range got {
					if got[i] != back[i] {
						t.Fatalf("block of %d frames, sample %d: WriteKept %v, ReadBack %v", frames, i, got[i], back[i])
					}
				}
				in, kept = append(in, block...), append(kept, got...)
			}
			if err := s.WriteKept(make([]float32, 3), make([]float32, 4)); err == nil {
				t.Error("WriteKept with a kept slice of the wrong length: no error")
			}
			if err := s.Close(); err != nil {
				t.Fatal(err)
			}
			rec, err := Open(path, Options{})
			if err != nil {
				t.Fatal(err)
			}
			if rec.Frames() != len(in)/channels {
				t.Fatalf("file holds %d frames, %d written", rec.Frames(), len(in)/channels)
			}
			bad := 0
			for i, v := range in {
				want := float32(v)
				if tc.bits > 0 {
					full := math.Ldexp(1, tc.bits-1)
					lo, hi := -full, full-1
					if tc.bits == 8 { // unsigned, offset by full scale
						lo, hi = 0, 2*full-1
						want = float32(min(max(math.Round((float64(v)+1)*full), lo), hi)/full - 1)
					} else {
						want = float32(min(max(math.Round(float64(v)*full), lo), hi) / full)
					}
				}
				read := rec.Channels[i%channels].Samples[i/channels]
				if kept[i] != want || kept[i] != read {
					if bad++; bad <= 3 {
						t.Errorf("sample %d: %v kept as %v, closed form %v, file holds %v", i, v, kept[i], want, read)
					}
				}
			}
		})
	}
}

// discardFile is a StreamFile that keeps nothing.
type discardFile struct{}

func (discardFile) WriteAt(p []byte, _ int64) (int, error) { return len(p), nil }
func (discardFile) Sync() error                            { return nil }
func (discardFile) Close() error                           { return nil }

// A block that crosses the 4 GiB a RIFF file can hold (its sizes are
// 32-bit; RIFF 1.0, 3-2) is taken up to the last whole frame that fits,
// then the stream stops with ErrWAVSizeLimit.
func TestWAVStreamSizeLimitMidBlock(t *testing.T) {
	s, err := NewWAVStream("big.wav", discardFile{}, WAVStreamFormat{RateHz: 192000, Channels: 4, SampleType: "int24"})
	if err != nil {
		t.Fatal(err)
	}
	fb := int64(4 * 3)
	limit := (math.MaxUint32 - 1 - s.dataAt) / fb // frames a RIFF file holds after this header
	s.frames, s.flushed = limit-10, (limit-10)*fb // as if written before
	kept := make([]float32, 4*25)
	if err := s.WriteKept(kept, make([]float32, 4*25)); !errors.Is(err, ErrWAVSizeLimit) {
		t.Fatalf("error %v, want ErrWAVSizeLimit", err)
	}
	if s.Frames() != limit {
		t.Errorf("%d frames taken, want %d (the last that fit)", s.Frames(), limit)
	}
	if err := s.Write(make([]float32, 4)); !errors.Is(err, ErrWAVSizeLimit) {
		t.Errorf("a write after the limit: %v, want ErrWAVSizeLimit", err)
	}
}
