package main

import (
	"bufio"
	"bytes"
	"context"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

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

	// "spotloom FILE", as a file manager starts it, opens the capture like
	// "spotloom open FILE"; a word that is neither a command nor a file
	// is still an unknown command.
	stderr.Reset()
	bare := filepath.Join(dir, "bare.png")
	if code := run([]string{path, "--rate", "96000", "--snapshot", bare}, &stdout, &stderr); code != 0 {
		t.Fatalf("spotloom FILE: exit %d, stderr %q", code, stderr.String())
	}
	if _, err := os.Stat(bare); err != nil {
		t.Errorf("spotloom FILE wrote no snapshot: %v", err)
	}
	stderr.Reset()
	if code := run([]string{filepath.Join(dir, "no-such.wav")}, &stdout, &stderr); code != 2 || !strings.Contains(stderr.String(), "unknown command") {
		t.Errorf("a missing file: exit %d, %q; want exit 2, unknown command", code, stderr.String())
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

// builtBinary builds the spotloom command for tests that must run the
// real program (the window toolkit needs the main thread, which a test
// binary does not give it).
func builtBinary(t *testing.T) string {
	t.Helper()
	goTool, err := exec.LookPath("go")
	if err != nil {
		goTool = filepath.Join(runtime.GOROOT(), "bin", "go")
	}
	bin := filepath.Join(t.TempDir(), "spotloom")
	if out, err := exec.Command(goTool, "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// TestNoDisplay: "spotloom" and "spotloom open" without a usable display
// (none named, or one named that is not there) exit 1 with one line that
// says so and names --snapshot, never a panic or a stack trace.
func TestNoDisplay(t *testing.T) {
	bin := builtBinary(t)
	var env []string
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, "DISPLAY=") && !strings.HasPrefix(kv, "WAYLAND_DISPLAY=") {
			env = append(env, kv)
		}
	}
	cases := []struct {
		args    []string
		display []string
	}{
		{nil, nil},
		{[]string{"open"}, nil},
		{[]string{"open"}, []string{"DISPLAY="}},
		// a display number nobody serves: the toolkit itself fails
		{[]string{"open"}, []string{"DISPLAY=" + unservedDisplay(t)}},
		{nil, []string{"WAYLAND_DISPLAY=spotloom-none"}},
	}
	for _, c := range cases {
		cmd := exec.Command(bin, c.args...)
		cmd.Env = append(slices.Clone(env), c.display...)
		var stdout, stderr bytes.Buffer
		cmd.Stdout, cmd.Stderr = &stdout, &stderr
		done := make(chan error, 1)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		go func() { done <- cmd.Wait() }()
		select {
		case <-done:
		case <-time.After(60 * time.Second):
			cmd.Process.Kill()
			t.Fatalf("%q %q: still running after a minute", c.args, c.display)
		}
		msg := stderr.String()
		if code := cmd.ProcessState.ExitCode(); code != 1 || strings.Count(msg, "\n") != 1 ||
			!strings.HasPrefix(msg, "spotloom open: no display: ") || !strings.Contains(msg, "--snapshot OUT.png") {
			t.Errorf("%q %q: exit %d, stderr %q; want exit 1 and one \"no display\" line", c.args, c.display, code, msg)
		}
	}
}

// --replay needs the window: with --snapshot, or a --replay-speed without
// --replay or out of range, it is a usage error (exit 2) naming the flag.
func TestOpenReplayUsage(t *testing.T) {
	for _, args := range [][]string{
		{"open", "--replay", "--snapshot", filepath.Join(t.TempDir(), "x.png")},
		{"open", "--replay-speed", "4"},
		{"open", "--replay", "--replay-speed", "0"},
		{"open", "--replay", "--replay-speed", "NaN"},
	} {
		var stdout, stderr bytes.Buffer
		code := run(args, &stdout, &stderr)
		if code != 2 || !strings.Contains(stderr.String(), "--replay") {
			t.Errorf("%q: exit %d, stderr %q; want 2 naming --replay", args, code, stderr.String())
		}
	}
}

// unservedDisplay is an X display number that no server here serves: no
// socket for it in /tmp/.X11-unix, no lock file, and no abstract socket of
// that name in /proc/net/unix (the X11 conventions for local displays).
func unservedDisplay(t *testing.T) string {
	t.Helper()
	sockets, _ := os.ReadFile("/proc/net/unix")
	for n := 97; n < 300; n++ {
		name := "/tmp/.X11-unix/X" + strconv.Itoa(n)
		if _, err := os.Stat(name); err == nil {
			continue
		}
		if _, err := os.Stat("/tmp/.X" + strconv.Itoa(n) + "-lock"); err == nil {
			continue
		}
		if strings.Contains(string(sockets), "@"+name+"\n") {
			continue
		}
		return ":" + strconv.Itoa(n)
	}
	t.Skip("every display from :97 to :299 is in use")
	return ""
}
