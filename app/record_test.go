package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/go-audio/wav"

	"spotloom/capture/live"
)

func runRecordCmd(args ...string) (code int, stderr string) {
	var out, errOut bytes.Buffer
	code = run(append([]string{"record"}, args...), &out, &errOut)
	return code, errOut.String()
}

// simulatedTake simulates a dot-grid capture of the given length at 48 kHz
// into a new folder, and names the take to record beside it.
func simulatedTake(t *testing.T, seconds float64) (src, out string) {
	t.Helper()
	dir := t.TempDir()
	src = filepath.Join(dir, "sim.wav")
	if code, _, errOut := runSimulateCmd("--scene", "dot-grid", "--out", src, "--seconds", fmt.Sprint(seconds), "--rate", "48000"); code != 0 {
		t.Fatalf("simulate: %s", errOut)
	}
	return src, filepath.Join(dir, "take.wav")
}

// "record --from" replays a simulated capture through the live path; the
// WAV it writes holds the same samples, checked with the independent
// go-audio/wav decoder, and its sidecar says it finished without loss.
func TestRecordFromReplay(t *testing.T) {
	src, out := simulatedTake(t, 0.5)
	if code, errOut := runRecordCmd("--from", src, "--speed", "25", "--out", out); code != 0 {
		t.Fatalf("record exited %d: %s", code, errOut)
	}
	decode := func(path string) ([]int, int, int) {
		f, err := os.Open(path)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		buf, err := wav.NewDecoder(f).FullPCMBuffer()
		if err != nil {
			t.Fatalf("go-audio/wav %s: %v", path, err)
		}
		return buf.Data, buf.Format.SampleRate, buf.Format.NumChannels
	}
	want, wantRate, wantCh := decode(src)
	got, rate, ch := decode(out)
	if rate != wantRate || ch != wantCh || len(got) != len(want) {
		t.Fatalf("recorded %d Hz × %d, %d samples; source %d Hz × %d, %d samples", rate, ch, len(got), wantRate, wantCh, len(want))
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("sample %d = %d, source %d", i, got[i], want[i])
		}
	}
	side, err := live.ReadSidecar(live.SidecarPath(out))
	if err != nil {
		t.Fatal(err)
	}
	if !side.Finished || side.OverrunFrames != 0 || side.SampleType != "int16" {
		t.Errorf("sidecar %+v", side)
	}
	// A second take under the same name is refused, exit 1, file kept.
	before, _ := os.ReadFile(out)
	code, errOut := runRecordCmd("--from", src, "--speed", "25", "--out", out)
	if after, _ := os.ReadFile(out); code != 1 || !strings.Contains(errOut, "already exists") || !bytes.Equal(before, after) {
		t.Errorf("second take: exit %d, %q", code, errOut)
	}
}

func TestRecordUsage(t *testing.T) {
	for _, args := range [][]string{{}, {"--out", "x.wav", "--format", "s8"}, {"--out", "x.wav", "--from", "a.wav", "--rate", "8000"}} {
		if code, errOut := runRecordCmd(args...); code != 2 {
			t.Errorf("record %q: exit %d (%s), want 2", args, code, errOut)
		}
	}
}

func TestMeterLine(t *testing.T) {
	// 0.5 full scale is 20·log10(0.5) = −6.02 dB (definition of dBFS).
	line := meterLine(live.Status{Frames: 3 * 48000, RateHz: 48000, Peak: []float32{0.5, 0, 1}, Overruns: 2})
	for _, want := range []string{"00:03.0", "1 ▮▮▮▮▮▮▮▯   -6 dB", "2 ▯▯▯▯▯▯▯▯", "CLIP", "overruns 2"} {
		if !strings.Contains(line, want) {
			t.Errorf("meter line %q lacks %q", line, want)
		}
	}
}

// Ctrl-C (SIGINT) ends a recording as its normal stop: exit 0, and the
// WAV holds what came until then (checked with the independent go-audio
// decoder), its sidecar finished and saying it was stopped.
func TestRecordStopsOnCtrlC(t *testing.T) {
	src, out := simulatedTake(t, 3)
	var errOut lockedBuffer
	done := make(chan int, 1)
	go func() {
		var stdout bytes.Buffer
		done <- run([]string{"record", "--from", src, "--out", out}, &stdout, &errOut)
	}()
	for start := time.Now(); !strings.Contains(errOut.String(), "recording "); time.Sleep(10 * time.Millisecond) {
		if time.Since(start) > 10*time.Second {
			t.Fatalf("record did not start: %s", errOut.String())
		}
	}
	time.Sleep(700 * time.Millisecond)
	syscall.Kill(os.Getpid(), syscall.SIGINT)
	var code int
	select {
	case code = <-done:
	case <-time.After(10 * time.Second):
		t.Fatal("record did not stop on SIGINT")
	}
	if code != 0 {
		t.Fatalf("record after Ctrl-C: exit %d: %s", code, errOut.String())
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	buf, err := wav.NewDecoder(f).FullPCMBuffer()
	if err != nil {
		t.Fatalf("go-audio/wav: %v", err)
	}
	secs := float64(buf.NumFrames()) / float64(buf.Format.SampleRate)
	side, err := live.ReadSidecar(live.SidecarPath(out))
	if err != nil {
		t.Fatal(err)
	}
	if secs < 0.3 || secs > 2.9 || side.Frames != int64(buf.NumFrames()) || !side.Finished || side.Stopped != "stopped" {
		t.Errorf("after Ctrl-C at about 0.7 s of 3 s: the file holds %.2f s; sidecar %d frames, finished %v, stopped %q", secs, side.Frames, side.Finished, side.Stopped)
	}
}

// A name that is refused is not announced as a recording: an existing
// file, or a folder that does not exist, gives exit 1 and one line saying
// why, no "recording" line, and the file as it was.
func TestRecordRefusalIsOneLine(t *testing.T) {
	src, _ := simulatedTake(t, 0.2)
	before, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	missing := filepath.Join(t.TempDir(), "no-such-folder", "take.wav")
	for _, c := range []struct{ out, want string }{
		{src, "already exists"},
		{missing, "the folder " + filepath.Dir(missing) + " does not exist"},
	} {
		code, errOut := runRecordCmd("--from", src, "--out", c.out, "--speed", "50")
		if code != 1 || strings.Count(errOut, "\n") != 1 || !strings.Contains(errOut, c.want) || strings.Contains(errOut, "recording replay") {
			t.Errorf("record to %s: exit %d, stderr %q; want exit 1 and one line saying %q", c.out, code, errOut, c.want)
		}
	}
	if after, _ := os.ReadFile(src); !bytes.Equal(after, before) {
		t.Error("the existing file was changed")
	}
}
