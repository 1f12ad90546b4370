package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotloom/capture"
	"spotloom/sampledata"
)

const captureFixtures = "../testdata/capture"

// TestInspectBadFiles runs "spotloom inspect" on every broken fixture: exit
// status 1 and exactly one line on stderr naming the file and the place.
func TestInspectBadFiles(t *testing.T) {
	dir := t.TempDir()
	places := map[string]string{
		"truncated_header.wav": "byte 12",
		"zero_channels.wav":    "byte 22", "zero_rate.wav": "byte 24", "absurd_rate.wav": "byte 24",
		"compressed.wav": "byte 20", "not_riff.wav": "byte 0", "not_number.csv": "line 4:7",
		"ragged.csv": "line 3", "time_backwards.csv": "line 4:1", "empty.csv": "empty",
		"odd_size.bin": "byte 60", "no_layout.bin": "layout", "unknown.xyz": "byte 0",
		"counter_increment_negative.csv": "line 2:34", "counter_increment_text.csv": "line 2:34",
		"counter_increment_zero.csv": "line 2:34", "counter_no_interval.csv": "line 3",
	}
	for name, place := range places {
		path := filepath.Join(captureFixtures, "bad", name)
		var stdout, stderr bytes.Buffer
		code := run([]string{"inspect", path}, &stdout, &stderr)
		msg := stderr.String()
		if code != 1 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, path) || !strings.Contains(msg, place) || stdout.Len() != 0 {
			t.Errorf("%s: exit %d, stderr %q, stdout %q; want exit 1 and one line naming the file and %q", name, code, msg, stdout.String(), place)
		}
	}
	var stdout, stderr bytes.Buffer
	if code := run([]string{"inspect", dir}, &stdout, &stderr); code != 1 || !strings.Contains(stderr.String(), "is a directory") {
		t.Errorf("directory: exit %d, %q", code, stderr.String())
	}
	if code := run([]string{"inspect"}, &stdout, &stderr); code != 2 {
		t.Errorf("no file: exit %d, want 2 (usage)", code)
	}
}

// TestInspectJSON checks the JSON keys and the statistics against sums done
// here in float64 over the fixture's known samples.
func TestInspectJSON(t *testing.T) {
	path := filepath.Join(captureFixtures, "pcm_s16_stereo.wav")
	var stdout, stderr bytes.Buffer
	if code := run([]string{"inspect", path, "--json"}, &stdout, &stderr); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var keys map[string]json.RawMessage
	if err := json.Unmarshal(stdout.Bytes(), &keys); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"format", "sample_rate_hz", "frames", "duration_s", "channels"} {
		if _, ok := keys[k]; !ok {
			t.Errorf("JSON has no %q key: %s", k, stdout.String())
		}
	}
	var rep struct {
		Format       string  `json:"format"`
		SampleRateHz float64 `json:"sample_rate_hz"`
		Frames       int     `json:"frames"`
		DurationS    float64 `json:"duration_s"`
		Channels     []map[string]any
	}
	if err := json.Unmarshal(stdout.Bytes(), &rep); err != nil {
		t.Fatal(err)
	}
	rec, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Format != "wav" || rep.SampleRateHz != 44100 || rep.Frames != rec.Frames() || math.Abs(rep.DurationS-float64(rec.Frames())/44100) > 1e-12 || len(rep.Channels) != 2 {
		t.Fatalf("report %+v", rep)
	}
	for c, ch := range rep.Channels {
		for _, k := range []string{"name", "unit", "min", "max", "mean", "rms", "role"} {
			if _, ok := ch[k]; !ok {
				t.Errorf("channel %d has no %q", c, k)
			}
		}
		var sum, sq float64
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range rec.Channels[c].Samples {
			sum += float64(v)
			sq += float64(v) * float64(v)
			lo, hi = math.Min(lo, float64(v)), math.Max(hi, float64(v))
		}
		n := float64(rec.Frames())
		for k, want := range map[string]float64{"min": lo, "max": hi, "mean": sum / n, "rms": math.Sqrt(sq / n)} {
			if got := ch[k].(float64); math.Abs(got-want) > 1e-12 {
				t.Errorf("channel %d %s = %v, want %v", c, k, got, want)
			}
		}
	}
}

// TestInspectRawFlags reads a raw file with the layout given as flags.
func TestInspectRawFlags(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "dump.dat")
	// three frames of two little-endian int16 channels: 16384 = 0.5 FS
	data := []byte{0x00, 0x40, 0x00, 0xC0, 0x00, 0x00, 0xFF, 0x7F, 0x00, 0x80, 0x00, 0x00}
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	code := run([]string{"inspect", path, "--raw", "int16", "--channels", "2", "--rate", "1000", "--json"}, &stdout, &stderr)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var rep struct {
		Frames   int
		Channels []struct{ Min, Max float64 }
	}
	json.Unmarshal(stdout.Bytes(), &rep)
	// channel 0 holds 0.5, 0, -1; channel 1 holds -0.5, 32767/32768, 0
	if rep.Frames != 3 || rep.Channels[0].Min != -1 || rep.Channels[0].Max != 0.5 || rep.Channels[1].Max != 32767.0/32768 {
		t.Fatalf("%s", stdout.String())
	}
	if code := run([]string{"inspect", path, "--raw", "int16", "--channels", "5", "--rate", "1000"}, &stdout, &stderr); code != 1 {
		t.Errorf("12 bytes as 5 int16 channels: exit %d, want 1", code)
	}
}

func TestInspectTable(t *testing.T) {
	var stdout, stderr bytes.Buffer
	if code := run([]string{"inspect", filepath.Join(captureFixtures, "scope.csv")}, &stdout, &stderr); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	out := stdout.String()
	for _, w := range []string{"csv", "500000 Hz", "CH1", "CH2", "frames", "duration"} {
		if !strings.Contains(out, w) {
			t.Errorf("table lacks %q:\n%s", w, out)
		}
	}
}

