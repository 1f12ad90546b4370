package main

import (
	"bytes"
	"context"
	"encoding/json"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/go-audio/wav"

	"spotloom/capture"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

func runSimulateCmd(args ...string) (code int, stdout, stderr string) {
	var out, errOut bytes.Buffer
	code = run(append([]string{"simulate"}, args...), &out, &errOut)
	return code, out.String(), errOut.String()
}

// TestSimulateEverySceneAndFormat writes every scene in every format and
// reads each file back with capture.Open, comparing with the in-memory
// simulation of the same seed to the precision of the stored type. WAV
// files are also decoded with the independent go-audio/wav decoder.
func TestSimulateEverySceneAndFormat(t *testing.T) {
	dir := t.TempDir()
	const seconds = 0.25
	formats := []struct {
		ext, sampleType string
		tolerance       float64 // volts
	}{
		{"wav", "int16", 1.0 / 32768},
		{"wav", "int24", 1.0 / (1 << 23)},
		{"wav", "float32", 0},
		{"csv", "", 0},
		{"raw", "int16", 1.0 / 32768},
		{"raw", "float32", 0},
	}
	for _, scene := range sampledata.SceneNames() {
		want, _, err := sampledata.Simulate(context.Background(), sampledata.DemoRig(), scene, sampledata.SimOptions{Seed: 4, DurationS: seconds})
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range formats {
			out := filepath.Join(dir, scene+"-"+f.sampleType+"."+f.ext)
			args := []string{"--scene", scene, "--out", out, "--seconds", "0.25", "--seed", "4"}
			if f.sampleType != "" {
				args = append(args, "--sample-type", f.sampleType)
			}
			code, stdout, stderr := runSimulateCmd(args...)
			if code != 0 {
				t.Fatalf("%s %s: exit %d: %s%s", scene, f.ext, code, stdout, stderr)
			}
			got, err := capture.Open(out, capture.Options{})
			if err != nil {
				t.Fatalf("%s: %v", out, err)
			}
			if got.SampleRateHz != 96000 || got.Frames() != want.Frames() || len(got.Channels) != 3 {
				t.Fatalf("%s: %g Hz, %d frames, %d channels", out, got.SampleRateHz, got.Frames(), len(got.Channels))
			}
			worst := 0.0
			for c := range want.Channels {
				for i, v := range want.Channels[c].Samples {
					worst = math.Max(worst, math.Abs(float64(got.Channels[c].Samples[i])-float64(v)))
				}
			}
			// Rounding to the stored step is at most half a step.
			if worst > f.tolerance/2+1e-7 {
				t.Errorf("%s: samples differ by up to %g V, want at most %g", out, worst, f.tolerance/2)
			}
			if f.ext == "wav" {
				checkWAVIndependently(t, out, f.sampleType, want.Frames())
			}
			if f.ext == "raw" {
				if _, err := os.Stat(out + ".layout.json"); err != nil {
					t.Errorf("no layout beside %s: %v", out, err)
				}
			}
		}
	}
}

// checkWAVIndependently decodes a WAV header with go-audio/wav.
func checkWAVIndependently(t *testing.T, path, sampleType string, frames int) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	d := wav.NewDecoder(f)
	d.ReadInfo()
	if err := d.Err(); err != nil {
		t.Fatalf("%s: go-audio/wav: %v", path, err)
	}
	bits := map[string]uint16{"int16": 16, "int24": 24, "float32": 32}[sampleType]
	if d.SampleRate != 96000 || d.NumChans != 3 || d.BitDepth != bits {
		t.Errorf("%s: go-audio/wav reads %d Hz, %d channels, %d bits", path, d.SampleRate, d.NumChans, d.BitDepth)
	}
	if err := d.FwdToPCM(); err != nil {
		t.Fatal(err)
	}
	if n := int(d.PCMLen()) / (3 * int(bits) / 8); n != frames {
		t.Errorf("%s: go-audio/wav finds %d frames, want %d", path, n, frames)
	}
}

