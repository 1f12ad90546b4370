package capture

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// streamSample is the value of channel c in frame i of the test streams: a
// multiple of 2^-15, so int16, int24 and float32 all store it exactly
// (16-bit two's complement step, WAVE form PCM data packing).
func streamSample(i, c int) float32 {
	return float32((i*7+c*1001)%65536-32768) / 32768
}

func testStreamFrames(first, n, channels int) []float32 {
	out := make([]float32, 0, n*channels)
	for i := first; i < first+n; i++ {
		for c := 0; c < channels; c++ {
			out = append(out, streamSample(i, c))
		}
	}
	return out
}

func checkStreamSamples(t *testing.T, rec *Recording, frames int, silent map[int]bool) {
	t.Helper()
	if rec.Frames() != frames {
		t.Fatalf("read %d frames, wrote %d", rec.Frames(), frames)
	}
	for c, ch := range rec.Channels {
		for i, v := range ch.Samples {
			want := streamSample(i, c)
			if silent[i] {
				want = 0
			}
			if v != want {
				t.Fatalf("channel %d frame %d = %g, wrote %g", c, i, v, want)
			}
		}
	}
}

// A finished stream reads back exactly through the project's reader in
// every sample type; an odd-sized 24-bit mono chunk gets its pad byte
// (RIFF 1.0, 3-2: chunks are word aligned).
func TestWAVStreamRoundTrip(t *testing.T) {
	for _, tc := range []struct {
		sampleType string
		channels   int
		frames     int
	}{{"int16", 2, 5000}, {"int24", 1, 4999}, {"float32", 3, 7000}, {"int24", 4, 3000}} {
		t.Run(tc.sampleType, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "rec.wav")
			s, err := CreateWAVStream(path, WAVStreamFormat{RateHz: 48000, Channels: tc.channels, SampleType: tc.sampleType})
			if err != nil {
				t.Fatal(err)
			}
			for i := 0; i < tc.frames; i += 700 {
				if err := s.Write(testStreamFrames(i, min(700, tc.frames-i), tc.channels)); err != nil {
					t.Fatal(err)
				}
			}
			if err := s.Close(); err != nil {
				t.Fatal(err)
			}
			rec, err := Open(path, Options{})
			if err != nil {
				t.Fatal(err)
			}
			if len(rec.Warnings) != 0 {
				t.Errorf("finished stream read with warnings %q", rec.Warnings)
			}
			if rec.SampleRateHz != 48000 || len(rec.Channels) != tc.channels || rec.Source.SampleType != tc.sampleType {
				t.Errorf("read %g Hz, %d channels, %s", rec.SampleRateHz, len(rec.Channels), rec.Source.SampleType)
			}
			checkStreamSamples(t, rec, tc.frames, nil)
		})
	}
}

// After a Commit the header covers every frame so far, and a file cut off
// after it (a kill before the next Commit) is still a valid WAV of those
// frames and of every frame that reached the file after them: the samples
// past the stated data chunk are read too, with a warning.
func TestWAVStreamCommittedAndCutOff(t *testing.T) {
	path := filepath.Join(t.TempDir(), "rec.wav")
	s, err := CreateWAVStream(path, WAVStreamFormat{RateHz: 8000, Channels: 2, SampleType: "int16"})
	if err != nil {
		t.Fatal(err)
	}
	s.Write(testStreamFrames(0, 3000, 2))
	if err := s.Commit(); err != nil {
		t.Fatal(err)
	}
	rec, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Warnings) != 0 {
		t.Errorf("committed stream read with warnings %q", rec.Warnings)
	}
	checkStreamSamples(t, rec, 3000, nil)
	s.Write(testStreamFrames(3000, 40000, 2)) // more than one buffer: reaches the file uncommitted
	rec, err = Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Warnings) != 1 || !strings.Contains(rec.Warnings[0], "recovered beyond the header") {
		t.Errorf("uncommitted tail read with warnings %q, want one saying what was recovered", rec.Warnings)
	}
	onDisk := int(s.flushed / s.frameBytes())
	if onDisk <= 3000 {
		t.Fatalf("only %d frames reached the file; the test needs an uncommitted tail", onDisk)
	}
	checkStreamSamples(t, rec, onDisk, nil)
	s.Close()
}

// A stream never replaces a file that is there.
func TestCreateWAVStreamNeverOverwrites(t *testing.T) {
	path := filepath.Join(t.TempDir(), "take.wav")
	os.WriteFile(path, []byte("precious"), 0o644)
	_, err := CreateWAVStream(path, WAVStreamFormat{RateHz: 8000, Channels: 1, SampleType: "int16"})
	if err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Fatalf("error %v, want one saying the file exists", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "precious" {
		t.Errorf("existing file now holds %q", b)
	}
}

// fullDisk is a file that takes limit bytes of samples, then fails with
// ENOSPC as a full disk does (write(2), ERRORS); rewriting bytes already
// there (the header) still works, as it needs no new blocks.
type fullDisk struct {
	f     *os.File
	limit int64
}

func (d *fullDisk) WriteAt(b []byte, off int64) (int, error) {
	if off+int64(len(b)) <= d.limit {
		return d.f.WriteAt(b, off)
	}
	room := max(d.limit-off, 0)
	n, _ := d.f.WriteAt(b[:room], off)
	return n, syscall.ENOSPC
}
func (d *fullDisk) Sync() error  { return d.f.Sync() }
func (d *fullDisk) Close() error { return d.f.Close() }

func TestWAVStreamDiskFull(t *testing.T) {
	path := filepath.Join(t.TempDir(), "rec.wav")
	f, _ := os.Create(path)
	s, err := NewWAVStream(path, &fullDisk{f: f, limit: 44 + 4*20001 + 3}, WAVStreamFormat{RateHz: 8000, Channels: 2, SampleType: "int16"})
	if err != nil {
		t.Fatal(err)
	}
	var werr error
	for i := 0; i < 100000 && werr == nil; i += 500 {
		werr = s.Write(testStreamFrames(i, 500, 2))
		if werr == nil {
			werr = s.Commit()
		}
	}
	if !errors.Is(werr, syscall.ENOSPC) {
		t.Fatalf("write error %v, want ENOSPC", werr)
	}
	if err := s.Write(testStreamFrames(0, 1, 2)); !errors.Is(err, syscall.ENOSPC) {
		t.Errorf("write after a full disk: %v, want the same error", err)
	}
	if err := s.Close(); !errors.Is(err, syscall.ENOSPC) {
		t.Errorf("close: %v, want the disk-full error", err)
	}
	rec, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// 20001 whole frames fit (the partial 3 bytes of frame 20001 do not count).
	checkStreamSamples(t, rec, 20001, nil)
}

func TestWAVStreamSilenceKeepsPlace(t *testing.T) {
	path := filepath.Join(t.TempDir(), "rec.wav")
	s, _ := CreateWAVStream(path, WAVStreamFormat{RateHz: 8000, Channels: 1, SampleType: "int16"})
	s.Write(testStreamFrames(0, 100, 1))
	s.WriteSilence(2500)
	s.Write(testStreamFrames(2600, 50, 1))
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	rec, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	silent := map[int]bool{}
	for i := 100; i < 2600; i++ {
		silent[i] = true
	}
	checkStreamSamples(t, rec, 2650, silent)
}
