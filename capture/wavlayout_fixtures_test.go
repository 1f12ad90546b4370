package capture

import (
	"encoding/binary"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// WAV files laid out as bench recorders and data loggers write them, made
// byte by byte here from the RIFF/WAVE form (Microsoft/IBM Multimedia
// Programming Interface and Data Specifications 1.0, 1991: chapter 3 for
// RIFF and RIFX, "Data Packing for PCM" for samples that do not fill their
// bytes). testdata/README.md lists them.

// be appends big-endian fields, for RIFX files.
type be []byte

func (b be) u16(v uint16) be { return binary.BigEndian.AppendUint16(b, v) }
func (b be) u32(v uint32) be { return binary.BigEndian.AppendUint32(b, v) }
func (b be) id(s string) be  { return append(b, s...) }
func (b be) raw(p []byte) be { return append(b, p...) }

// rifxS16 is a RIFX file (every number big-endian, RIFF 1.0 section 3):
// 16-bit PCM, 2 channels, 44100 Hz, the fixture samples.
func rifxS16() []byte {
	const channels, rate = 2, 44100
	fmtBody := be(nil).u16(1).u16(channels).u32(rate).u32(rate * 2 * channels).u16(2 * channels).u16(16)
	var data be
	for i := 0; i < fixtureFrames; i++ {
		for c := 0; c < channels; c++ {
			data = data.u16(uint16(int16(intSample(i, c, 16))))
		}
	}
	body := be(nil).id("WAVE").id("fmt ").u32(uint32(len(fmtBody))).raw(fmtBody).id("data").u32(uint32(len(data))).raw(data)
	return be(nil).id("RIFX").u32(uint32(len(body))).raw(body)
}

// narrowPCM is plain PCM (tag 1) of bits per sample that do not fill the
// container: each code is stored left-justified in (bits+7)/8 bytes with
// the low bits zero (RIFF 1.0, "Data Packing for PCM"), as a logger with a
// 12-bit ADC or a 20-bit converter writes it.
func narrowPCM(bits, channels, rate int) []byte {
	size := (bits + 7) / 8
	block := channels * size
	fmtBody := le(nil).u16(1).u16(uint16(channels)).u32(uint32(rate)).u32(uint32(rate * block)).u16(uint16(block)).u16(uint16(bits))
	var data []byte
	for i := 0; i < fixtureFrames; i++ {
		for c := 0; c < channels; c++ {
			v := uint32(int32(intSample(i, c, bits)) << (8*size - bits))
			for k := 0; k < size; k++ {
				data = append(data, byte(v>>(8*k)))
			}
		}
	}
	return riffWAVE(chunk("fmt ", fmtBody), chunk("data", data))
}

// layoutWAVs are the fixtures above with what they hold; every sample is
// intSample(i, c, bits) / 2^(bits-1), which is the container's full scale
// too, since the code is shifted left by the container's spare bits.
var layoutWAVs = []struct {
	name       string
	data       func() []byte
	bits       int
	channels   int
	rate       float64
	sampleType string
}{
	{"rifx_s16_stereo.wav", rifxS16, 16, 2, 44100, "int16"},
	{"pcm12_in16_4ch.wav", func() []byte { return narrowPCM(12, 4, 8000) }, 12, 4, 8000, "int16"},
	{"pcm20_in24_mono.wav", func() []byte { return narrowPCM(20, 1, 48000) }, 20, 1, 48000, "int24"},
}

// cutWAVs are recordings whose data chunk was never finished, as a
// recorder that crashed or lost power leaves them, made from validWAV
// (16-bit mono, 8000 Hz, 32 frames; data chunk header at byte 36, its size
// at byte 40, RIFF size at byte 4).
var cutWAVs = []struct {
	name   string
	data   func() []byte
	frames int // whole frames the file holds
}{
	{"cut_mid_data.wav", func() []byte { return validWAV()[:60] }, 8},
	{"cut_claims_more.wav", func() []byte { return patched(validWAV(), 40, 1_000_000, 4) }, 32},
	{"cut_size_zero.wav", func() []byte { return patched(patched(validWAV(), 40, 0, 4), 4, 36, 4) }, 32},
	{"cut_size_unset.wav", func() []byte {
		return append(patched(patched(validWAV(), 40, 0xFFFFFFFF, 4), 4, 0xFFFFFFFF, 4), 0x55) // and half a frame
	}, 32},
}

func wavLayoutFiles() []fixtureFile {
	var files []fixtureFile
	for _, w := range layoutWAVs {
		files = append(files, fixtureFile{w.name, bytesFixture(w.data())})
	}
	for _, w := range cutWAVs {
		files = append(files, fixtureFile{w.name, bytesFixture(w.data())})
	}
	return files
}

// TestWAVLayoutFixtures reads RIFX and narrow-PCM files and compares every
// sample with the code written, over 2^(bits-1).
func TestWAVLayoutFixtures(t *testing.T) {
	for _, fx := range layoutWAVs {
		rec, err := Open(filepath.Join(fixtureDir, fx.name), Options{})
		if err != nil {
			t.Errorf("%s: %v", fx.name, err)
			continue
		}
		if rec.SampleRateHz != fx.rate || len(rec.Channels) != fx.channels || rec.Frames() != fixtureFrames || rec.Source.SampleType != fx.sampleType || len(rec.Warnings) != 0 {
			t.Errorf("%s: %g Hz, %d channels, %d frames, %s, warnings %q", fx.name, rec.SampleRateHz, len(rec.Channels), rec.Frames(), rec.Source.SampleType, rec.Warnings)
			continue
		}
		for c, ch := range rec.Channels {
			for i, got := range ch.Samples {
				if want := float32(float64(intSample(i, c, fx.bits)) / math.Ldexp(1, fx.bits-1)); got != want {
					t.Fatalf("%s ch%d[%d] = %v, want %v", fx.name, c, i, got, want)
				}
			}
		}
	}
	// Hand-worked: the most positive 12-bit code 2047 is stored as 0x7FF0,
	// 32752/32768 = 0.99951171875; the most negative, -2048, as 0x8000 = -1.
	rec, err := Open(filepath.Join(fixtureDir, "pcm12_in16_4ch.wav"), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if s := rec.Channels[0].Samples; s[0] != -1 || s[1] != 0.99951171875 {
		t.Errorf("12-bit extremes %v %v, want -1 and 0.99951171875", s[0], s[1])
	}
}

// TestWAVCutData reads recordings whose data chunk size was never written
// or is larger than the file: the whole frames there are read, with one
// warning giving the seconds recovered (frames / 8000 Hz).
func TestWAVCutData(t *testing.T) {
	for _, fx := range cutWAVs {
		rec, err := Open(filepath.Join(fixtureDir, fx.name), Options{})
		if err != nil {
			t.Errorf("%s: %v", fx.name, err)
			continue
		}
		seconds := fmt.Sprintf("%.6g s", float64(fx.frames)/8000)
		if rec.Frames() != fx.frames || len(rec.Warnings) != 1 || !strings.Contains(rec.Warnings[0], seconds) || !strings.Contains(rec.Warnings[0], "whole frames") {
			t.Errorf("%s: %d frames, warnings %q; want %d frames and one warning saying %q", fx.name, rec.Frames(), rec.Warnings, fx.frames, seconds)
			continue
		}
		for i, got := range rec.Channels[0].Samples {
			if want := float32(intSample(i, 0, 16)) / 32768; got != want {
				t.Fatalf("%s [%d] = %v, want %v", fx.name, i, got, want)
			}
		}
	}
}
