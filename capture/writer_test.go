package capture

import (
	"bytes"
	"math"
	"testing"

	"github.com/go-audio/wav"
)

// TestWriteWAVReadByGoAudio decodes our integer WAV files with go-audio/wav,
// an independent reader, and compares every code with round(v·2^(bits-1)).
func TestWriteWAVReadByGoAudio(t *testing.T) {
	for _, tc := range []struct {
		sampleType string
		bits       int
		channels   int
	}{{"int16", 16, 1}, {"int16", 16, 2}, {"int24", 24, 2}, {"int32", 32, 1}} {
		rec := testRecording(tc.channels, 257, 32000)
		var buf bytes.Buffer
		if err := WriteWAV(&buf, rec, tc.sampleType); err != nil {
			t.Fatal(err)
		}
		dec := wav.NewDecoder(bytes.NewReader(buf.Bytes()))
		pcm, err := dec.FullPCMBuffer()
		if err != nil {
			t.Fatalf("%s: go-audio: %v", tc.sampleType, err)
		}
		if int(dec.SampleRate) != 32000 || int(dec.NumChans) != tc.channels || int(dec.BitDepth) != tc.bits {
			t.Fatalf("%s: go-audio sees %d Hz, %d channels, %d bits", tc.sampleType, dec.SampleRate, dec.NumChans, dec.BitDepth)
		}
		if len(pcm.Data) != 257*tc.channels {
			t.Fatalf("%s: go-audio read %d samples", tc.sampleType, len(pcm.Data))
		}
		fs := math.Ldexp(1, tc.bits-1)
		for i, got := range pcm.Data {
			v := rec.Channels[i%tc.channels].Samples[i/tc.channels]
			want := int(math.Max(-fs, math.Min(fs-1, math.Round(float64(v)*fs))))
			if got != want {
				t.Fatalf("%s sample %d: go-audio reads %d, want %d", tc.sampleType, i, got, want)
			}
		}
	}
}

// TestWriteErrors checks the writers refuse what their formats cannot hold.
func TestWriteErrors(t *testing.T) {
	rec := testRecording(2, 10, 44100.5)
	var buf bytes.Buffer
	if err := WriteWAV(&buf, rec, "int16"); err == nil {
		t.Error("fractional rate: no error")
	}
	rec.SampleRateHz = 44100
	if err := WriteWAV(&buf, rec, "int12"); err == nil {
		t.Error("int12: no error")
	}
	if err := WriteRaw(&buf, rec, RawLayout{SampleType: "int16", Channels: 3, Interleaved: true}); err == nil {
		t.Error("raw channel count mismatch: no error")
	}
	rec.Channels[1].Samples = rec.Channels[1].Samples[:5]
	if err := WriteCSV(&buf, rec, nil); err == nil {
		t.Error("unequal channels: no error")
	}
}
