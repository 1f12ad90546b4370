package live

import (
	"os"
	"path/filepath"
	"testing"

	"spotloom/capture"
)

// BenchmarkRecordPath is the steady-state cost of the recording path at
// the budget rate, 192 kHz × 4 channels: one iteration is one
// second of samples delivered in 10 ms blocks into the ring, taken out on
// this goroutine into an int24 WAV stream, with two commits (header rewrite
// and fsync). "core-%" is the share of one core that second of audio costs.
func BenchmarkRecordPath(b *testing.B) {
	const rate, channels, block = 192000, 4, 1920
	path := filepath.Join(b.TempDir(), "bench.wav")
	stream, err := capture.CreateWAVStream(path, capture.WAVStreamFormat{RateHz: rate, Channels: channels, SampleType: "int24"})
	if err != nil {
		b.Fatal(err)
	}
	defer os.Remove(path)
	r := newRing(channels, rate)
	in := make([]float32, block*channels)
	for i := range in {
		in[i] = knownValue(i/channels, i%channels)
	}
	lost := func(uint64) error { b.Fatal("lost frames in a benchmark that drains every block"); return nil }
	b.SetBytes(rate * channels * 4)
	b.ResetTimer()
	for n := 0; n < b.N; n++ {
		for k := 0; k < rate/block; k++ {
			r.push(in)
			if err := r.pop(stream.Write, lost); err != nil {
				b.Fatal(err)
			}
			if k == rate/block/2-1 || k == rate/block-1 {
				if err := stream.Commit(); err != nil {
					b.Fatal(err)
				}
			}
		}
		if stream.Frames() > 1<<27/channels { // keep under the 4 GiB limit
			b.StopTimer()
			stream.Close()
			os.Remove(path)
			stream, _ = capture.CreateWAVStream(path, capture.WAVStreamFormat{RateHz: rate, Channels: channels, SampleType: "int24"})
			b.StartTimer()
		}
	}
	b.StopTimer()
	b.ReportMetric(100*b.Elapsed().Seconds()/float64(b.N), "core-%")
	stream.Close()
}
