package capture

import (
	"bytes"
	"math"
	"math/rand/v2"
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

// roundHalfAway is math.Round of the Go standard library, bit for bit:
// halves, the largest float64 below one half, the integers where float64
// stops holding fractions (2^52, 2^53), signed zeros, infinities and NaN,
// and a million random values across the integer kinds' ranges.
func TestRoundHalfAwayIsMathRound(t *testing.T) {
	same := func(x float64) {
		got, want := roundHalfAway(x), math.Round(x)
		if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Fatalf("roundHalfAway(%v) = %v, math.Round %v", x, got, want)
		}
	}
	below := math.Nextafter(0.5, 0)
	for _, x := range []float64{0, math.Copysign(0, -1), 0.5, -0.5, 1.5, -1.5, 2.5, -2.5, below, -below, 1 + below, 8388607.5, -8388608.5,
		1 << 52, 1<<52 + 1, 1<<53 - 1, 1 << 53, -(1 << 52) - 1, math.MaxFloat64, math.SmallestNonzeroFloat64, math.Inf(1), math.Inf(-1), math.NaN()} {
		same(x)
	}
	rng := rand.New(rand.NewPCG(9, 10))
	for range 1000000 {
		same((rng.Float64()*2 - 1) * float64(int(1)<<(rng.IntN(32))))
	}
}