// TestSimulateTruthAndRecipe checks the truth JSON, its 16-bit PNG (decoded
// with image/png) and the starting recipe.
func TestSimulateTruthAndRecipe(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "grid.wav")
	truthPath := filepath.Join(dir, "grid.truth.json")
	recipePath := filepath.Join(dir, "grid.recipe.json")
	code, _, stderr := runSimulateCmd("--scene", "dot-grid", "--out", out, "--seconds", "1", "--truth", truthPath,
		"--truth-pitch", "2", "--recipe", recipePath)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	data, err := os.ReadFile(truthPath)
	if err != nil {
		t.Fatal(err)
	}
	var truth sampledata.Truth
	if err := json.Unmarshal(data, &truth); err != nil {
		t.Fatal(err)
	}
	if truth.Format != sampledata.TruthFormat || truth.Scene != "dot-grid" || len(truth.Lines) < 40 || len(truth.Dots) == 0 ||
		truth.Image == nil || truth.Image.PitchMM != 2 || truth.Image.Path != "grid.truth.png" {
		t.Fatalf("truth: format %q scene %q, %d lines, %d dots, image %+v", truth.Format, truth.Scene, len(truth.Lines), len(truth.Dots), truth.Image)
	}
	f, err := os.Open(filepath.Join(dir, truth.Image.Path))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	g, ok := img.(*image.Gray16)
	if !ok || g.Bounds().Dx() != truth.Image.Width || g.Bounds().Dy() != truth.Image.Height {
		t.Fatalf("truth PNG is %T %v, want 16-bit grey %d × %d", img, img.Bounds(), truth.Image.Width, truth.Image.Height)
	}
	// The pitch covers the scanned area: width·pitch ≈ the field's width.
	if w := float64(truth.Image.Width-1) * truth.Image.PitchMM; math.Abs(w-2*truth.HalfWidthMM) > truth.Image.PitchMM {
		t.Errorf("truth image spans %g mm, field is %g mm", w, 2*truth.HalfWidthMM)
	}
	r, err := recipe.Load(recipePath)
	if err != nil {
		t.Fatal(err)
	}
	// The demo rig's ADC full scale is 1 V, so WAV units equal volts.
	if r.Sweep.Apertures != 6 || r.Rows.Calibration[1] != [2]float64{0.8, 400} {
		t.Errorf("recipe: %s", r.JSON())
	}
}

// TestSimulateRigFixtures runs the rigs in testdata/sampledata (stepper,
// tone sensor with two strokes, motor with once-per-revolution index).
func TestSimulateRigFixtures(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		rig      string
		channels []string
	}{
		{"stepper", []string{"detector", "index", "steps"}},
		{"tone", []string{"detector", "index", "position"}},
		{"motor", []string{"detector", "index"}},
	} {
		out := filepath.Join(dir, c.rig+".csv")
		code, _, stderr := runSimulateCmd("--rig", filepath.Join("..", "testdata", "sampledata", c.rig+".rig.json"),
			"--scene", "bars", "--out", out, "--seconds", "0.5")
		if code != 0 {
			t.Fatalf("%s: exit %d: %s", c.rig, code, stderr)
		}
		rec, err := capture.Open(out, capture.Options{})
		if err != nil {
			t.Fatal(err)
		}
		var names []string
		for _, ch := range rec.Channels {
			names = append(names, ch.Name)
		}
		if strings.Join(names, ",") != strings.Join(c.channels, ",") {
			t.Errorf("%s: channels %v, want %v", c.rig, names, c.channels)
		}
	}
}

// TestSimulateBadInput checks that bad rigs and flags exit 1 (or 2 for bad
// usage) with one line naming the key and the allowed range.
func TestSimulateBadInput(t *testing.T) {
	dir := t.TempDir()
	demo := sampledata.DemoRig().JSON()
	write := func(name, from, to string) string {
		p := filepath.Join(dir, name)
		data := bytes.Replace(demo, []byte(from), []byte(to), 1)
		if bytes.Equal(data, demo) {
			t.Fatalf("%s: %q not found in the demo rig", name, from)
		}
		os.WriteFile(p, data, 0o644)
		return p
	}
	out := filepath.Join(dir, "x.wav")
	cases := []struct {
		name string
		args []string
		code int
		want []string
	}{
		{"negative", []string{"--rig", filepath.Join("..", "testdata", "sampledata", "bad-negative-speed.rig.json"), "--scene", "parcel", "--out", out},
			1, []string{"bad-negative-speed.rig.json", "wheel.rev_per_min is -420", "allowed: greater than 0"}},
		{"missing", []string{"--rig", write("missing.json", `"distance_mm": 500,`, ""), "--scene", "parcel", "--out", out},
			1, []string{"missing.json", "distance_mm is missing", "allowed: greater than 0"}},
		{"wide field", []string{"--rig", write("wide.json", `"field_deg": 30,`, `"field_deg": 75,`), "--scene", "parcel", "--out", out},
			1, []string{"field_deg is 75", "below 60 degrees"}},
		{"slow rate", []string{"--scene", "parcel", "--out", out, "--rate", "4000"},
			1, []string{"sample_rate_hz is 4000", "samples per spot width", "allowed: at least"}},
		{"unknown scene", []string{"--scene", "teapot", "--out", out},
			2, []string{`unknown scene "teapot"`, "parcel, dot-grid, edge-card, bars, sheet"}},
		{"no scene", []string{"--out", out}, 2, []string{"--scene is required"}},
		{"no format", []string{"--scene", "parcel", "--out", filepath.Join(dir, "x.xyz")}, 2, []string{"--format wav, csv or raw"}},
		{"bad sample type", []string{"--scene", "parcel", "--out", out, "--sample-type", "int8"}, 2, []string{"int16, int24 or float32"}},
	}
	for _, c := range cases {
		code, _, stderr := runSimulateCmd(c.args...)
		if code != c.code {
			t.Errorf("%s: exit %d, want %d (%s)", c.name, code, c.code, stderr)
		}
		if c.code == 1 && strings.Count(strings.TrimRight(stderr, "\n"), "\n") != 0 {
			t.Errorf("%s: more than one line: %q", c.name, stderr)
		}
		for _, w := range c.want {
			if !strings.Contains(stderr, w) {
				t.Errorf("%s: %q does not contain %q", c.name, stderr, w)
			}
		}
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("a failed run left %s behind", out)
	}
}

