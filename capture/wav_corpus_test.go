package capture

import (
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/go-audio/wav"
)

// Outside WAV corpora, read by our reader and by an independent one:
//
//   - the test fixtures that github.com/go-audio/wav ships in its module
//     (MIT licence), read from the module cache and decoded by that
//     package's own decoder;
//   - the WAV test files of SciPy (scipy/io/tests/data, BSD-3-Clause,
//     Debian package python3-scipy), decoded by scipy.io.wavfile.read.
//
// Neither corpus is copied into the repository; each test skips when its
// corpus is absent.

// goAudioFixtures is the fixtures folder of the go-audio/wav module, or "".
func goAudioFixtures(t *testing.T) string {
	out, err := exec.Command("go", "list", "-m", "-f", "{{.Dir}}", "github.com/go-audio/wav").Output()
	if err != nil {
		return ""
	}
	dir := filepath.Join(strings.TrimSpace(string(out)), "fixtures")
	if _, err := os.Stat(dir); err != nil {
		return ""
	}
	return dir
}

// goAudioDiffers are go-audio/wav fixtures where that decoder and ours
// part, with what ours must do, worked from the chunk headers by hand.
var goAudioDiffers = map[string]struct {
	frames  int    // frames we read
	refused string // or part of our error
}{
	// data ckSize 21861 at byte 650 = 7287 frames of 3 bytes exactly;
	// go-audio/wav returns one frame more, read from the pad byte and the
	// next chunk's header.
	"bwf.wav": {frames: 7287},
	// data ckSize 11140 at byte 12284 is 3713 frames and one byte of 3-byte
	// mono frames, followed by more chunks: a damaged header, not a cut
	// recording, so it is refused.
	"padded24b.wav": {refused: "not a whole number of 3-byte frames"},
}

// TestWAVAgainstGoAudio decodes every WAV fixture of go-audio/wav with that
// package and with ours: the same rate, channels and frames, and every
// sample equal to its code over 2^(bits-1) (8-bit PCM: (code-128)/128).
func TestWAVAgainstGoAudio(t *testing.T) {
	dir := goAudioFixtures(t)
	if dir == "" {
		t.Skip("go-audio/wav module not in the module cache")
	}
	paths, _ := filepath.Glob(filepath.Join(dir, "*.wav"))
	if len(paths) == 0 {
		t.Skip("no fixtures in " + dir)
	}
	for _, path := range paths {
		name := filepath.Base(path)
		f, err := os.Open(path)
		if err != nil {
			t.Fatal(err)
		}
		dec := wav.NewDecoder(f)
		buf, refErr := dec.FullPCMBuffer()
		f.Close()
		rec, err := Open(path, Options{})
		if d, ok := goAudioDiffers[name]; ok {
			// checked against the chunk sizes in the file, worked by hand
			if err == nil && rec.Frames() != d.frames || err != nil && (d.refused == "" || !strings.Contains(err.Error(), d.refused)) {
				t.Errorf("%s: %v, %d frames; want %d frames or an error saying %q", name, err, rec.Frames(), d.frames, d.refused)
			}
			continue
		}
		if refErr != nil || buf == nil || len(buf.Data) == 0 {
			t.Logf("%s: go-audio/wav does not read it (%v); ours: %v", name, refErr, err)
			continue
		}
		if err != nil {
			t.Errorf("%s: go-audio/wav reads it, ours: %v", name, err)
			continue
		}
		channels := int(dec.NumChans)
		if len(rec.Channels) != channels || rec.SampleRateHz != float64(dec.SampleRate) || rec.Frames() != len(buf.Data)/channels {
			t.Errorf("%s: %d channels %g Hz %d frames; go-audio/wav %d channels %d Hz %d frames", name,
				len(rec.Channels), rec.SampleRateHz, rec.Frames(), channels, dec.SampleRate, len(buf.Data)/channels)
			continue
		}
		bits := int(dec.BitDepth)
		for i, code := range buf.Data {
			var want float32
			if bits == 8 {
				want = float32(code-128) / 128
			} else {
				want = float32(float64(code) / math.Ldexp(1, bits-1))
			}
			if got := rec.Channels[i%channels].Samples[i/channels]; got != want {
				t.Errorf("%s: ch%d[%d] = %v, go-audio/wav code %d gives %v", name, i%channels, i/channels, got, code, want)
				break
			}
		}
		t.Logf("%s: %d frames of %d-bit, %d channels agree", name, rec.Frames(), bits, channels)
	}
}

