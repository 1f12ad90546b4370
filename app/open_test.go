package main

import (
	"bufio"
	"bytes"
	"context"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotloom/capture"
	"spotloom/sampledata"
)

// TestOpenCSVWithoutTimeNeedsRate: a logger export with no time column can
// only be opened when the rate is given, and --rate on "open" reaches the
// reader; the snapshot is then a PNG that the standard library decodes.
func TestOpenCSVWithoutTimeNeedsRate(t *testing.T) {
	if testing.Short() {
		t.Skip("renders the window")
	}
	rig := sampledata.DemoRig()
	rec, _, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 3, DurationS: 6})
	if err != nil {
		t.Fatal(err)
	}
	var withTime bytes.Buffer
	if err := capture.WriteCSV(&withTime, rec, nil); err != nil {
		t.Fatal(err)
	}
	// Drop the preamble and the time column (the first field of every row).
	var noTime bytes.Buffer
	sc := bufio.NewScanner(&withTime)
	sc.Buffer(make([]byte, 1<<16), 1<<20)
	header := true
	for sc.Scan() {
		line := sc.Text()
		if header && !strings.Contains(line, ",") {
			continue // preamble
		}
		header = false
		_, rest, _ := strings.Cut(line, ",")
		noTime.WriteString(rest + "\n")
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "logger.csv")
	if err := os.WriteFile(path, noTime.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	shot := filepath.Join(dir, "shot.png")

	var stdout, stderr bytes.Buffer
	if code := run([]string{"open", path, "--snapshot", shot}, &stdout, &stderr); code != 1 || !strings.Contains(stderr.String(), "sample rate") {
		t.Fatalf("without --rate: exit %d, stderr %q; want 1 naming the sample rate", code, stderr.String())
	}
	stderr.Reset()
	if code := run([]string{"open", path, "--rate", "96000", "--snapshot", shot}, &stdout, &stderr); code != 0 {
		t.Fatalf("with --rate: exit %d, stderr %q", code, stderr.String())
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	if err != nil || cfg.Width < 800 || cfg.Height < 500 {
		t.Errorf("snapshot %dx%d, %v", cfg.Width, cfg.Height, err)
	}
}

// TestSnapshotSize: --size sets the snapshot's window size (the PNG is
// that size in units times the painter's scale, read back with the
// standard library), and a malformed size is a usage error (exit 2).
func TestSnapshotSize(t *testing.T) {
	if testing.Short() {
		t.Skip("renders the window")
	}
	shot := filepath.Join(t.TempDir(), "small.png")
	var stdout, stderr bytes.Buffer
	if code := run([]string{"open", "--snapshot", shot, "--size", "1024x700"}, &stdout, &stderr); code != 0 {
		t.Fatalf("exit %d, stderr %q", code, stderr.String())
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Width*700 != cfg.Height*1024 || cfg.Width < 1024 {
		t.Errorf("snapshot is %d×%d, want 1024×700 times the painter's scale", cfg.Width, cfg.Height)
	}
	for _, bad := range []string{"1024", "axb", "100x100"} {
		stderr.Reset()
		if code := run([]string{"open", "--snapshot", filepath.Join(t.TempDir(), "x.png"), "--size", bad}, &stdout, &stderr); code != 2 {
			t.Errorf("--size %s: exit %d, want 2 (stderr %q)", bad, code, stderr.String())
		}
	}
}
