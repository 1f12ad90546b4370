package capture

import (
	"bytes"
	"errors"
	"runtime"
	"strings"
	"testing"
)

func readWAVBytes(data []byte) (*Recording, error) {
	return readWAV(bytes.NewReader(data), int64(len(data)), Options{})
}

func pcm16Data(frames, channels int) []byte {
	var d le
	for i := 0; i < frames*channels; i++ {
		d = d.u16(uint16(int16(intSample(i, 0, 16))))
	}
	return d
}

// TestWAVStructureErrors builds damaged files byte by byte (RIFF 1.0 chunk
// layout) and checks each error's type, place and words.
func TestWAVStructureErrors(t *testing.T) {
	fmt16 := fmtChunk(1, 1, 8000, 16, nil)
	for _, tc := range []struct {
		name        string
		data        []byte
		unsupported bool
		place       string
		words       string
	}{
		{"data before fmt", riffWAVE(chunk("data", pcm16Data(4, 1)), fmt16), false, "byte 12", "before any fmt"},
		{"no data chunk", riffWAVE(fmt16, chunk("junk", []byte{1, 2})), false, "byte 46", "without a data chunk"},
		{"block align wrong", patched(riffWAVE(fmt16, chunk("data", pcm16Data(4, 1))), 32, 3, 2), false, "byte 32", "block align 3"},
		{"partial frame", riffWAVE(fmtChunk(1, 2, 8000, 16, nil), chunk("data", pcm16Data(3, 1)[:6])), false, "byte 36", "not a whole number of 4-byte frames"},
		{"no samples", riffWAVE(fmt16, chunk("data", nil)), false, "byte 36", "no samples"},
		{"17 channels", riffWAVE(fmtChunk(1, 17, 8000, 16, nil), chunk("data", pcm16Data(2, 17))), true, "byte 22", "17 channels"},
		{"12-bit container", riffWAVE(fmtChunk(1, 1, 8000, 12, nil), chunk("data", pcm16Data(2, 1))), true, "byte 34", "12-bit PCM"},
		{"unknown sub-format", riffWAVE(fmtChunk(0xFFFE, 1, 8000, 16, guid(0x55)), chunk("data", pcm16Data(2, 1))), true, "byte 44", "sub-format"},
		{"short extensible fmt", riffWAVE(chunk("fmt ", fmt16[8:][:16]), chunk("data", pcm16Data(2, 1))), false, "", ""},
		{"float 16-bit", riffWAVE(fmtChunk(3, 1, 8000, 16, nil), chunk("data", pcm16Data(2, 1))), false, "byte 34", "16-bit IEEE float"},
		{"RIFX", append([]byte("RIFX"), riffWAVE(fmt16)[4:]...), true, "byte 0", "RIFX"},
		{"not WAVE form", append(append([]byte(nil), riffWAVE(fmt16)[:8]...), "AVI "...), false, "byte 8", `"AVI "`},
		{"huge fmt", riffWAVE(le(nil).id("fmt ").u32(0x7FFFFFF0)), false, "byte 12", "claims 2147483632 bytes"},
	} {
		if tc.name == "short extensible fmt" {
			// a 16-byte fmt chunk whose tag says EXTENSIBLE
			d := riffWAVE(fmtChunk(1, 1, 8000, 16, nil), chunk("data", pcm16Data(2, 1)))
			tc.data = patched(d, 20, 0xFFFE, 2)
			tc.place, tc.words = "byte 36", "40 bytes with cbSize 22"
		}
		_, err := readWAVBytes(tc.data)
		var fe *FormatError
		var ue *UnsupportedError
		switch {
		case err == nil:
			t.Errorf("%s: no error", tc.name)
			continue
		case tc.unsupported && !errors.As(err, &ue), !tc.unsupported && !errors.As(err, &fe):
			t.Errorf("%s: %T %v, want unsupported=%v", tc.name, err, err, tc.unsupported)
		}
		if msg := err.Error(); !strings.Contains(msg, tc.place) || !strings.Contains(msg, tc.words) || !strings.Contains(msg, "expected") {
			t.Errorf("%s: %q, want %q and %q", tc.name, msg, tc.place, tc.words)
		}
	}
}