// scipyScript prints, for every WAV file in SciPy's test data, what
// scipy.io.wavfile.read returns: the rate, the samples on ±1 full scale of
// the dtype it chose (for integers wider than 8 bits that is the stored
// container, left-justified; 8 bits and fewer are unsigned about 128), the
// warnings, or the error.
const scipyScript = `
import glob, json, os, sys, warnings
import numpy as np
import scipy.io, scipy.io.wavfile as wavfile
data = os.path.join(os.path.dirname(scipy.io.__file__), "tests", "data")
out = {"dir": data, "files": {}}
for path in sorted(glob.glob(os.path.join(data, "*.wav"))):
    entry = {}
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            rate, d = wavfile.read(path)
        entry["warnings"] = [str(w.message) for w in caught]
        if d.ndim == 1:
            d = d[:, None]
        if d.dtype.kind == "u":
            v = (d.astype(np.float64) - 128) / 128
        elif d.dtype.kind == "i":
            v = d.astype(np.float64) / 2.0 ** (8 * d.dtype.itemsize - 1)
        else:
            v = d.astype(np.float64)
        entry.update(rate=int(rate), channels=int(d.shape[1]), values=v.T.tolist())
    except Exception as e:
        entry["error"] = str(e)
    out["files"][os.path.basename(path)] = entry
json.dump(out, sys.stdout)
`

// scipyEntry is one file as scipy.io.wavfile read it.
type scipyEntry struct {
	Rate     int         `json:"rate"`
	Channels int         `json:"channels"`
	Values   [][]float64 `json:"values"`
	Warnings []string    `json:"warnings"`
	Error    string      `json:"error"`
}

// scipyLenient are files scipy refuses and we read, and why.
var scipyLenient = map[string]string{
	// nAvgBytesPerSec is only a buffering hint (RIFF 1.0, WAVE fmt
	// chunk); the samples are laid out by nBlockAlign, which is right.
	"test-8000Hz-le-3ch-5S-24bit-inconsistent.wav": "wrong nAvgBytesPerSec",
}

// TestWAVAgainstSciPy compares our reader with scipy.io.wavfile on SciPy's
// own WAV test files: where scipy reads a file we read the same rate,
// channels and every sample (as float32); where scipy stops at a premature
// end of file we read the same frames and warn; where scipy refuses a file
// we refuse it too, except for the files in scipyLenient.
func TestWAVAgainstSciPy(t *testing.T) {
	var out []byte
	for _, py := range []string{"python3", "/usr/bin/python3"} {
		b, err := exec.Command(py, "-c", scipyScript).Output()
		if err == nil {
			out = b
			break
		}
	}
	if out == nil {
		t.Skip("no python3 with scipy (Debian: apt-get install python3-scipy)")
	}
	var ref struct {
		Dir   string                `json:"dir"`
		Files map[string]scipyEntry `json:"files"`
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Files) == 0 {
		t.Skip("scipy has no WAV test data in " + ref.Dir)
	}
	names := make([]string, 0, len(ref.Files))
	for n := range ref.Files {
		names = append(names, n)
	}
	sort.Strings(names)
	compared := 0
	for _, name := range names {
		want := ref.Files[name]
		rec, err := Open(filepath.Join(ref.Dir, name), Options{})
		if want.Error != "" {
			if err == nil && scipyLenient[name] == "" {
				t.Errorf("%s: scipy refuses it (%s), we read it", name, want.Error)
			}
			continue
		}
		if err != nil {
			t.Errorf("%s: scipy reads it, ours: %v", name, err)
			continue
		}
		if rec.SampleRateHz != float64(want.Rate) || len(rec.Channels) != want.Channels || rec.Frames() != len(want.Values[0]) {
			t.Errorf("%s: %g Hz %d channels %d frames; scipy %d Hz %d channels %d frames", name, rec.SampleRateHz, len(rec.Channels), rec.Frames(), want.Rate, want.Channels, len(want.Values[0]))
			continue
		}
		early := false
		for _, w := range want.Warnings {
			early = early || strings.Contains(w, "EOF prematurely")
		}
		if early != (len(rec.Warnings) > 0 && strings.Contains(strings.Join(rec.Warnings, " "), "whole frames")) {
			t.Errorf("%s: scipy warns %q, we warn %q", name, want.Warnings, rec.Warnings)
		}
	values:
		for c, ch := range rec.Channels {
			for i, got := range ch.Samples {
				if w := float32(want.Values[c][i]); got != w {
					t.Errorf("%s: ch%d[%d] = %v, scipy gives %v", name, c, i, got, w)
					break values
				}
			}
		}
		compared++
	}
	if compared == 0 {
		t.Fatal("scipy read no file we could compare")
	}
	t.Logf("%d files compared with scipy.io.wavfile", compared)
}