// TestBadUsageIsOneLine: an unknown flag or a bad flag value is one line on
// stderr and exit 2, not the whole help; --help still prints the help.
func TestBadUsageIsOneLine(t *testing.T) {
	for _, args := range [][]string{{"build", "--bogus"}, {"inspect", "--rate", "abc", "x.wav"}, {"simulate", "--seconds", "x"}} {
		var stdout, stderr bytes.Buffer
		code := run(args, &stdout, &stderr)
		if code != 2 || strings.Count(stderr.String(), "\n") != 1 {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 and one line", args, code, stderr.String())
		}
	}
	var stdout, stderr bytes.Buffer
	if code := run([]string{"inspect", "--help"}, &stdout, &stderr); code != 0 || !strings.Contains(stderr.String(), "usage: spotloom inspect") || !strings.Contains(stderr.String(), "-json") {
		t.Errorf("--help: exit %d, %q", code, stderr.String())
	}
}

// TestRecipeErrorsAreOneLine: a recipe with several bad keys gives one
// line on stderr naming each of them.
func TestRecipeErrorsAreOneLine(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "bad.json")
	if err := os.WriteFile(bad, []byte(`{"format": "spotloom-recipe/1", "sweep": {"field_deg": 200, "projection": "x"}}`), 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	code := run([]string{"build", filepath.Join(captureFixtures, "pcm_s16_stereo.wav"), "--recipe", bad, "--out", filepath.Join(dir, "f.tiff")}, &stdout, &stderr)
	msg := stderr.String()
	if code != 1 || strings.Count(msg, "\n") != 1 || !strings.Contains(msg, "sweep.field_deg") || !strings.Contains(msg, "sweep.projection") {
		t.Errorf("exit %d, stderr %q; want exit 1, one line naming both keys", code, msg)
	}
}

// TestInspectIsTheName: the command that lists a capture's channels is
// "inspect"; the old name is an unknown command (exit 2), and the command
// list shows the new one.
func TestInspectIsTheName(t *testing.T) {
	var stdout, stderr bytes.Buffer
	if code := run([]string{"probe", filepath.Join(captureFixtures, "scope.csv")}, &stdout, &stderr); code != 2 || !strings.Contains(stderr.String(), `unknown command "probe"`) {
		t.Errorf("probe: exit %d, %q; want exit 2, unknown command", code, stderr.String())
	}
	stdout.Reset()
	if code := run([]string{"help"}, &stdout, &stderr); code != 0 || !strings.Contains(stdout.String(), "  inspect ") || strings.Contains(stdout.String(), "probe") {
		t.Errorf("help: exit %d, %q; want inspect listed and no probe", code, stdout.String())
	}
}

// TestInspectCutRecording: a WAV whose data chunk was never finished (the
// recorder stopped at byte 60 of a 16-bit mono, 8000 Hz file) is read, not
// refused: 16 bytes after the data header are 8 frames, 0.001 s, and the
// warning says so.
func TestInspectCutRecording(t *testing.T) {
	var stdout, stderr bytes.Buffer
	code := run([]string{"inspect", filepath.Join(captureFixtures, "cut_mid_data.wav")}, &stdout, &stderr)
	out := stdout.String()
	if code != 0 || !strings.Contains(out, "frames") || !strings.Contains(out, " 8\n") || !strings.Contains(out, "warning: ") || !strings.Contains(out, "0.001 s") {
		t.Fatalf("exit %d, stdout %q, stderr %q", code, out, stderr.String())
	}
}

// A two-input sound card's channel that carries both the index pulses
// and the position tone is inspected as "index+tone", with the carrier
// the simulator put on it (its rig's carrier_hz, within one bin of the
// role guess's spectrum), and a note saying how a recipe reads it; a
// capture with three inputs has no such channel.
func TestInspectFindsTheSharedInput(t *testing.T) {
	dir := t.TempDir()
	rig := sampledata.StereoSoundCardRig()
	rig.DurationS = 4
	shared := writeRigCapture(t, dir, "stereo", rig)
	three := sampledata.DemoRig()
	three.DurationS = 4
	for _, tc := range []struct {
		path  string
		want  int // the shared channel, -1 for none
		carry float64
	}{{shared, 1, rig.Position.CarrierHz}, {writeRigCapture(t, dir, "three", three), -1, 0}} {
		var stdout, stderr bytes.Buffer
		if code := run([]string{"inspect", tc.path, "--json"}, &stdout, &stderr); code != 0 {
			t.Fatalf("exit %d: %s", code, stderr.String())
		}
		var rep inspectReport
		if err := json.Unmarshal(stdout.Bytes(), &rep); err != nil {
			t.Fatal(err)
		}
		for c, ch := range rep.Channels {
			if got := ch.Role == roleSharedInput; got != (c == tc.want) {
				t.Errorf("%s channel %d: role %q, want index+tone only on channel %d", filepath.Base(tc.path), c, ch.Role, tc.want)
			}
			if c == tc.want && math.Abs(ch.CarrierHz-tc.carry) > 2 {
				t.Errorf("%s channel %d: carrier %g Hz, the simulated rig's %g Hz", filepath.Base(tc.path), c, ch.CarrierHz, tc.carry)
			}
		}
		if (len(rep.Notes) == 1) != (tc.want >= 0) || tc.want >= 0 && !strings.Contains(rep.Notes[0], "rows.source tone") {
			t.Errorf("%s: notes %q", filepath.Base(tc.path), rep.Notes)
		}
	}
}
