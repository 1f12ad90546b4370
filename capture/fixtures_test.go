package capture

import (
	"bytes"
	"encoding/binary"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/go-audio/audio"
	"github.com/go-audio/wav"
)

// The fixtures under testdata/capture are made by makeFixtures; run
//
//	go test ./capture -run TestFixturesUpToDate -update
//
// to write them again. testdata/README.md lists each file.
var update = flag.Bool("update", false, "rewrite the fixtures in testdata/capture")

const fixtureDir = "../testdata/capture"

// fuzzDir holds the seed corpora, where go test looks for them.
const fuzzDir = "testdata/fuzz"

// fixtureFrames is the length of every WAV fixture: odd, so 8-bit mono
// data needs the RIFF pad byte.
const fixtureFrames = 61

// intSample is the stored integer of frame i, channel c at the given bit
// depth: the first two frames of channel 0 are the most negative and most
// positive codes, the rest a sine of (c+1) cycles per 37 frames at 90 %.
func intSample(i, c, bits int) int {
	fs := 1 << (bits - 1)
	switch {
	case c == 0 && i == 0:
		return -fs
	case c == 0 && i == 1:
		return fs - 1
	}
	return int(math.Round(0.9 * float64(fs-1) * math.Sin(2*math.Pi*float64((i+1)*(c+1))/37)))
}

// floatSample is frame i, channel c of the float fixtures: full scale, zero,
// a value past full scale, then a sine.
func floatSample(i, c int) float64 {
	switch i {
	case 0:
		return -1
	case 1:
		return 1
	case 2:
		return 0
	case 3:
		return 1.5 // float WAV may exceed full scale
	}
	return 0.75 * math.Sin(2*math.Pi*float64((i+1)*(c+1))/29)
}

