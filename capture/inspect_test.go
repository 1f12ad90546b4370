package capture

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"strings"
	"testing"
	"time"
)

// Inspect streams WAV and raw captures and must tell exactly what reading
// the whole capture and summarising it tells (the same float64 sums in the
// same order), including the role guess and the NaN count.
func TestInspectAgreesWithOpen(t *testing.T) {
	dir := t.TempDir()
	rec := benchRecording(300_000)
	nanRec := benchRecording(300_000)
	for _, i := range []int{5, 77, 299_999} {
		nanRec.Channels[0].Samples[i] = float32(math.NaN())
	}
	nanRec.Channels[2].Samples[1000] = float32(math.Inf(-1))
	write := func(name string, f func(*bytes.Buffer) error) string {
		var buf bytes.Buffer
		if err := f(&buf); err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	planar := RawLayout{SampleType: "int16", Channels: 3, Interleaved: false, SampleRateHz: 200000}
	interleaved := RawLayout{SampleType: "float32", Channels: 3, Interleaved: true, SampleRateHz: 200000}
	cases := []struct {
		path      string
		opts      Options
		nonFinite int
	}{
		{write("a.wav", func(b *bytes.Buffer) error { return WriteWAV(b, rec, "int16") }), Options{}, 0},
		{write("nan.wav", func(b *bytes.Buffer) error { return WriteWAV(b, nanRec, "float32") }), Options{}, 4},
		{write("p.bin", func(b *bytes.Buffer) error { return WriteRaw(b, rec, planar) }), Options{Layout: &planar}, 0},
		{write("i.bin", func(b *bytes.Buffer) error { return WriteRaw(b, nanRec, interleaved) }), Options{Layout: &interleaved}, 4},
		{write("c.csv", func(b *bytes.Buffer) error { return WriteCSV(b, benchRecording(20_000), nil) }), Options{}, 0},
	}
	for _, c := range cases {
		got, err := Inspect(c.path, c.opts)
		if err != nil {
			t.Fatalf("%s: %v", c.path, err)
		}
		whole, err := Open(c.path, c.opts)
		if err != nil {
			t.Fatal(err)
		}
		want := Summarize(whole)
		nonFinite := 0
		for i := range got.Channels {
			nonFinite += got.Channels[i].NonFinite
			got.Channels[i].NonFinite = 0 // Open has already set them to 0
		}
		if nonFinite != c.nonFinite {
			t.Errorf("%s: %d NaN or infinite samples counted, %d written", c.path, nonFinite, c.nonFinite)
		}
		// What the roles were guessed from: the start of each channel, the
		// whole recording for Summarize.
		for ch := range whole.Channels {
			head := got.Head.Channels[ch].Samples
			if n := len(head); n == 0 || !reflect.DeepEqual(head, whole.Channels[ch].Samples[:n]) {
				t.Errorf("%s: channel %d's head (%d samples) is not the start of the channel", c.path, ch, n)
			}
		}
		got.Head, want.Head = nil, nil
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%s: Inspect gives\n%+v\nOpen and Summarize give\n%+v", c.path, got, want)
		}
	}
}

// writeSawtoothWAV writes a mono 16-bit WAV of n frames, a sawtooth from
// -32768 to 32767 repeating every 65536 frames, without holding it.
func writeSawtoothWAV(t *testing.T, path string, n int) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	le := binary.LittleEndian
	h := make([]byte, 44)
	copy(h, "RIFF")
	le.PutUint32(h[4:], uint32(36+2*n))
	copy(h[8:], "WAVEfmt ")
	le.PutUint32(h[16:], 16)
	le.PutUint16(h[20:], 1) // PCM
	le.PutUint16(h[22:], 1) // mono
	le.PutUint32(h[24:], 48000)
	le.PutUint32(h[28:], 96000)
	le.PutUint16(h[32:], 2)
	le.PutUint16(h[34:], 16)
	copy(h[36:], "data")
	le.PutUint32(h[40:], uint32(2*n))
	w.Write(h)
	var s [2]byte
	for i := range n {
		le.PutUint16(s[:], uint16(i))
		w.Write(s[:])
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	f.Close()
}

// Inspect's memory is its buffers and the role sample, not the file: a
// 16 M-frame capture (64 MB as float32) is inspected in a fraction of it.
func TestInspectMemoryIsBounded(t *testing.T) {
	if testing.Short() {
		t.Skip("writes a 32 MB file")
	}
	path := filepath.Join(t.TempDir(), "long.wav")
	const n = 16 << 20
	writeSawtoothWAV(t, path, n)
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	sum, err := Inspect(path, Options{})
	runtime.ReadMemStats(&after)
	if err != nil {
		t.Fatal(err)
	}
	alloc := after.TotalAlloc - before.TotalAlloc
	if limit := uint64(4*inspectRoleSamples + 8<<20); alloc > limit {
		t.Errorf("Inspect allocated %d MB for a %d MB capture; want at most %d MB", alloc>>20, 4*n>>20, limit>>20)
	}
	// Closed form: uint16(i) read as int16 sweeps -32768…32767 over each
	// 65536 frames, so min -1, max 32767/32768 full scale and, over whole
	// periods, mean -0.5/32768 and RMS² = (Σ k²)/65536/32768² for
	// k = -32768…32767.
	st := sum.Channels[0]
	var sq float64
	for k := -32768; k < 32768; k++ {
		sq += float64(k) * float64(k)
	}
	wantRMS := math.Sqrt(sq/65536) / 32768
	if sum.Frames != n || st.Min != -1 || st.Max != 32767.0/32768 || math.Abs(st.Mean+0.5/32768) > 1e-9 || math.Abs(st.RMS-wantRMS) > 1e-9 {
		t.Errorf("frames %d, stats %+v; want %d frames, min -1, max %g, mean %g, RMS %g", sum.Frames, st.Stats, n, 32767.0/32768, -0.5/32768, wantRMS)
	}
}

