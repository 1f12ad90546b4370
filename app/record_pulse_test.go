package main

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/recon"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// pulseRateHz is the rate of the test's sound server, its null sink and
// the capture played into it, so nothing is resampled on the way.
const pulseRateHz = 48000

// startPulseAudio starts a private PulseAudio server as the current user
// (root on CI, hence --system=false) with a three-channel null sink named
// "spotloom", the native protocol on a socket in a temporary directory,
// and no other modules; the environment of this test points the sound
// library and the pulse tools at it. It skips the test, never fails it,
// when the server cannot be started here.
func startPulseAudio(t *testing.T) (sink string) {
	t.Helper()
	for _, tool := range []string{"pulseaudio", "pactl", "paplay"} {
		if _, err := exec.LookPath(tool); err != nil {
			t.Skipf("no %s on this machine (Debian packages pulseaudio and pulseaudio-utils): the sound-server test is skipped", tool)
		}
	}
	// A short directory of our own: a unix socket path is limited to 107
	// bytes (unix(7)), and t.TempDir's can be long.
	dir, err := os.MkdirTemp("", "spotloom-pulse-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	socket := filepath.Join(dir, "native")
	config := fmt.Sprintf("load-module module-native-protocol-unix socket=%s auth-anonymous=1\n"+
		"load-module module-null-sink sink_name=spotloom channels=3 rate=%d\n"+
		"set-default-sink spotloom\nset-default-source spotloom.monitor\n", socket, pulseRateHz)
	configPath := filepath.Join(dir, "spotloom.pa")
	if err := os.WriteFile(configPath, []byte(config), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Setenv("HOME", dir)
	t.Setenv("XDG_RUNTIME_DIR", dir)
	t.Setenv("XDG_CONFIG_HOME", dir)
	t.Setenv("PULSE_SERVER", "unix:"+socket)
	var log bytes.Buffer
	server := exec.Command("pulseaudio", "--daemonize=no", "--exit-idle-time=-1", "--system=false", "-n",
		"-F", configPath, "--log-target=stderr", "--disallow-exit")
	server.Stderr = &log
	if err := server.Start(); err != nil {
		t.Skipf("the sound server did not start (%v): the sound-server test is skipped", err)
	}
	exited := make(chan struct{})
	go func() { server.Wait(); close(exited) }()
	t.Cleanup(func() {
		server.Process.Kill()
		<-exited
	})
	for deadline := time.Now().Add(10 * time.Second); ; {
		if exec.Command("pactl", "info").Run() == nil {
			return "spotloom"
		}
		select {
		case <-exited:
			t.Skipf("the sound server exited at start: the sound-server test is skipped; its log:\n%s", log.String())
		case <-time.After(100 * time.Millisecond):
		}
		if time.Now().After(deadline) {
			t.Skipf("the sound server did not answer within 10 s: the sound-server test is skipped; its log:\n%s", log.String())
		}
	}
}

// pulseRig is the demo wheel at the server's rate, turning faster and
// crossing less travel so that a 3.5 s capture holds a whole dot grid at
// about one line per millimetre.
func pulseRig() sampledata.Rig {
	rig := sampledata.DemoRig()
	rig.SampleRateHz = pulseRateHz
	rig.DurationS = 3.5
	rig.Wheel.RevPerMin = 900
	rig.Motion.StartRestS = 0.25
	rig.Motion.StrokeS = 3
	rig.Motion.TravelMM = 250
	rig.Motion.PauseCount = 0
	rig.Position.RangeMM = 250
	return rig
}

// lockedBuffer is a bytes.Buffer that one goroutine writes while another
// reads it.
type lockedBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (b *lockedBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.Write(p)
}

func (b *lockedBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

// TestRecordFromPulseAudio plays a simulated dot-grid capture into the
// null sink of a private PulseAudio server with paplay while "spotloom
// record" records the sink's monitor through malgo's PulseAudio backend.
// The recording has the server's rate and the capture's three channels,
// its index pulses are the simulator's (within the few lost at start and
// stop), and its image puts the dots where the simulator's truth has them,
// as accurately as a build of the capture that was played.
func TestRecordFromPulseAudio(t *testing.T) {
	sink := startPulseAudio(t)
	dir := t.TempDir()
	rig := pulseRig()
	rec, truth, err := sampledata.Simulate(context.Background(), rig, "dot-grid", sampledata.SimOptions{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	played := filepath.Join(dir, "played.wav")
	writeWAVFile(t, played, withLeadIn(rec, pulseLeadInS))

	code, list, errOut := runCmd("record", "--list")
	monitor := regexp.MustCompile(`\(` + regexp.QuoteMeta(sink) + `\.monitor\)`).FindString(list)
	if code != 0 || monitor == "" {
		t.Fatalf("record --list: exit %d, no monitor of the %s sink in %q (%s)", code, sink, list, errOut)
	}
	take := filepath.Join(dir, "take.wav")
	// Room after the capture for a player that starts late on a loaded
	// machine.
	seconds := rig.DurationS + pulseLeadInS + 4
	var recordErr lockedBuffer
	recorded := make(chan int, 1)
	go func() {
		var out bytes.Buffer
		recorded <- run([]string{"record", "--device", strings.Trim(monitor, "()"), "--seconds", strconv.FormatFloat(seconds, 'g', -1, 64), "--out", take}, &out, &recordErr)
	}()
	for start := time.Now(); !strings.Contains(recordErr.String(), "recording "); time.Sleep(20 * time.Millisecond) {
		if time.Since(start) > 10*time.Second {
			t.Fatalf("record did not start: %s", recordErr.String())
		}
	}
	time.Sleep(300 * time.Millisecond) // the device starts after the line
	// A second of the capture held by the server, so a player starved of
	// the CPU for a moment on a loaded machine does not leave a gap.
	if out, err := exec.Command("paplay", "--device="+sink, "--latency-msec=1000", played).CombinedOutput(); err != nil {
		t.Fatalf("paplay: %v: %s", err, out)
	}
	if code := <-recorded; code != 0 {
		t.Fatalf("record exited %d: %s", code, recordErr.String())
	}
	side, err := live.ReadSidecar(live.SidecarPath(take))
	if err != nil {
		t.Fatal(err)
	}

	got, err := capture.Open(take, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if got.SampleRateHz != pulseRateHz || len(got.Channels) != 3 {
		t.Fatalf("recorded %g Hz × %d channels, want %d Hz × 3", got.SampleRateHz, len(got.Channels), pulseRateHz)
	}
	if want := math.Round(seconds * pulseRateHz); float64(got.Frames()) != want {
		t.Errorf("recorded %d frames, asked for %g", got.Frames(), want)
	}
	// The rig's pulses are 0.8 V on a 1 V full scale (rig.Index); counted
	// as rising crossings of half that with a tenth of it as hysteresis.
	level := rig.Index.LevelV / rig.ADC.FullScaleV
	pulses, gaps, first, last := risingCrossings(got.Channels[truth.Channels["index"]].Samples, level/2, level/10)
	if want := len(truth.IndexEdgesS); pulses > want || pulses < want-3 {
		t.Errorf("%d index pulses recorded, the simulator made %d; the recording's overruns: %+v; gaps between pulses at %v s; pulses from %.3f s to %.3f s of %.3f s",
			pulses, want, side.Overruns, gapTimes(gaps, got.SampleRateHz), float64(first)/got.SampleRateHz, float64(last)/got.SampleRateHz, got.DurationS())
	}

	r := rig.Recipe()
	r.Sweep.ApertureOffsetsDeg = nil // estimated: the first line of the take need not be the capture's
	playedRMS, playedOffset := dotCentreError(t, rec, r, truth)
	rms, offset := dotCentreError(t, got, r, truth)
	t.Logf("%d of %d pulses; dot centres %.3f mm RMS about a mean offset of (%.3f, %.3f) mm; the played capture's %.3f mm about (%.3f, %.3f) mm",
		pulses, len(truth.IndexEdgesS), rms, offset[0], offset[1], playedRMS, playedOffset[0], playedOffset[1])
	// The recorded image is as good as the one of the capture played (the
	// sound server passes 16-bit samples unchanged at full volume), and
	// both put the dots where the truth has them.
	if rms > max(playedRMS*1.25, 0.5) || math.Hypot(offset[0]-playedOffset[0], offset[1]-playedOffset[1]) > 0.3 || math.Hypot(offset[0], offset[1]) > 1 {
		t.Errorf("recorded dot centres %.3f mm RMS about (%.3f, %.3f) mm; the played capture's %.3f mm about (%.3f, %.3f) mm",
			rms, offset[0], offset[1], playedRMS, playedOffset[0], playedOffset[1])
	}
}

// pulseLeadInS is the silence played before the capture: the recorder's
// device starts a moment after its first line, later on a loaded machine,
// and what the server plays before that is not recorded.
const pulseLeadInS = 2.0

// withLeadIn is rec after s seconds of silence on every channel.
func withLeadIn(rec *capture.Recording, s float64) *capture.Recording {
	out := *rec
	out.Channels = nil
	lead := int(math.Round(s * rec.SampleRateHz))
	for _, c := range rec.Channels {
		c.Samples = append(make([]float32, lead, lead+len(c.Samples)), c.Samples...)
		out.Channels = append(out.Channels, c)
	}
	return &out
}

// writeWAVFile writes rec (volts on a 1 V full scale) as 16-bit PCM.
func writeWAVFile(t *testing.T, path string, rec *capture.Recording) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := capture.WriteWAV(f, rec, "int16"); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// risingCrossings counts the rises of x through threshold+hysteresis/2
// after it was below threshold−hysteresis/2, and returns the sample at
// which each rise that follows a longer wait than 1.5 times the median
// one begins its wait (where pulses went missing), and the samples of the
// first and last rise.
func risingCrossings(x []float32, threshold, hysteresis float64) (n int, gaps []int, first, last int) {
	var rises []int
	high := true // a capture that starts high is not a rise
	for i, v := range x {
		switch {
		case !high && float64(v) > threshold+hysteresis/2:
			high = true
			rises = append(rises, i)
		case high && float64(v) < threshold-hysteresis/2:
			high = false
		}
	}
	var waits []float64
	for i := 1; i < len(rises); i++ {
		waits = append(waits, float64(rises[i]-rises[i-1]))
	}
	slices.Sort(waits)
	for i := 1; len(waits) > 0 && i < len(rises); i++ {
		if float64(rises[i]-rises[i-1]) > 1.5*waits[len(waits)/2] {
			gaps = append(gaps, rises[i-1])
		}
	}
	if len(rises) == 0 {
		return 0, nil, 0, 0
	}
	return len(rises), gaps, rises[0], rises[len(rises)-1]
}

// gapTimes is the samples as seconds, rounded to the millisecond.
func gapTimes(gaps []int, rateHz float64) []float64 {
	out := make([]float64, len(gaps))
	for i, g := range gaps {
		out[i] = math.Round(float64(g)/rateHz*1000) / 1000
	}
	return out
}

// dotCentreError builds rec with r, finds the dot grid (measure.Grid) and
// compares every dot found with the nearest of the simulator's true dot
// centres: the RMS of the differences about their mean, and that mean.
func dotCentreError(t *testing.T, rec *capture.Recording, r recipe.Recipe, truth *sampledata.Truth) (rms float64, offset [2]float64) {
	t.Helper()
	res, err := recon.NewSession(rec).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	const spacing = 25 // the dot-grid scene's pitch (sampledata/scenes.go, dotPitchMM)
	grid, err := measure.Grid(res.Frames[0], spacing)
	if err != nil {
		t.Fatal(err)
	}
	if grid.Found < len(truth.Dots)*8/10 {
		t.Fatalf("%d dots found, the truth has %d", grid.Found, len(truth.Dots))
	}
	var dx, dy []float64
	for _, d := range grid.Dots {
		best := math.Inf(1)
		var ex, ey float64
		for _, c := range truth.Dots {
			if e := math.Hypot(d.XMM-c[0], d.YMM-c[1]); e < best {
				best, ex, ey = e, d.XMM-c[0], d.YMM-c[1]
			}
		}
		if best < spacing/2 {
			dx, dy = append(dx, ex), append(dy, ey)
		}
	}
	n := float64(len(dx))
	for i := range dx {
		offset[0] += dx[i] / n
		offset[1] += dy[i] / n
	}
	for i := range dx {
		rms += (math.Pow(dx[i]-offset[0], 2) + math.Pow(dy[i]-offset[1], 2)) / n
	}
	return math.Sqrt(rms), offset
}