// goAudioWAV writes an integer PCM fixture with go-audio/wav's encoder, a
// writer independent of ours.
func goAudioWAV(path string, rate, bits, channels int) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	enc := wav.NewEncoder(f, rate, bits, channels, 1)
	buf := &audio.IntBuffer{Format: &audio.Format{NumChannels: channels, SampleRate: rate}, SourceBitDepth: bits}
	for i := 0; i < fixtureFrames; i++ {
		for c := 0; c < channels; c++ {
			v := intSample(i, c, bits)
			if bits == 8 {
				v += 128 // 8-bit PCM is unsigned (RIFF 1.0, "Data Packing for PCM")
			}
			buf.Data = append(buf.Data, v)
		}
	}
	if err := enc.Write(buf); err != nil {
		f.Close()
		return err
	}
	if err := enc.Close(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// le appends little-endian fields, for assembling files byte by byte.
type le []byte

func (b le) u16(v uint16) le  { return binary.LittleEndian.AppendUint16(b, v) }
func (b le) u32(v uint32) le  { return binary.LittleEndian.AppendUint32(b, v) }
func (b le) id(s string) le   { return append(b, s...) }
func (b le) raw(p []byte) le  { return append(b, p...) }
func (b le) f32(v float32) le { return b.u32(math.Float32bits(v)) }
func (b le) f64(v float64) le { return binary.LittleEndian.AppendUint64(b, math.Float64bits(v)) }

// chunk wraps a body as a RIFF chunk: ckID, ckSize (without the pad), the
// body and a zero pad byte when the size is odd (RIFF 1.0, chapter 3).
func chunk(id string, body []byte) []byte {
	out := le(nil).id(id).u32(uint32(len(body))).raw(body)
	if len(body)%2 == 1 {
		out = append(out, 0)
	}
	return out
}

// riffWAVE wraps chunks in the RIFF form "WAVE".
func riffWAVE(chunks ...[]byte) []byte {
	var body []byte
	for _, c := range chunks {
		body = append(body, c...)
	}
	return le(nil).id("RIFF").u32(uint32(4 + len(body))).id("WAVE").raw(body)
}

// fmtChunk assembles a fmt chunk: WAVEFORMATEX fields wFormatTag,
// nChannels, nSamplesPerSec, nAvgBytesPerSec, nBlockAlign, wBitsPerSample,
// then cbSize and, for WAVE_FORMAT_EXTENSIBLE, wValidBitsPerSample,
// dwChannelMask and the SubFormat GUID.
func fmtChunk(tag uint16, channels, rate, bits int, sub []byte) []byte {
	block := channels * bits / 8
	b := le(nil).u16(tag).u16(uint16(channels)).u32(uint32(rate)).u32(uint32(rate * block)).u16(uint16(block)).u16(uint16(bits))
	switch {
	case sub != nil:
		b = b.u16(22).u16(uint16(bits)).u32(0).raw(sub)
	case tag == 3:
		b = b.u16(0)
	}
	return chunk("fmt ", b)
}

// GUIDs written out from their text form {0000000X-0000-0010-8000-00AA00389B71}
// (Data1 as a little-endian uint32, Data2 and Data3 as little-endian uint16,
// Data4 as 8 bytes), independently of consts.go.
func guid(data1 uint32) []byte {
	return le(nil).u32(data1).u16(0x0000).u16(0x0010).raw([]byte{0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71})
}

// floatWAV assembles an IEEE float file byte by byte: fmt (tag 3 or
// extensible), fact with the frame count, data.
func floatWAV(bits, channels int, extensible bool) []byte {
	var data le
	for i := 0; i < fixtureFrames; i++ {
		for c := 0; c < channels; c++ {
			if bits == 32 {
				data = data.f32(float32(floatSample(i, c)))
			} else {
				data = data.f64(floatSample(i, c))
			}
		}
	}
	f := fmtChunk(3, channels, 96000, bits, nil)
	if extensible {
		f = fmtChunk(0xFFFE, channels, 96000, bits, guid(3))
	}
	return riffWAVE(f, chunk("fact", le(nil).u32(fixtureFrames)), chunk("data", data))
}

// extPCM24 assembles a WAVE_FORMAT_EXTENSIBLE 24-bit PCM file byte by byte.
func extPCM24(channels int) []byte {
	var data le
	for i := 0; i < fixtureFrames; i++ {
		for c := 0; c < channels; c++ {
			v := uint32(int32(intSample(i, c, 24)))
			data = append(data, byte(v), byte(v>>8), byte(v>>16))
		}
	}
	return riffWAVE(fmtChunk(0xFFFE, channels, 192000, 24, guid(1)), chunk("data", data))
}

// oddChunks is 8-bit mono with an odd-sized unknown chunk before fmt, an
// odd data chunk with its pad byte, and an odd unknown chunk and a LIST
// chunk after the data.
func oddChunks() []byte {
	var data []byte
	for i := 0; i < fixtureFrames; i++ {
		data = append(data, byte(intSample(i, 0, 8)+128))
	}
	list := le(nil).id("INFO").raw(chunk("ICMT", []byte("bench run 3\x00")))
	return riffWAVE(chunk("note", []byte("odd!!")), fmtChunk(1, 1, 11025, 8, nil), chunk("data", data),
		chunk("tail", []byte("xyz")), chunk("LIST", list))
}

// fixtureFile is one file made by makeFixtures.
type fixtureFile struct {
	name string
	make func(path string) error
}

func bytesFixture(data []byte) func(string) error {
	return func(path string) error { return os.WriteFile(path, data, 0o644) }
}

// goodWAVs are the valid WAV fixtures with what they hold.
var goodWAVs = []struct {
	name       string
	bits       int
	float      bool
	channels   int
	rate       float64
	sampleType string
}{
	{"pcm_u8_mono.wav", 8, false, 1, 8000, "uint8"},
	{"pcm_s16_stereo.wav", 16, false, 2, 44100, "int16"},
	{"pcm_s24_3ch.wav", 24, false, 3, 48000, "int24"},
	{"pcm_s32_mono.wav", 32, false, 1, 96000, "int32"},
	{"pcm_s16_16ch.wav", 16, false, 16, 22050, "int16"},
	{"float32_stereo.wav", 32, true, 2, 96000, "float32"},
	{"float64_mono.wav", 64, true, 1, 96000, "float64"},
	{"ext_float32_4ch.wav", 32, true, 4, 96000, "float32"},
	{"ext_pcm24_4ch.wav", 24, false, 4, 192000, "int24"},
	{"odd_chunks.wav", 8, false, 1, 11025, "uint8"},
}

// validWAV is a small correct file the broken fixtures start from.
func validWAV() []byte {
	var data le
	for i := 0; i < 32; i++ {
		data = data.u16(uint16(int16(intSample(i, 0, 16))))
	}
	return riffWAVE(fmtChunk(1, 1, 8000, 16, nil), chunk("data", data))
}

// patched returns a copy of b with a little-endian uint32 or uint16 at off.
func patched(b []byte, off int, v uint32, width int) []byte {
	out := append([]byte(nil), b...)
	if width == 2 {
		binary.LittleEndian.PutUint16(out[off:], uint16(v))
	} else {
		binary.LittleEndian.PutUint32(out[off:], v)
	}
	return out
}

// Byte offsets in validWAV: RIFF header 12, fmt header 8, then
// wFormatTag at 20, nChannels 22, nSamplesPerSec 24, wBitsPerSample 34,
// data chunk header at 36, its ckSize at 40.
var badFixtures = []struct {
	name  string
	data  func() []byte
	place string // as Place.String gives it
	words string // part of the message
}{
	{"truncated_header.wav", func() []byte { return validWAV()[:30] }, "byte 12", "fmt"},
	{"zero_channels.wav", func() []byte { return patched(validWAV(), 22, 0, 2) }, "byte 22", "zero channels"},
	{"zero_rate.wav", func() []byte { return patched(validWAV(), 24, 0, 4) }, "byte 24", "sample rate 0 Hz"},
	{"absurd_rate.wav", func() []byte { return patched(validWAV(), 24, 0xFFFFFFFF, 4) }, "byte 24", "sample rate 4294967295 Hz"},
	{"compressed.wav", func() []byte { return patched(validWAV(), 20, 2, 2) }, "byte 20", "format tag 0x0002"},
	{"not_riff.wav", func() []byte { return []byte("this is not a wave file at all\n") }, "byte 0", `"RIFF"`},
	{"not_number.csv", func() []byte {
		return []byte("time (s),det (V),idx (V)\n0,0.1,0\n0.001,0.2,5\n0.002,0.3x,5\n0.003,0.4,0\n")
	}, "line 4:7", `"0.3x"`},
	{"ragged.csv", func() []byte {
		return []byte("time (s),det (V),idx (V)\n0,0.1,0\n0.001,0.2\n0.002,0.3,5\n0.003,0.4,0\n")
	}, "line 3", "2 fields"},
	{"time_backwards.csv", func() []byte { return []byte("time (s),det (V)\n0,1\n0.002,2\n0.001,3\n0.003,4\n") }, "line 4:1", "does not come after"},
	{"empty.csv", func() []byte { return nil }, "", "empty"},
	{"odd_size.bin", func() []byte { return make([]byte, 6*10+3) }, "byte 60", "not a whole number of 6-byte frames"},
	{"no_layout.bin", func() []byte { return []byte{0, 1, 2, 3, 0xfe, 0xff, 0x80, 0x7f} }, "", "layout.json"},
	{"unknown.xyz", func() []byte { return []byte{0x89, 'P', 'N', 'G', 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0x0d} }, "byte 0", "unknown format"},
}

// csvFixtures are text fixtures with the shape they must read as.
var csvFixtures = []struct {
	name     string
	text     string
	rate     float64
	names    []string
	first    []float32 // first row of samples
	warnings int
}{
	{"scope.csv", "Model,Bench scope 4ch\r\nRecord length,6\r\nSample interval,2.0E-06\r\n\r\nTime (s),CH1 (V),CH2 (mV),CH3 (V)\r\n" +
		"0.000000,0.125,4800,1.50\r\n0.000002,0.250,4800,1.50\r\n0.000004,0.375,100,1.51\r\n0.000006,0.250,100,1.51\r\n0.000008,0.125,100,1.52\r\n0.000010,0.000,4800,1.52\r\n",
		500000, []string{"CH1", "CH2", "CH3"}, []float32{0.125, 4.8, 1.5}, 0},
	{"logger_semicolon.csv", "Messung;Prüfstand 2\nZeit [s];Detektor [V];Index [V];Lage [V]\n0,000;0,50;0,0;2,25\n0,001;0,75;5,0;2,25\n0,002;1,00;5,0;2,26\n0,003;0,75;0,0;2,26\n",
		1000, []string{"Detektor", "Index", "Lage"}, []float32{0.5, 0, 2.25}, 0},
	{"quoted.csv", "\"time (s)\",\"detector, main (V)\",\"index \"\"A\"\" (V)\"\n\"0\",\"0.5\",\"0\"\n\"0.5\",\"0.25\",\"1\"\n\"1.0\",\"-0.5\",\"0\"\n",
		2, []string{"detector, main", `index "A"`}, []float32{0.5, 0}, 0},
	{"plain.tsv", "t\tdet\tidx\n0\t1\t0\n0.01\t2\t1\n0.02\t3\t0\n0.035\t4\t1\n",
		1 / (0.035 / 3), []string{"det", "idx"}, []float32{1, 0}, 1},
	{"columns.txt", "# made-up logger, whitespace columns, no header\n  0.00   0.10   4.9\n  0.25   0.20   0.1\n  0.50   0.30   4.9\n",
		4, []string{"ch0", "ch1"}, []float32{0.1, 4.9}, 0},
}

// rawLayouts are the raw fixtures: a capture and its sidecar layout.
var rawFixtures = []struct {
	name   string
	layout RawLayout
}{
	{"adc_int16.bin", RawLayout{SampleType: "int16", Channels: 3, Interleaved: true, SampleRateHz: 50000, Scale: []float64{10.0 / 32768}, Names: []string{"det", "index", "pos"}}},
	{"adc_planar_be.raw", RawLayout{SampleType: "uint16", ByteOrder: "big", Channels: 2, Interleaved: false, HeaderBytes: 32, SampleRateHz: 20000}},
}

// rawFixtureValue is the volts of frame i, channel c of a raw fixture, on
// the codes each layout can hold exactly.
func rawFixtureValue(i, c int, l RawLayout) float32 {
	k := intSample(i, c, 16)
	if len(l.Scale) > 0 {
		return float32(float64(k) * l.Scale[0])
	}
	return float32(float64(k) / 32768)
}

func rawRecording(l RawLayout) *Recording {
	rec := &Recording{SampleRateHz: l.SampleRateHz}
	for c := 0; c < l.Channels; c++ {
		s := make([]float32, fixtureFrames)
		for i := range s {
			s[i] = rawFixtureValue(i, c, l)
		}
		rec.Channels = append(rec.Channels, Channel{Name: fmt.Sprint(c), Samples: s})
	}
	return rec
}

// makeFixtures writes every fixture into dir.
func makeFixtures(dir string) error {
	if err := os.MkdirAll(filepath.Join(dir, "bad"), 0o755); err != nil {
		return err
	}
	files := []fixtureFile{
		{"pcm_u8_mono.wav", func(p string) error { return goAudioWAV(p, 8000, 8, 1) }},
		{"pcm_s16_stereo.wav", func(p string) error { return goAudioWAV(p, 44100, 16, 2) }},
		{"pcm_s24_3ch.wav", func(p string) error { return goAudioWAV(p, 48000, 24, 3) }},
		{"pcm_s32_mono.wav", func(p string) error { return goAudioWAV(p, 96000, 32, 1) }},
		{"pcm_s16_16ch.wav", func(p string) error { return goAudioWAV(p, 22050, 16, 16) }},
		{"float32_stereo.wav", bytesFixture(floatWAV(32, 2, false))},
		{"float64_mono.wav", bytesFixture(floatWAV(64, 1, false))},
		{"ext_float32_4ch.wav", bytesFixture(floatWAV(32, 4, true))},
		{"ext_pcm24_4ch.wav", bytesFixture(extPCM24(4))},
		{"odd_chunks.wav", bytesFixture(oddChunks())},
	}
	files = append(files, wavLayoutFiles()...)
	for _, c := range csvFixtures {
		files = append(files, fixtureFile{c.name, bytesFixture([]byte(c.text))})
	}
	for _, r := range rawFixtures {
		r := r
		files = append(files, fixtureFile{r.name, func(p string) error {
			var buf bytes.Buffer
			if err := WriteRaw(&buf, rawRecording(r.layout), r.layout); err != nil {
				return err
			}
			if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
				return err
			}
			return WriteLayoutFile(strings.TrimSuffix(p, filepath.Ext(p))+".layout.json", r.layout)
		}})
	}
	for _, b := range badFixtures {
		files = append(files, fixtureFile{filepath.Join("bad", b.name), bytesFixture(b.data())})
	}
	files = append(files, fixtureFile{"bad/odd_size.layout.json", func(p string) error {
		return WriteLayoutFile(p, RawLayout{SampleType: "int16", Channels: 3, Interleaved: true, SampleRateHz: 1000})
	}})
	for _, f := range files {
		if err := f.make(filepath.Join(dir, f.name)); err != nil {
			return fmt.Errorf("%s: %v", f.name, err)
		}
	}
	return nil
}