// BenchmarkInspectWAVInt16 inspects the capture BenchmarkWAVInt16 opens:
// the rate in samples per second and the bytes allocated per sample show
// that it streams.
func BenchmarkInspectWAVInt16(b *testing.B) {
	rec := benchRecording(4 << 20)
	var buf bytes.Buffer
	if err := WriteWAV(&buf, rec, "int16"); err != nil {
		b.Fatal(err)
	}
	path := benchFile(b, "bench.wav", buf.Bytes())
	b.SetBytes(int64(buf.Len()))
	b.ReportAllocs()
	b.ResetTimer()
	start := time.Now()
	for i := 0; i < b.N; i++ {
		if _, err := Inspect(path, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	reportSamples(b, rec.Frames()*3, start)
}

// BenchmarkOpenAndSummarizeWAVInt16 is what inspect did before it
// streamed: read everything, then summarise.
func BenchmarkOpenAndSummarizeWAVInt16(b *testing.B) {
	rec := benchRecording(4 << 20)
	var buf bytes.Buffer
	if err := WriteWAV(&buf, rec, "int16"); err != nil {
		b.Fatal(err)
	}
	path := benchFile(b, "bench.wav", buf.Bytes())
	b.SetBytes(int64(buf.Len()))
	b.ReportAllocs()
	b.ResetTimer()
	start := time.Now()
	for i := 0; i < b.N; i++ {
		whole, err := Open(path, Options{})
		if err != nil {
			b.Fatal(err)
		}
		Summarize(whole)
	}
	reportSamples(b, rec.Frames()*3, start)
}

// A sample rate like 1e-300 Hz is refused up front, from a layout, from
// the caller, or from a recording made in memory.
func TestTinySampleRateRefused(t *testing.T) {
	l := RawLayout{SampleType: "int16", Channels: 1, Interleaved: true, SampleRateHz: 1e-300}
	if err := l.Validate(); err == nil || !strings.Contains(err.Error(), "sample_rate_hz 1e-300: expected 1 to 1e+10 Hz") {
		t.Errorf("layout: %v", err)
	}
	path := filepath.Join(t.TempDir(), "a.wav")
	var buf bytes.Buffer
	if err := WriteWAV(&buf, benchRecording(1000), "int16"); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := Open(path, Options{SampleRateHz: 1e-300}); err == nil || !strings.Contains(err.Error(), "sample rate 1e-300 Hz is not between 1 and 1e+10 Hz") {
		t.Errorf("given rate: %v", err)
	}
	rec := benchRecording(10)
	rec.SampleRateHz = 1e-300
	if err := rec.Validate(); err == nil {
		t.Error("a recording at 1e-300 Hz validates")
	}
}

// TestInspectCSVMemoryIsBounded: a text capture is streamed too, so what
// Inspect allocates does not grow with the file: 6 Mi rows cost no more
// than 3 Mi rows plus a little, where holding the extra 3 Mi float32
// samples would take 12 MB. The statistics are the closed form of the
// values written (a repeating 0, 1, 2, 3: mean 1.5, RMS √3.5).
func TestInspectCSVMemoryIsBounded(t *testing.T) {
	if testing.Short() {
		t.Skip("writes 18 MB of files")
	}
	inspect := func(n int) (uint64, *Summary) {
		path := filepath.Join(t.TempDir(), "long.csv")
		b := make([]byte, 0, 2*n)
		for i := 0; i < n; i++ {
			b = append(b, byte('0'+i%4), '\n')
		}
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
		b = nil
		var before, after runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&before)
		sum, err := Inspect(path, Options{SampleRateHz: 1000})
		runtime.ReadMemStats(&after)
		if err != nil {
			t.Fatal(err)
		}
		return after.TotalAlloc - before.TotalAlloc, sum
	}
	const n = 3 << 20
	small, _ := inspect(n)
	large, sum := inspect(2 * n)
	if large > small+2<<20 {
		t.Errorf("Inspect allocated %d MB for %d rows and %d MB for %d rows: it grows with the file", small>>20, n, large>>20, 2*n)
	}
	st := sum.Channels[0]
	if sum.Frames != 2*n || st.Min != 0 || st.Max != 3 || math.Abs(st.Mean-1.5) > 1e-9 || math.Abs(st.RMS-math.Sqrt(3.5)) > 1e-9 {
		t.Errorf("frames %d, stats %+v; want %d frames, 0…3, mean 1.5, RMS %g", sum.Frames, st.Stats, 2*n, math.Sqrt(3.5))
	}
}
