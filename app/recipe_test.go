package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// TestRecipeEveryFormat simulates a short capture in each file format,
// runs "spotloom recipe" on it starting from the rig's recipe, and checks
// the printed recipe: it parses strictly, validates, has every automatic
// value filled in, and its delay is within 0.3° of the simulator's truth
// (the truth's delay plus the mean aperture offset, since the offsets are
// left empty).
func TestRecipeEveryFormat(t *testing.T) {
	dir := t.TempDir()
	for _, ext := range []string{"wav", "csv", "raw"} {
		capPath := filepath.Join(dir, "cap."+ext)
		truthPath := filepath.Join(dir, "truth_"+ext+".json")
		rigRecipe := filepath.Join(dir, "rig_"+ext+".recipe.json")
		if code, _, errText := runSimulateCmd("--scene", "parcel", "--out", capPath, "--seconds", "6", "--truth", truthPath, "--recipe", rigRecipe); code != 0 {
			t.Fatalf("%s: simulate exit %d: %s", ext, code, errText)
		}
		var out, errOut bytes.Buffer
		if code := run([]string{"recipe", capPath, "--from", rigRecipe}, &out, &errOut); code != 0 {
			t.Fatalf("%s: recipe exit %d: %s", ext, code, errOut.String())
		}
		r, err := recipe.Parse(out.Bytes())
		if err != nil {
			t.Fatalf("%s: printed recipe does not parse: %v\n%s", ext, err, out.String())
		}
		if err := r.Validate(); err != nil {
			t.Errorf("%s: printed recipe does not validate: %v", ext, err)
		}
		if r.Timing.Threshold == nil || r.Timing.Hysteresis == nil || r.Sweep.DelayDeg == nil || r.Image.PitchMM <= 0 {
			t.Fatalf("%s: automatic values left open:\n%s", ext, out.String())
		}
		truth := readTruth(t, truthPath)
		mean := 0.0
		for _, o := range truth.ApertureOffsetsDeg {
			mean += o / float64(len(truth.ApertureOffsetsDeg))
		}
		if d := *r.Sweep.DelayDeg - (truth.DelayDeg + mean); math.Abs(d) > 0.3 {
			t.Errorf("%s: delay %.3f°, truth %.3f° (+ mean offset %.3f°)", ext, *r.Sweep.DelayDeg, truth.DelayDeg, mean)
		}
	}
}

func TestRecipeErrors(t *testing.T) {
	var out, errOut bytes.Buffer
	if code := run([]string{"recipe"}, &out, &errOut); code != 2 {
		t.Errorf("no file: exit %d, want 2", code)
	}
	errOut.Reset()
	missing := filepath.Join(t.TempDir(), "nothing.wav")
	if code := run([]string{"recipe", missing}, &out, &errOut); code != 1 || !strings.Contains(errOut.String(), "nothing.wav") {
		t.Errorf("missing file: exit %d, %q", code, errOut.String())
	}
	errOut.Reset()
	bad := filepath.Join(t.TempDir(), "bad.json")
	if err := os.WriteFile(bad, []byte(`{"format": "spotloom-recipe/1", "sweep": {"law": "spiral"}}`), 0o644); err != nil {
		t.Fatal(err)
	}
	if code := run([]string{"recipe", missing, "--from", bad}, &out, &errOut); code != 1 || !strings.Contains(errOut.String(), `"sweep.law" is "spiral": allowed values are uniform, sine, table`) {
		t.Errorf("bad recipe: exit %d, %q", code, errOut.String())
	}
	// --law and --source take the recipe's own lists of allowed values.
	for _, args := range [][]string{{"--law", "spiral"}, {"--source", "laser"}} {
		errOut.Reset()
		want := "allowed values are " + recipe.Allowed(recipe.Laws)
		if args[0] == "--source" {
			want = "allowed values are " + recipe.Allowed(recipe.RowSources)
		}
		if code := run(append([]string{"recipe", missing}, args...), &out, &errOut); code != 2 || !strings.Contains(errOut.String(), want) {
			t.Errorf("%v: exit %d, %q; want exit 2 naming %q", args, code, errOut.String(), want)
		}
	}
}

