package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotloom/capture"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// "simulate --preset stereo-sound-card" writes a two-channel capture whose
// second channel is both the index and the position (in the recipe it
// writes and in its truth); "spotloom recipe" on it, knowing nothing,
// finds that channel for both roles and reads the position as a tone;
// "--print-rig --preset" prints the preset, and a preset with --rig is a
// usage error.
func TestSimulateStereoPreset(t *testing.T) {
	dir := t.TempDir()
	wav := filepath.Join(dir, "stereo.wav")
	start := filepath.Join(dir, "stereo.start.json")
	truthPath := filepath.Join(dir, "stereo.truth.json")
	if code, _, stderr := runSimulateCmd("--preset", "stereo-sound-card", "--scene", "parcel", "--seconds", "5",
		"--out", wav, "--recipe", start, "--truth", truthPath); code != 0 {
		t.Fatalf("simulate: exit %d: %s", code, stderr)
	}
	rec, err := capture.Open(wav, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Channels) != 2 {
		t.Fatalf("%d channels, want 2", len(rec.Channels))
	}
	data, err := os.ReadFile(start)
	if err != nil {
		t.Fatal(err)
	}
	r, err := recipe.Parse(data)
	if err != nil {
		t.Fatal(err)
	}
	if r.Channels.Index != "1" || r.Channels.Position != "1" || r.Rows.Source != recipe.SourceTone {
		t.Errorf("written recipe: channels %+v, source %s", r.Channels, r.Rows.Source)
	}
	if truth := readTruth(t, truthPath); truth.Channels["index"] != 1 || truth.Channels["position"] != 1 {
		t.Errorf("truth channels %v", truth.Channels)
	}
	code, stdout, stderr := runCmd("recipe", wav)
	if code != 0 {
		t.Fatalf("recipe: exit %d: %s", code, stderr)
	}
	found, err := recipe.Parse([]byte(stdout))
	if err != nil {
		t.Fatal(err)
	}
	if found.Channels.Index != "1" || found.Channels.Position != "1" || found.Rows.Source != recipe.SourceTone || !strings.Contains(stderr, "two-input sound card") {
		t.Errorf("first look: channels %+v, source %s; stderr %q", found.Channels, found.Rows.Source, stderr)
	}
	code, stdout, _ = runSimulateCmd("--print-rig", "--preset", "stereo-sound-card")
	if rig, err := sampledata.ParseRig([]byte(stdout)); code != 0 || err != nil || !rig.Position.SharesIndexInput {
		t.Errorf("--print-rig --preset: exit %d, %v", code, err)
	}
	for _, args := range [][]string{{"--preset", "nine-inputs", "--scene", "parcel", "--out", wav + "2"}, {"--preset", "demo", "--rig", start, "--scene", "parcel", "--out", wav + "3"}} {
		if code, _, _ := runSimulateCmd(args...); code != 2 {
			t.Errorf("simulate %q: exit %d, want 2", args, code)
		}
	}
}
