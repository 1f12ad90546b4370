package main

import (
	"maps"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"
	"time"
)

// interruptAt sends sig to this process the first time the command
// reports stage, and holds the work there until the signal has been seen,
// as a user pressing Ctrl-C during that stage would.
func interruptAt(t *testing.T, stage string, sig syscall.Signal) {
	t.Helper()
	sent := false
	hook := func(s string, _ float64) {
		if s != stage || sent {
			return
		}
		sent = true
		syscall.Kill(os.Getpid(), sig)
		time.Sleep(300 * time.Millisecond)
	}
	stageHook.Store(&hook)
	t.Cleanup(func() { stageHook.Store(nil) })
}

// TestInterruptedBuildLeavesNothing: SIGINT, SIGTERM or SIGHUP in any
// stage of a forced build (reading, the pipeline, gridding, writing) stops
// it with exit 1 and "interrupted", and the previous image, sidecar and
// report stay exactly as they were, with no temporary or lock file left.
func TestInterruptedBuildLeavesNothing(t *testing.T) {
	dir, wav, recipePath := demoFiles(t)
	out, report := filepath.Join(dir, "f.tiff"), filepath.Join(dir, "f.report.json")
	if code, _, stderr := runCmd("build", wav, "--recipe", recipePath, "--out", out, "--report", report); code != 0 {
		t.Fatalf("first build: exit %d: %s", code, stderr)
	}
	before := snapshotDir(t, dir)
	stages := []struct {
		stage string
		sig   syscall.Signal
	}{
		{"timing", syscall.SIGINT}, {"gridding", syscall.SIGTERM}, {"writing", syscall.SIGHUP}, {"gridding", syscall.SIGINT},
		{"reading", syscall.SIGINT}, // last: the abandoned read may report again
	}
	for _, c := range stages {
		interruptAt(t, c.stage, c.sig)
		code, _, stderr := runCmd("build", wav, "--recipe", recipePath, "--out", out, "--report", report, "--force", "--depth", "8")
		stageHook.Store(nil)
		if code != 1 || stderr != "spotloom build: interrupted\n" {
			t.Errorf("%v in %s: exit %d, stderr %q; want exit 1, \"interrupted\"", c.sig, c.stage, code, stderr)
		}
		after := snapshotDir(t, dir)
		if !slices.Equal(slices.Sorted(maps.Keys(after)), slices.Sorted(maps.Keys(before))) {
			t.Errorf("%v in %s: folder holds %v, want %v", c.sig, c.stage, slices.Sorted(maps.Keys(after)), slices.Sorted(maps.Keys(before)))
		}
		for p, content := range before {
			if after[p] != content {
				t.Errorf("%v in %s: %s changed", c.sig, c.stage, p)
			}
		}
	}
}

// TestInterruptedSimulateLeavesNothing: simulate stopped by a signal
// writes none of its files and leaves no temporary.
func TestInterruptedSimulateLeavesNothing(t *testing.T) {
	dir := t.TempDir()
	interruptAt(t, "simulating", syscall.SIGINT)
	code, _, stderr := runCmd("simulate", "--scene", "bars", "--out", filepath.Join(dir, "s.wav"), "--truth", filepath.Join(dir, "t.json"))
	if code != 1 || !strings.Contains(stderr, "interrupted") {
		t.Errorf("exit %d, stderr %q; want exit 1, interrupted", code, stderr)
	}
	if left := snapshotDir(t, dir); len(left) != 0 {
		t.Errorf("left %v", slices.Sorted(maps.Keys(left)))
	}
}