// TestRecipeWithoutPositionChannel: a two-channel capture (detector and
// index, the head driven at an unknown steady speed) gets a starting
// recipe with an even motion, and stderr says the speed was assumed.
func TestRecipeWithoutPositionChannel(t *testing.T) {
	dir := t.TempDir()
	rig := sampledata.DemoRig()
	rig.DurationS = 5
	rig.Motion.Kind = sampledata.MotionMotor
	rig.Motion.StrokeS = 5
	rig.Motion.StartRestS = 0
	rig.Motion.PauseCount = 0
	rig.Position.Kind = sampledata.SensorNone
	r, errText := startingRecipe(t, dir, "two", rig)
	if r.Rows.Source != "even" || r.Rows.SpeedMMS == nil || *r.Rows.SpeedMMS <= 0 || r.Channels.Position.IsSet() {
		t.Errorf("rows %+v, position %q: want source even with a resolved speed and no position channel", r.Rows, r.Channels.Position)
	}
	if !strings.Contains(errText, "speed_mm_s is null") {
		t.Errorf("stderr does not say the speed was assumed: %q", errText)
	}
}

// TestRecipeSetsInvertForNegativeDetector: a starting recipe for a
// negative-going detector turns signal.invert on and says so.
func TestRecipeSetsInvertForNegativeDetector(t *testing.T) {
	dir := t.TempDir()
	rig := sampledata.DemoRig()
	rig.DurationS = 6
	rig.Detector.GainVPerMCPS = -rig.Detector.GainVPerMCPS
	rig.Detector.OffsetV = -rig.Detector.OffsetV
	r, errText := startingRecipe(t, dir, "neg", rig)
	if !r.Signal.Invert || !strings.Contains(errText, "signal.invert is set") {
		t.Errorf("invert %v, stderr %q", r.Signal.Invert, errText)
	}
}

// startingRecipe simulates a parcel capture NAME.wav with rig in dir and
// runs "spotloom recipe" on it with no starting recipe (the demo wheel's 6
// apertures given), returning the printed recipe and stderr.
func startingRecipe(t *testing.T, dir, name string, rig sampledata.Rig) (recipe.Recipe, string) {
	t.Helper()
	data, err := json.Marshal(rig)
	if err != nil {
		t.Fatal(err)
	}
	rigPath := filepath.Join(dir, name+".rig.json")
	if err := os.WriteFile(rigPath, data, 0o644); err != nil {
		t.Fatal(err)
	}
	capPath := filepath.Join(dir, name+".wav")
	if code, _, errText := runSimulateCmd("--scene", "parcel", "--rig", rigPath, "--out", capPath); code != 0 {
		t.Fatalf("simulate exit %d: %s", code, errText)
	}
	var out, errOut bytes.Buffer
	if code := run([]string{"recipe", capPath, "--apertures", "6"}, &out, &errOut); code != 0 {
		t.Fatalf("recipe exit %d: %s", code, errOut.String())
	}
	r, err := recipe.Parse(out.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	return r, errOut.String()
}

// TestRecipeOut: --out writes the recipe only when one could be made, and
// never replaces a file without --force.
func TestRecipeOut(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "r.json")
	var stdout, stderr bytes.Buffer
	bad := filepath.Join(captureFixtures, "bad", "truncated_header.wav")
	if code := run([]string{"recipe", bad, "--out", out}, &stdout, &stderr); code != 1 {
		t.Fatalf("broken capture: exit %d", code)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("a failed recipe left %s behind: %v", out, err)
	}
	capPath := filepath.Join(dir, "cap.wav")
	if code, _, errText := runSimulateCmd("--scene", "dot-grid", "--out", capPath, "--seconds", "6"); code != 0 {
		t.Fatalf("simulate exit %d: %s", code, errText)
	}
	args := []string{"recipe", capPath, "--apertures", "6", "--out", out}
	if code := run(args, &stdout, &stderr); code != 0 {
		t.Fatalf("recipe exit %d: %s", code, stderr.String())
	}
	if _, err := recipe.Load(out); err != nil {
		t.Errorf("written recipe: %v", err)
	}
	stderr.Reset()
	if code := run(args, &stdout, &stderr); code != 1 || !strings.Contains(stderr.String(), "--force") {
		t.Errorf("second run: exit %d, %q; want a refusal naming --force", code, stderr.String())
	}
	if code := run(append(args, "--force"), &stdout, &stderr); code != 0 {
		t.Errorf("with --force: exit %d", code)
	}
}