// TestSimulateKeepsExistingFiles: simulate never replaces a file that is
// already there (a user's real capture, its truth or recipe) unless
// --force says so, and then replaces it.
func TestSimulateKeepsExistingFiles(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "bench.wav")
	truth := filepath.Join(dir, "bench.truth.json")
	keep := []byte("the only copy of a real capture")
	for _, existing := range []string{out, truth} {
		os.Remove(out)
		os.Remove(truth)
		if err := os.WriteFile(existing, keep, 0o644); err != nil {
			t.Fatal(err)
		}
		code, _, stderr := runSimulateCmd("--scene", "bars", "--seconds", "0.5", "--out", out, "--truth", truth)
		if code != 1 || !strings.Contains(stderr, filepath.Base(existing)) || !strings.Contains(stderr, "--force") {
			t.Errorf("existing %s: exit %d, %q; want exit 1 naming it and --force", filepath.Base(existing), code, stderr)
		}
		if got, _ := os.ReadFile(existing); !bytes.Equal(got, keep) {
			t.Errorf("existing %s was changed without --force", filepath.Base(existing))
		}
	}
	code, _, stderr := runSimulateCmd("--scene", "bars", "--seconds", "0.5", "--out", out, "--truth", truth, "--force")
	if code != 0 {
		t.Fatalf("--force: exit %d, %s", code, stderr)
	}
	if got, _ := os.ReadFile(truth); bytes.Equal(got, keep) {
		t.Errorf("--force left the old %s", filepath.Base(truth))
	}
}

func TestPrintRig(t *testing.T) {
	code, stdout, stderr := runSimulateCmd("--print-rig")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	r, err := sampledata.ParseRig([]byte(stdout))
	if err != nil {
		t.Fatal(err)
	}
	if r.Wheel.ApertureCount != 6 || r.Wheel.RevPerMin != 420 {
		t.Errorf("printed rig: %s", stdout)
	}
}

// TestSimulateWAVFullScale checks that a WAV of a rig with a 5 V ADC holds
// volts/5 and that the recipe written beside it is in the same full-scale
// units: the calibrated position channel matches the truth's y (to the
// sensor's 2 mV noise and its quantisation).
func TestSimulateWAVFullScale(t *testing.T) {
	dir := t.TempDir()
	rig := sampledata.DemoRig()
	rig.ADC.FullScaleV = 5
	rig.Position.OffsetV, rig.Position.VoltsPerMM, rig.Position.NonlinearityPct = 0.5, 0.01, 0
	rigPath := filepath.Join(dir, "five-volt.rig.json")
	if err := os.WriteFile(rigPath, rig.JSON(), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "five.wav")
	truthPath := filepath.Join(dir, "five.truth.json")
	recipePath := filepath.Join(dir, "five.recipe.json")
	code, _, stderr := runSimulateCmd("--rig", rigPath, "--scene", "parcel", "--out", out, "--seconds", "8",
		"--truth", truthPath, "--truth-pitch", "4", "--recipe", recipePath, "--sample-type", "int24")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rec, err := capture.Open(out, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	r, err := recipe.Load(recipePath)
	if err != nil {
		t.Fatal(err)
	}
	cal := r.Rows.Calibration
	if cal[0] != [2]float64{0.1, 0} || cal[1] != [2]float64{0.9, 400} {
		t.Fatalf("calibration %v, want [[0.1 0] [0.9 400]] (volts / 5)", cal)
	}
	var truth sampledata.Truth
	data, _ := os.ReadFile(truthPath)
	if err := json.Unmarshal(data, &truth); err != nil {
		t.Fatal(err)
	}
	pos := rec.Channels[2].Samples
	worst := 0.0
	for _, l := range truth.Lines {
		i := int((l.FieldStartS + l.FieldEndS) / 2 * rec.SampleRateHz)
		if i+32 >= len(pos) {
			break
		}
		sum := 0.0
		for k := i - 32; k < i+32; k++ {
			sum += float64(pos[k])
		}
		y := cal[0][1] + (sum/64-cal[0][0])*(cal[1][1]-cal[0][1])/(cal[1][0]-cal[0][0])
		worst = math.Max(worst, math.Abs(y-l.YMM))
	}
	// 2 mV of noise averaged over 64 samples is 0.25 mV, 0.025 mm at 10 mV/mm.
	if worst > 0.15 {
		t.Errorf("calibrated WAV position off the truth by up to %.3f mm", worst)
	}
}
