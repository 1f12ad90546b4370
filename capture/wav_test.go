package capture

import (
	"bytes"
	"errors"
	"math"
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
		{"65-bit PCM", patched(riffWAVE(fmtChunk(1, 1, 8000, 16, nil), chunk("data", pcm16Data(2, 1))), 34, 65, 2), true, "byte 34", "65-bit PCM"},
		{"12 bits, block align of 12/8", riffWAVE(fmtChunk(1, 1, 8000, 12, nil), chunk("data", pcm16Data(2, 1))), false, "byte 32", "block align 1"},
		{"unknown sub-format", riffWAVE(fmtChunk(0xFFFE, 1, 8000, 16, guid(0x55)), chunk("data", pcm16Data(2, 1))), true, "byte 44", "sub-format"},
		{"short extensible fmt", riffWAVE(chunk("fmt ", fmt16[8:][:16]), chunk("data", pcm16Data(2, 1))), false, "", ""},
		{"float 16-bit", riffWAVE(fmtChunk(3, 1, 8000, 16, nil), chunk("data", pcm16Data(2, 1))), false, "byte 34", "16-bit IEEE float"},
		{"RF64", append([]byte("RF64"), riffWAVE(fmt16)[4:]...), true, "byte 0", "RF64"},
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
	if rec, err := readWAVBytes(append(append([]byte(nil), base...), "JUNK\x00\x00\x00"...)); err != nil || rec.Frames() != 10 {
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

// TestWAVSizeWarnings: a RIFF size that disagrees with the file and bytes
// after the last chunk are read past with one warning each; a correct file,
// and one whose final odd chunk lacks only its pad byte, warn of nothing.
func TestWAVSizeWarnings(t *testing.T) {
	base := validWAV() // 108 bytes, RIFF size 100 at byte 4
	for _, tc := range []struct {
		name   string
		data   []byte
		frames int
		words  []string
	}{
		{"correct", base, 32, nil},
		{"RIFF size large", patched(base, 4, 5000, 4), 32, []string{"RIFF header gives the file as 5008 bytes, but it is 108 bytes"}},
		{"RIFF size small", patched(base, 4, 40, 4), 32, []string{"as 48 bytes, but it is 108"}},
		{"junk after data", append(append([]byte(nil), base...), "JUNK\x00\x01"...), 32, []string{"bytes 108 to 114 after the last chunk", "as 108 bytes, but it is 114"}},
		{"ID3 tag after data", append(append([]byte(nil), base...), "ID3\x03\x00\x00"...), 32, []string{"bytes 108 to 114 after the last chunk", "as 108 bytes, but it is 114"}},
		{"junk after data, RIFF size covering it", append(patched(base, 4, 103, 4), "\x00\x00\x01"...), 32, []string{"bytes 108 to 111 after the last chunk"}},
		{"chunk after data too long", append(patched(base, 4, 112, 4), le(nil).id("LIST").u32(400).raw([]byte("abcd"))...), 32, []string{"bytes 108 to 120 after the last chunk"}},
		{"odd last chunk without pad", append(patched(base, 4, 100+12, 4), le(nil).id("note").u32(3).raw([]byte("abc"))...), 32, nil},
		// samples after a data chunk the RIFF size ends the form with: a
		// recorder killed after it last rewrote the sizes
		{"samples after data", append(append([]byte(nil), base...), "\x00\x00\x01"...), 33, []string{"states 32 frames, but 1 more follow"}},
	} {
		rec, err := readWAVBytes(tc.data)
		if err != nil || rec.Frames() != tc.frames {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		if len(rec.Warnings) != len(tc.words) {
			t.Errorf("%s: warnings %q, want %d", tc.name, rec.Warnings, len(tc.words))
			continue
		}
		for i, w := range tc.words {
			if !strings.Contains(rec.Warnings[i], w) {
				t.Errorf("%s: warning %q, want %q", tc.name, rec.Warnings[i], w)
			}
		}
	}
}

// TestWAVSamplesBeyondStatedSize: a file whose header covers 32 frames,
// followed by 10 more frames and half of another (what a recorder killed
// between two header rewrites leaves), reads as 42 frames whose values are
// the ones written (16-bit PCM, RIFF 1.0 WAVE "Data Packing for PCM"), with
// one warning giving the seconds recovered and the bytes left over.
func TestWAVSamplesBeyondStatedSize(t *testing.T) {
	var more le
	for i := 32; i < 42; i++ {
		more = more.u16(uint16(int16(intSample(i, 0, 16))))
	}
	file := append(append(validWAV(), more...), 0x7F) // 8000 Hz mono int16
	for _, inspect := range []bool{false, true} {
		opts := Options{}
		if inspect {
			opts.summary = &summarizer{}
		}
		rec, err := readWAV(bytes.NewReader(file), int64(len(file)), opts)
		if err != nil {
			t.Fatal(err)
		}
		if len(rec.Warnings) != 1 {
			t.Fatalf("inspect %v: warnings %q, want one", inspect, rec.Warnings)
		}
		for _, w := range []string{"states 32 frames, but 10 more follow", "0.00125 s were recovered beyond the header", "last 1 bytes, less than a frame, were ignored"} {
			if !strings.Contains(rec.Warnings[0], w) {
				t.Errorf("inspect %v: warning %q, want %q", inspect, rec.Warnings[0], w)
			}
		}
		if inspect {
			if n := opts.summary.frames; n != 42 {
				t.Errorf("inspect read %d frames, want 42", n)
			}
			continue
		}
		if rec.Frames() != 42 {
			t.Fatalf("%d frames, want 42", rec.Frames())
		}
		for i, v := range rec.Channels[0].Samples {
			if want := float32(intSample(i, 0, 16)) / 32768; v != want {
				t.Fatalf("frame %d = %v, want %v", i, v, want)
			}
		}
	}
}

// TestWAVBigEndianExtensible reads a RIFX file with WAVE_FORMAT_EXTENSIBLE
// and the IEEE float sub-format: the GUID's first three fields are
// big-endian too, like every other number in a RIFX file.
func TestWAVBigEndianExtensible(t *testing.T) {
	sub := be(nil).u32(3).u16(0).u16(0x0010).raw([]byte{0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71})
	fmtBody := be(nil).u16(0xFFFE).u16(1).u32(1000).u32(4000).u16(4).u16(32).u16(22).u16(32).u32(0).raw(sub)
	data := be(nil).u32(math.Float32bits(0.25)).u32(math.Float32bits(-1.5))
	body := be(nil).id("WAVE").id("fmt ").u32(uint32(len(fmtBody))).raw(fmtBody).id("data").u32(uint32(len(data))).raw(data)
	rec, err := readWAVBytes(be(nil).id("RIFX").u32(uint32(len(body))).raw(body))
	if err != nil || rec.Frames() != 2 || rec.Channels[0].Samples[0] != 0.25 || rec.Channels[0].Samples[1] != -1.5 || rec.Source.SampleType != "float32" {
		t.Fatalf("%v %+v", err, rec)
	}
}

// TestWAVCutNoFrame: a data chunk cut before its first whole frame is
// still refused, naming the chunk.
func TestWAVCutNoFrame(t *testing.T) {
	_, err := readWAVBytes(validWAV()[:45]) // one byte after the data header
	var fe *FormatError
	if !errors.As(err, &fe) || !strings.Contains(err.Error(), "byte 36") || !strings.Contains(err.Error(), "not one whole frame") {
		t.Fatalf("%v", err)
	}
}
