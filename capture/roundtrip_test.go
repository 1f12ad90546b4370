package capture

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// testRecording is a small capture with values that every sample type can
// hold: exact multiples of 2^-15 inside ±1.
func testRecording(channels, frames int, rate float64) *Recording {
	rec := &Recording{SampleRateHz: rate}
	for c := 0; c < channels; c++ {
		s := make([]float32, frames)
		for i := range s {
			// a bounded pattern: k/32768 with k in [-32768, 32767]
			k := ((i*(7+2*c) + 1000*c) % 65536) - 32768
			s[i] = float32(k) / 32768
		}
		rec.Channels = append(rec.Channels, Channel{Name: "ch" + string(rune('0'+c)), Unit: UnitFullScale, Samples: s})
	}
	return rec
}

func writeTemp(t *testing.T, name string, data []byte) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// quantize returns v as a sample type of the given bits would keep it:
// round(v·2^(bits-1))/2^(bits-1), clipped — the closed form of the integer
// PCM mapping of the RIFF WAVE specification.
func quantize(v float32, bits int) float32 {
	fs := math.Ldexp(1, bits-1)
	x := math.Round(float64(v) * fs)
	if bits == 8 {
		// 8-bit PCM is unsigned (offset binary), so halves round upward.
		x = math.Floor(float64(v)*fs+fs+0.5) - fs
	}
	x = math.Max(-fs, math.Min(fs-1, x))
	return float32(x / fs)
}

func TestWAVRoundTrip(t *testing.T) {
	for _, tc := range []struct {
		sampleType string
		bits       int
		channels   int
	}{
		{"uint8", 8, 1}, {"int16", 16, 1}, {"int16", 16, 2}, {"int16", 16, 3},
		{"int24", 24, 2}, {"int32", 32, 4}, {"float32", 0, 1}, {"float32", 0, 5}, {"float64", 0, 16},
	} {
		rec := testRecording(tc.channels, 1001, 48000) // odd frame count: pad byte for uint8 mono
		var buf bytes.Buffer
		if err := WriteWAV(&buf, rec, tc.sampleType); err != nil {
			t.Fatalf("%s: %v", tc.sampleType, err)
		}
		p := writeTemp(t, "rt.wav", buf.Bytes())
		got, err := Open(p, Options{})
		if err != nil {
			t.Fatalf("%s/%d: %v", tc.sampleType, tc.channels, err)
		}
		if got.SampleRateHz != 48000 || len(got.Channels) != tc.channels || got.Frames() != 1001 {
			t.Fatalf("%s: rate %g channels %d frames %d", tc.sampleType, got.SampleRateHz, len(got.Channels), got.Frames())
		}
		if got.Source.SampleType != tc.sampleType {
			t.Errorf("sample type %q, want %q", got.Source.SampleType, tc.sampleType)
		}
		for c := range rec.Channels {
			for i, v := range rec.Channels[c].Samples {
				want := v
				if tc.bits > 0 {
					want = quantize(v, tc.bits)
				}
				if g := got.Channels[c].Samples[i]; g != want {
					t.Fatalf("%s ch%d[%d] = %v, want %v", tc.sampleType, c, i, g, want)
				}
			}
		}
	}
}

func TestRawRoundTrip(t *testing.T) {
	rec := testRecording(3, 500, 20000)
	for _, l := range []RawLayout{
		{SampleType: "int16", Channels: 3, Interleaved: true, SampleRateHz: 20000},
		{SampleType: "int16", ByteOrder: "big", Channels: 3, Interleaved: false, HeaderBytes: 64, SampleRateHz: 20000},
		{SampleType: "uint16", Channels: 3, Interleaved: true, SampleRateHz: 20000},
		{SampleType: "int32", ByteOrder: "big", Channels: 3, Interleaved: true, SampleRateHz: 20000, Scale: []float64{1.0 / 65536}},
		{SampleType: "float32", Channels: 3, Interleaved: false, SampleRateHz: 20000, Scale: []float64{2, 4, 0.5}, Offset: []float64{1}},
		{SampleType: "float64", ByteOrder: "big", Channels: 3, Interleaved: true, SampleRateHz: 20000, Names: []string{"det", "idx", "pos"}, Units: []string{"V", "V", "mm"}},
	} {
		dir := t.TempDir()
		p := filepath.Join(dir, "cap.bin")
		var buf bytes.Buffer
		if err := WriteRaw(&buf, rec, l); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := WriteLayoutFile(filepath.Join(dir, "cap.layout.json"), l); err != nil {
			t.Fatal(err)
		}
		got, err := Open(p, Options{})
		if err != nil {
			t.Fatalf("%+v: %v", l, err)
		}
		if got.Source.Format != "raw" || got.Frames() != 500 || len(got.Channels) != 3 {
			t.Fatalf("%+v: got %+v", l, got.Source)
		}
		for c := range rec.Channels {
			for i, v := range rec.Channels[c].Samples {
				if g := got.Channels[c].Samples[i]; math.Abs(float64(g-v)) > 1e-6 {
					t.Fatalf("%s %v ch%d[%d] = %v, want %v", l.SampleType, l.Interleaved, c, i, g, v)
				}
			}
		}
		if len(l.Names) > 0 && (got.Channels[2].Name != "pos" || got.Channels[2].Unit != "mm") {
			t.Errorf("names/units lost: %+v", got.Channels[2].Name)
		}
	}
}

