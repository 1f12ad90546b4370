package live

import (
	"context"
	"math"
	"path/filepath"
	"testing"

	"spotloom/capture"
)

// The tap sees exactly what the file keeps: values that int16 cannot hold
// exactly come out rounded as capture.Open reads them, and frames lost to
// an overrun come out as the zeros written at their place. The reference
// is the file itself, read back by the ordinary reader.
func TestRecordTapSeesWhatTheFileKeeps(t *testing.T) {
	const rate, channels, frames = 48000, 2, 96000
	rec := knownRecording(rate, channels, frames)
	for c := range rec.Channels {
		for i := range rec.Channels[c].Samples {
			// Not multiples of 2^-15, so rounding matters.
			rec.Channels[c].Samples[i] = float32(0.9 * math.Sin(float64(i)*0.001*float64(c+1)+0.3))
		}
	}
	src, _ := NewReplay(rec, 1000)
	path := filepath.Join(t.TempDir(), "tap.wav")
	var tapped []float32
	res, err := Record(context.Background(), src, Options{Path: path, RingSeconds: 0.005,
		Tap: func(b []float32) { tapped = append(tapped, b...) }})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Sidecar.Overruns) == 0 {
		t.Log("no overrun this time; the rounding is still checked")
	}
	got, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(tapped) != got.Frames()*channels {
		t.Fatalf("tap saw %d frames, the file holds %d", len(tapped)/channels, got.Frames())
	}
	rounded := 0
	for i, v := range tapped {
		c, f := i%channels, i/channels
		if want := got.Channels[c].Samples[f]; v != want {
			t.Fatalf("frame %d channel %d: tap saw %v, the file holds %v", f, c, v, want)
		}
		if v != rec.Channels[c].Samples[f] {
			rounded++
		}
	}
	if rounded == 0 {
		t.Error("no tapped value differs from the source: the rounding to int16 was not exercised")
	}
}