// TestFixturesUpToDate regenerates the fixtures and compares them with the
// committed files, byte for byte (or rewrites them with -update).
func TestFixturesUpToDate(t *testing.T) {
	if *update {
		if err := makeFixtures(fixtureDir); err != nil {
			t.Fatal(err)
		}
		if err := makeFuzzCorpus(fuzzDir, fixtureDir); err != nil {
			t.Fatal(err)
		}
	}
	dir := t.TempDir()
	if err := makeFixtures(dir); err != nil {
		t.Fatal(err)
	}
	corpus := t.TempDir()
	if err := makeFuzzCorpus(corpus, dir); err != nil {
		t.Fatal(err)
	}
	check := func(made, committed string) {
		err := filepath.Walk(made, func(p string, info os.FileInfo, err error) error {
			if err != nil || info.IsDir() {
				return err
			}
			rel, _ := filepath.Rel(made, p)
			want, _ := os.ReadFile(p)
			got, err := os.ReadFile(filepath.Join(committed, rel))
			if err != nil || !bytes.Equal(got, want) {
				t.Errorf("%s differs from what the generator writes; run go test ./capture -run TestFixturesUpToDate -update", filepath.Join(committed, rel))
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	check(dir, fixtureDir)
	check(corpus, fuzzDir)
}

// TestWAVFixtures decodes every WAV fixture and compares each sample with
// the value the independent writer was given: code/2^(bits-1) for integer
// PCM, the float itself (rounded to float32) for IEEE float.
func TestWAVFixtures(t *testing.T) {
	for _, fx := range goodWAVs {
		rec, err := Open(filepath.Join(fixtureDir, fx.name), Options{})
		if err != nil {
			t.Errorf("%s: %v", fx.name, err)
			continue
		}
		if rec.SampleRateHz != fx.rate || len(rec.Channels) != fx.channels || rec.Frames() != fixtureFrames ||
			rec.Source.SampleType != fx.sampleType || rec.Source.Format != "wav" {
			t.Errorf("%s: %g Hz, %d channels, %d frames, %s/%s", fx.name, rec.SampleRateHz, len(rec.Channels), rec.Frames(), rec.Source.Format, rec.Source.SampleType)
			continue
		}
		for c, ch := range rec.Channels {
			for i, got := range ch.Samples {
				var want float32
				if fx.float {
					want = float32(floatSample(i, c))
				} else {
					want = float32(float64(intSample(i, c, fx.bits)) / math.Ldexp(1, fx.bits-1))
				}
				if got != want {
					t.Fatalf("%s ch%d[%d] = %v, want %v", fx.name, c, i, got, want)
				}
			}
		}
	}
}

func TestCSVFixtures(t *testing.T) {
	for _, fx := range csvFixtures {
		rec, err := Open(filepath.Join(fixtureDir, fx.name), Options{})
		if err != nil {
			t.Errorf("%s: %v", fx.name, err)
			continue
		}
		if math.Abs(rec.SampleRateHz-fx.rate) > 1e-9*fx.rate || len(rec.Channels) != len(fx.names) || len(rec.Warnings) != fx.warnings {
			t.Errorf("%s: %v Hz, %d channels, warnings %q", fx.name, rec.SampleRateHz, len(rec.Channels), rec.Warnings)
			continue
		}
		for c, ch := range rec.Channels {
			if ch.Name != fx.names[c] || math.Abs(float64(ch.Samples[0]-fx.first[c])) > 1e-6 {
				t.Errorf("%s: channel %d %q first %v, want %q %v", fx.name, c, ch.Name, ch.Samples[0], fx.names[c], fx.first[c])
			}
		}
	}
}

func TestRawFixtures(t *testing.T) {
	for _, fx := range rawFixtures {
		rec, err := Open(filepath.Join(fixtureDir, fx.name), Options{})
		if err != nil {
			t.Errorf("%s: %v", fx.name, err)
			continue
		}
		for c, ch := range rec.Channels {
			for i, got := range ch.Samples {
				if want := rawFixtureValue(i, c, fx.layout); math.Abs(float64(got-want)) > 1e-6 {
					t.Fatalf("%s ch%d[%d] = %v, want %v", fx.name, c, i, got, want)
				}
			}
		}
	}
}

// TestBadFixtures checks that every broken file gives one line naming the
// file, the place and what was expected.
func TestBadFixtures(t *testing.T) {
	for _, fx := range badFixtures {
		path := filepath.Join(fixtureDir, "bad", fx.name)
		_, err := Open(path, Options{})
		if err == nil {
			t.Errorf("%s: no error", fx.name)
			continue
		}
		msg := err.Error()
		if !strings.HasPrefix(msg, path+": ") || !strings.Contains(msg, fx.place) || !strings.Contains(msg, fx.words) ||
			strings.Contains(msg, "\n") || !(strings.Contains(msg, "expected") || strings.Contains(msg, "e.g.")) {
			t.Errorf("%s: %q; want the path, %q, %q and what was expected on one line", fx.name, msg, fx.place, fx.words)
		}
	}
	_, err := Open(fixtureDir, Options{})
	if err == nil || !strings.Contains(err.Error(), "is a directory") {
		t.Errorf("directory: %v", err)
	}
}