func TestMissingLayoutShowsExample(t *testing.T) {
	p := writeTemp(t, "dump.bin", []byte{1, 2, 3, 0, 0xff, 0x80, 0, 0})
	_, err := Open(p, Options{})
	if err == nil || !strings.Contains(err.Error(), `"sample_type"`) || !strings.Contains(err.Error(), "dump.layout.json") {
		t.Fatalf("err = %v, want a message with an example layout", err)
	}
}

// TestLargeWAVParallel reads a file large enough to be split between
// workers and checks every sample and the progress.
func TestLargeWAVParallel(t *testing.T) {
	const frames = parallelMinBytes/6 + 12345 // 3 channels × 2 bytes
	rec := testRecording(3, frames, 96000)
	var buf bytes.Buffer
	if err := WriteWAV(&buf, rec, "int16"); err != nil {
		t.Fatal(err)
	}
	last := 0.0
	got, err := readWAV(bytes.NewReader(buf.Bytes()), int64(buf.Len()), Options{Progress: func(f float64) {
		if f < last {
			t.Errorf("progress fell from %v to %v", last, f)
		}
		last = f
	}})
	if err != nil {
		t.Fatal(err)
	}
	if last != 1 {
		t.Errorf("progress ended at %v", last)
	}
	for c := range rec.Channels {
		for i, v := range rec.Channels[c].Samples {
			if g := got.Channels[c].Samples[i]; g != quantize(v, 16) {
				t.Fatalf("ch%d[%d] = %v, want %v", c, i, g, quantize(v, 16))
			}
		}
	}
}

// TestCSVBesideLayoutStaysCSV: a layout file that lies beside a CSV export
// (say, from a raw capture of the same name) must not turn the text into raw
// samples; only a layout given explicitly does.
func TestCSVBesideLayoutStaysCSV(t *testing.T) {
	rec := testRecording(3, 200, 10000)
	dir := t.TempDir()
	p := filepath.Join(dir, "cap.csv")
	var buf bytes.Buffer
	if err := WriteCSV(&buf, rec, []string{"made by a test"}); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	l := RawLayout{SampleType: "int16", Channels: 3, Interleaved: true, SampleRateHz: 10000}
	if err := WriteLayoutFile(filepath.Join(dir, "cap.layout.json"), l); err != nil {
		t.Fatal(err)
	}
	got, err := Open(p, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if got.Source.Format != "csv" || got.Frames() != 200 {
		t.Fatalf("found layout overrode the CSV: format %q, %d frames", got.Source.Format, got.Frames())
	}
	// The rate comes from the CSV's own time column (10 kHz, written above).
	if math.Abs(got.SampleRateHz-10000) > 1e-6*10000 {
		t.Errorf("rate %g Hz, want 10000", got.SampleRateHz)
	}
	// Given explicitly, the layout is obeyed: the text is read as int16
	// frames (and here fails on its size, which is not whole frames).
	forced, err := Open(p, Options{Layout: &l})
	switch {
	case err == nil && forced.Source.Format != "raw":
		t.Errorf("explicit layout: format %q, want raw", forced.Source.Format)
	case err != nil && !strings.Contains(err.Error(), "raw"):
		t.Errorf("explicit layout: %v, want a raw reader's error", err)
	}
}

// TestNoRateIsASentinel: both ways a text capture can lack a rate (no time
// column; a sample counter with no interval anywhere) wrap ErrNoSampleRate,
// so the window can ask for the rate, and a given rate reads the file.
func TestNoRateIsASentinel(t *testing.T) {
	for name, text := range map[string]string{
		"no time column": "a,b\n1,2\n3,4\n5,6\n7,8\n",
		"bare counter":   "Sequence,CH1\n0,0.5\n1,0.6\n2,0.7\n3,0.8\n",
	} {
		p := writeTemp(t, "cap.csv", []byte(text))
		_, err := Open(p, Options{})
		if !errors.Is(err, ErrNoSampleRate) {
			t.Errorf("%s: %v, want an error wrapping ErrNoSampleRate", name, err)
			continue
		}
		rec, err := Open(p, Options{SampleRateHz: 1000})
		if err != nil || rec.SampleRateHz != 1000 || rec.Frames() != 4 {
			t.Errorf("%s with a rate: %v", name, err)
		}
	}
}