// TestWAVTolerates checks files that are odd but valid under RIFF 1.0 or
// common in the wild.
func TestWAVTolerates(t *testing.T) {
	data := pcm16Data(10, 1)
	// A LIST/INFO chunk before fmt whose inner size claims 4 GiB: read
	// without allocating from that size.
	hostile := le(nil).id("INFO").id("ICMT").u32(0xFFFFFFF0).raw([]byte("x"))
	base := riffWAVE(chunk("LIST", hostile), fmtChunk(1, 1, 8000, 16, nil), chunk("data", data))
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	rec, err := readWAVBytes(base)
	runtime.ReadMemStats(&after)
	if err != nil || rec.Frames() != 10 {
		t.Fatalf("LIST before fmt: %v", err)
	}
	if grew := after.TotalAlloc - before.TotalAlloc; grew > 1<<22 {
		t.Errorf("reading a 100-byte file allocated %d bytes", grew)
	}
	// A RIFF size larger than the file (a writer that never went back to
	// fix it) does not matter: the chunks are checked one by one.
	if rec, err := readWAVBytes(patched(base, 4, 0xFFFFFFFF, 4)); err != nil || rec.Frames() != 10 {
		t.Errorf("RIFF size too large: %v", err)
	}
	// Trailing bytes after the data that are no whole chunk.
	if rec, err := readWAVBytes(append(append([]byte(nil), base...), 0, 0, 0)); err != nil || rec.Frames() != 10 {
		t.Errorf("trailing bytes: %v", err)
	}
	// WAVE_FORMAT_EXTENSIBLE with 20 valid bits in a 24-bit container is
	// read on the container's full scale.
	ext := riffWAVE(fmtChunk(0xFFFE, 1, 8000, 24, guid(1)), chunk("data", []byte{0, 0, 0x40, 0, 0, 0xC0}))
	ext = patched(ext, 38, 20, 2) // wValidBitsPerSample
	rec, err = readWAVBytes(ext)
	if err != nil || rec.Channels[0].Samples[0] != 0.5 || rec.Channels[0].Samples[1] != -0.5 {
		t.Errorf("20 valid bits: %v %v", err, rec)
	}
}

// TestOpenProgress checks that progress rises to 1.
func TestOpenProgress(t *testing.T) {
	rec := testRecording(2, 300000, 48000)
	var buf bytes.Buffer
	if err := WriteWAV(&buf, rec, "int16"); err != nil {
		t.Fatal(err)
	}
	var seen []float64
	if _, err := readWAV(bytes.NewReader(buf.Bytes()), int64(buf.Len()), Options{Progress: func(f float64) { seen = append(seen, f) }}); err != nil {
		t.Fatal(err)
	}
	if len(seen) < 2 || seen[len(seen)-1] != 1 {
		t.Fatalf("progress %v", seen)
	}
	for i := 1; i < len(seen); i++ {
		if seen[i] < seen[i-1] {
			t.Fatalf("progress fell: %v", seen)
		}
	}
}

// TestWAVMissingPad reads a file whose odd chunk before fmt has no pad
// byte, as some writers leave it out.
func TestWAVMissingPad(t *testing.T) {
	data := pcm16Data(6, 1)
	noPad := le(nil).id("note").u32(3).raw([]byte("abc")) // no pad byte
	file := riffWAVE(noPad, fmtChunk(1, 1, 8000, 16, nil), chunk("data", data))
	rec, err := readWAVBytes(file)
	if err != nil || rec.Frames() != 6 {
		t.Fatalf("missing pad: %v", err)
	}
	padded := riffWAVE(chunk("note", []byte("abc")), fmtChunk(1, 1, 8000, 16, nil), chunk("data", data))
	if rec, err := readWAVBytes(padded); err != nil || rec.Frames() != 6 {
		t.Fatalf("with pad: %v", err)
	}
}

// TestWAVChunksBeforeFmt: JUNK and bext chunks before fmt (as broadcast
// and recorder files have), and fact/LIST between fmt and data.
func TestWAVChunksBeforeFmt(t *testing.T) {
	data := pcm16Data(8, 2)
	file := riffWAVE(chunk("JUNK", make([]byte, 28)), chunk("bext", make([]byte, 602)), fmtChunk(1, 2, 48000, 16, nil),
		chunk("fact", le(nil).u32(4)), chunk("LIST", le(nil).id("INFO").raw(chunk("ISFT", []byte("bench\x00")))), chunk("data", data),
		chunk("PEAK", make([]byte, 24)))
	rec, err := readWAVBytes(file)
	if err != nil || rec.Frames() != 8 || len(rec.Channels) != 2 || rec.SampleRateHz != 48000 {
		t.Fatalf("%v %+v", err, rec)
	}
	// frame 1 channel 0 is the third stored sample
	if want := float32(intSample(2, 0, 16)) / 32768; rec.Channels[0].Samples[1] != want {
		t.Fatalf("ch0[1] = %v, want %v", rec.Channels[0].Samples[1], want)
	}
}
