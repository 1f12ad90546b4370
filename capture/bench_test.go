package capture

import (
	"bytes"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"
)

// benchRecording is a three-channel capture of about 4 M frames.
func benchRecording(frames int) *Recording {
	det, idx, pos := scannerLike(200000, float64(frames)/200000, 3)
	// keep inside ±1 full scale for the integer formats
	for i := range det {
		idx[i] /= 5
		pos[i] /= 4
	}
	return &Recording{SampleRateHz: 200000, Channels: []Channel{
		{Name: "det", Unit: UnitFullScale, Samples: det[:frames]},
		{Name: "idx", Unit: UnitFullScale, Samples: idx[:frames]},
		{Name: "pos", Unit: UnitFullScale, Samples: pos[:frames]},
	}}
}

// reportSamples reports the decode rate in millions of samples per second.
func reportSamples(b *testing.B, samples int, start time.Time) {
	b.ReportMetric(float64(samples)*float64(b.N)/time.Since(start).Seconds()/1e6, "Msamples/s")
}

// allocRatio runs open once and reports the bytes it allocated over the
// bytes of float32 samples it returned. Everything live at the peak was
// allocated during the call, so this bounds the peak memory from above.
func allocRatio(b *testing.B, open func() (*Recording, error)) {
	runtime.GC()
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	rec, err := open()
	runtime.ReadMemStats(&after)
	if err != nil {
		b.Fatal(err)
	}
	samples := float64(4 * rec.Frames() * len(rec.Channels))
	b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)/samples, "alloc/float32-bytes")
	b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)-samples, "extra-bytes")
}

func benchFile(b *testing.B, name string, data []byte) string {
	p := filepath.Join(b.TempDir(), name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		b.Fatal(err)
	}
	return p
}

func BenchmarkWAVInt16(b *testing.B) {
	rec := benchRecording(4 << 20)
	var buf bytes.Buffer
	if err := WriteWAV(&buf, rec, "int16"); err != nil {
		b.Fatal(err)
	}
	data := buf.Bytes()
	path := benchFile(b, "bench.wav", data)
	b.SetBytes(int64(len(data)))
	b.ResetTimer()
	start := time.Now()
	for i := 0; i < b.N; i++ {
		if _, err := Open(path, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	reportSamples(b, rec.Frames()*3, start)
	b.StopTimer()
	allocRatio(b, func() (*Recording, error) { return Open(path, Options{}) })
}

func BenchmarkWAVInt16Mono(b *testing.B) {
	rec := benchRecording(8 << 20)
	rec.Channels = rec.Channels[:1]
	var buf bytes.Buffer
	if err := WriteWAV(&buf, rec, "int16"); err != nil {
		b.Fatal(err)
	}
	path := benchFile(b, "mono.wav", buf.Bytes())
	b.SetBytes(int64(buf.Len()))
	b.ResetTimer()
	start := time.Now()
	for i := 0; i < b.N; i++ {
		if _, err := Open(path, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	reportSamples(b, rec.Frames(), start)
}

func BenchmarkRawInt16(b *testing.B) {
	rec := benchRecording(4 << 20)
	l := RawLayout{SampleType: "int16", Channels: 3, Interleaved: true, SampleRateHz: 200000}
	var buf bytes.Buffer
	if err := WriteRaw(&buf, rec, l); err != nil {
		b.Fatal(err)
	}
	path := benchFile(b, "bench.bin", buf.Bytes())
	opts := Options{Layout: &l}
	b.SetBytes(int64(buf.Len()))
	b.ResetTimer()
	start := time.Now()
	for i := 0; i < b.N; i++ {
		if _, err := Open(path, opts); err != nil {
			b.Fatal(err)
		}
	}
	reportSamples(b, rec.Frames()*3, start)
	b.StopTimer()
	allocRatio(b, func() (*Recording, error) { return Open(path, opts) })
}

func BenchmarkCSV(b *testing.B) {
	rec := benchRecording(1 << 20)
	var buf bytes.Buffer
	if err := WriteCSV(&buf, rec, []string{"bench capture"}); err != nil {
		b.Fatal(err)
	}
	path := benchFile(b, "bench.csv", buf.Bytes())
	b.SetBytes(int64(buf.Len()))
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Open(path, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	allocRatio(b, func() (*Recording, error) { return Open(path, Options{}) })
}

func BenchmarkWriteWAVInt16(b *testing.B) {
	rec := benchRecording(1 << 20)
	var buf bytes.Buffer
	b.SetBytes(int64(2 * 3 * rec.Frames()))
	b.ResetTimer()
	start := time.Now()
	for i := 0; i < b.N; i++ {
		buf.Reset()
		if err := WriteWAV(&buf, rec, "int16"); err != nil {
			b.Fatal(err)
		}
	}
	reportSamples(b, rec.Frames()*3, start)
}