// TestRecipeWritesEstimatedOffsets: with sweep.aperture_offsets_deg null
// in the starting recipe, "spotloom recipe" writes the offsets it measured,
// one per aperture, and they match the simulator's truth (whose offsets
// start at 0 where ours have zero mean, so differences are compared) within
// 0.05°; with [] it keeps all zero.
func TestRecipeWritesEstimatedOffsets(t *testing.T) {
	dir := t.TempDir()
	capPath := filepath.Join(dir, "grid.wav")
	truthPath := filepath.Join(dir, "grid.truth.json")
	startPath := filepath.Join(dir, "grid.start.json")
	if code, _, errText := runSimulateCmd("--scene", "dot-grid", "--out", capPath, "--seconds", "8", "--truth", truthPath, "--recipe", startPath); code != 0 {
		t.Fatalf("simulate exit %d: %s", code, errText)
	}
	start, err := recipe.Load(startPath)
	if err != nil {
		t.Fatal(err)
	}
	start.Sweep.ApertureOffsetsDeg = nil
	nullPath := filepath.Join(dir, "null.json")
	if err := os.WriteFile(nullPath, start.JSON(), 0o644); err != nil {
		t.Fatal(err)
	}
	if data, _ := os.ReadFile(nullPath); !bytes.Contains(data, []byte(`"aperture_offsets_deg": null`)) {
		t.Fatalf("null offsets not written as null:\n%s", data)
	}
	truth := readTruth(t, truthPath)
	var out, errOut bytes.Buffer
	if code := run([]string{"recipe", capPath, "--from", nullPath}, &out, &errOut); code != 0 {
		t.Fatalf("recipe exit %d: %s", code, errOut.String())
	}
	r, err := recipe.Parse(out.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	off := r.Sweep.ApertureOffsetsDeg
	if len(off) != r.Sweep.Apertures {
		t.Fatalf("written offsets %v for %d apertures", off, r.Sweep.Apertures)
	}
	for k := range off {
		got := off[k] - off[0]
		want := truth.ApertureOffsetsDeg[k] - truth.ApertureOffsetsDeg[0]
		if math.Abs(got-want) > 0.05 {
			t.Errorf("aperture %d offset %.3f° after aperture 0's, truth %.3f°", k, got, want)
		}
	}
	out.Reset()
	if code := run([]string{"recipe", capPath, "--from", startPath}, &out, &errOut); code != 0 {
		t.Fatalf("recipe exit %d: %s", code, errOut.String())
	}
	if r, _ := recipe.Parse(out.Bytes()); len(r.Sweep.ApertureOffsetsDeg) != 0 {
		t.Errorf("[] became %v", r.Sweep.ApertureOffsetsDeg)
	}
}

// readTruth reads a truth file written by "spotloom simulate --truth".
func readTruth(t *testing.T, path string) sampledata.Truth {
	t.Helper()
	var truth sampledata.Truth
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(data, &truth); err != nil {
		t.Fatal(err)
	}
	return truth
}
