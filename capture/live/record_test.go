package live

import (
	"bufio"
	"context"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"spotloom/capture"
	"spotloom/internal/faultydisk"
)

// knownValue is sample c of frame i of the test signal: a multiple of
// 2^-15, which int16 stores exactly (16-bit two's complement step, WAVE
// form PCM data packing), and never zero, so a zero frame is a marked gap.
func knownValue(i, c int) float32 {
	v := (i*13+c*4099)%65535 - 32767
	if v == 0 {
		v = 1
	}
	return float32(v) / 32768
}

func knownRecording(rate, channels, frames int) *capture.Recording {
	rec := &capture.Recording{SampleRateHz: float64(rate), Source: capture.Source{Format: "memory"}}
	for c := 0; c < channels; c++ {
		s := make([]float32, frames)
		for i := range s {
			s[i] = knownValue(i, c)
		}
		rec.Channels = append(rec.Channels, capture.Channel{Name: strconv.Itoa(c + 1), Samples: s})
	}
	return rec
}

// checkAgainstSource checks that every frame of the WAV is the source's
// frame of the same number, or zero inside a listed overrun, and that the
// overruns are all the zero frames.
func checkAgainstSource(t *testing.T, rec *capture.Recording, side *Sidecar) {
	t.Helper()
	inGap := make([]bool, rec.Frames())
	var gapFrames int64
	for _, o := range side.Overruns {
		for i := o.AtFrame; i < o.AtFrame+o.Frames && i < int64(len(inGap)); i++ {
			inGap[i] = true
		}
		gapFrames += o.Frames
	}
	if gapFrames != side.OverrunFrames {
		t.Errorf("overruns add up to %d frames, sidecar says %d", gapFrames, side.OverrunFrames)
	}
	for c, ch := range rec.Channels {
		for i, v := range ch.Samples {
			want := knownValue(i, c)
			if inGap[i] {
				want = 0
			}
			if v != want {
				t.Fatalf("channel %d frame %d = %g, want %g (in a gap: %v)", c, i, v, want, inGap[i])
			}
		}
	}
}

func TestRecordReplayKeepsEverySample(t *testing.T) {
	src, err := NewReplay(knownRecording(8000, 3, 8000), 20)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "take.wav")
	var statuses int
	res, err := Record(context.Background(), src, Options{Path: path, Status: func(Status) { statuses++ }})
	if err != nil {
		t.Fatal(err)
	}
	rec, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	side, err := ReadSidecar(res.SidecarPath)
	if err != nil {
		t.Fatal(err)
	}
	if rec.Frames() != 8000 || side.Frames != 8000 || !side.Finished || side.OverrunFrames != 0 || side.Stopped != "the source ended" {
		t.Errorf("read %d frames; sidecar %+v", rec.Frames(), side)
	}
	if side.SampleRateHz != 8000 || side.Channels != 3 || side.SampleType != "int16" || rec.SampleRateHz != 8000 {
		t.Errorf("sidecar %+v, file %g Hz", side, rec.SampleRateHz)
	}
	checkAgainstSource(t, rec, side)
	if statuses == 0 {
		t.Error("no status reported")
	}
}

// The levels a recording reports are each channel's largest |sample|
// since the last report (math.Abs of the Go standard library over the
// source's samples): over all reports, the channel's largest (each
// channel's own, one of them negative, one in the last block); a NaN
// from a float device is taken by no comparison.
func TestRecordPeaksPerChannel(t *testing.T) {
	rec := knownRecording(8000, 3, 8000)
	rec.Channels[1].Samples[4321] = float32(math.NaN())
	// A level above the rest on each channel, one of them negative and
	// one in the last block, so that each must be found where it is.
	rec.Channels[0].Samples[100] = -1.25
	rec.Channels[1].Samples[5000] = 1.125
	rec.Channels[2].Samples[7990] = 1.5
	want := make([]float64, 3)
	for c, ch := range rec.Channels {
		for _, v := range ch.Samples {
			if v == v {
				want[c] = math.Max(want[c], math.Abs(float64(v)))
			}
		}
	}
	src, err := NewReplay(rec, 20)
	if err != nil {
		t.Fatal(err)
	}
	got := make([]float64, 3)
	status := func(s Status) {
		for c, p := range s.Peak {
			if p != p {
				t.Errorf("channel %d: a NaN level", c)
			}
			got[c] = math.Max(got[c], float64(p))
		}
	}
	if _, err := Record(context.Background(), src, Options{Path: filepath.Join(t.TempDir(), "levels.wav"), SampleType: "float32", Status: status}); err != nil {
		t.Fatal(err)
	}
	for c := range want {
		if got[c] != want[c] {
			t.Errorf("channel %d: largest level %v, want %v", c, got[c], want[c])
		}
	}
}

func TestRecordStopsAtMaxFrames(t *testing.T) {
	src, _ := NewReplay(knownRecording(8000, 2, 16000), 50)
	path := filepath.Join(t.TempDir(), "take.wav")
	if _, err := Record(context.Background(), src, Options{Path: path, MaxFrames: 5001}); err != nil {
		t.Fatal(err)
	}
	rec, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	side, _ := ReadSidecar(SidecarPath(path))
	if rec.Frames() != 5001 || side.Stopped != "reached the requested length" {
		t.Errorf("%d frames, stopped %q; want 5001 and the length reached", rec.Frames(), side.Stopped)
	}
	checkAgainstSource(t, rec, side)
}

// A source far faster than the writer overflows a small ring: the lost
// frames are zeros at their place, every other frame is where it belongs,
// and the sidecar lists the gaps.
func TestRecordOverrunIsMarkedNotClosedUp(t *testing.T) {
	src, _ := NewReplay(knownRecording(48000, 2, 96000), 1000)
	path := filepath.Join(t.TempDir(), "take.wav")
	res, err := Record(context.Background(), src, Options{Path: path, RingSeconds: 0.005})
	if err != nil {
		t.Fatal(err)
	}
	rec, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Frames() != 96000 {
		t.Errorf("file holds %d frames, the source %d: a gap was closed up", rec.Frames(), 96000)
	}
	if len(res.Sidecar.Overruns) == 0 {
		t.Fatal("no overrun with a 240-frame ring at 1000× real time")
	}
	checkAgainstSource(t, rec, &res.Sidecar)
}

func TestRingMarksGapAtItsPlace(t *testing.T) {
	r := newRing(1, 4)
	frames := func(from, n int) []float32 {
		out := make([]float32, n)
		for i := range out {
			out[i] = float32(from + i)
		}
		return out
	}
	var got []float32
	pop := func() {
		r.pop(func(s []float32) error { got = append(got, s...); return nil },
			func(n uint64) error {
				for ; n > 0; n-- {
					got = append(got, -1)
				}
				return nil
			})
	}
	r.push(frames(0, 3)) // 0 1 2
	r.push(frames(3, 3)) // 3 fits, 4 5 lost
	pop()
	r.push(frames(6, 2)) // gap of 2 before 6 7
	pop()
	want := []float32{0, 1, 2, 3, -1, -1, 6, 7}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("got %v, want %v", got, want)
	}
}

func TestRecordNeverOverwrites(t *testing.T) {
	dir := t.TempDir()
	src, _ := NewReplay(knownRecording(8000, 1, 800), 10)
	wav := filepath.Join(dir, "a.wav")
	os.WriteFile(wav, []byte("keep"), 0o644)
	if _, err := Record(context.Background(), src, Options{Path: wav}); err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Errorf("existing WAV: error %v", err)
	}
	if _, err := os.Stat(SidecarPath(wav)); err == nil {
		t.Error("a sidecar was made for a recording that never started")
	}
	wav2 := filepath.Join(dir, "b.wav")
	os.WriteFile(SidecarPath(wav2), []byte("keep"), 0o644)
	if _, err := Record(context.Background(), src, Options{Path: wav2}); err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Errorf("existing sidecar: error %v", err)
	}
	if _, err := os.Stat(wav2); err == nil {
		t.Error("WAV made although its sidecar was there")
	}
	if b, _ := os.ReadFile(wav); string(b) != "keep" {
		t.Error("existing WAV changed")
	}
}

func TestRecordDiskFullStopsAndKeepsWhatWasWritten(t *testing.T) {
	src, _ := NewReplay(knownRecording(8000, 2, 80000), 40)
	path := filepath.Join(t.TempDir(), "take.wav")
	res, err := Record(context.Background(), src, Options{Path: path, Create: faultydisk.Full(44 + 4*30000)})
	if err == nil || !strings.Contains(err.Error(), "disk is full") || !strings.Contains(err.Error(), "3.8 s") {
		t.Fatalf("error %v, want a full-disk message giving the 3.8 s kept", err)
	}
	rec, rerr := capture.Open(path, capture.Options{})
	if rerr != nil {
		t.Fatal(rerr)
	}
	if rec.Frames() != 30000 || res.Sidecar.Frames != 30000 || !strings.Contains(res.Sidecar.Stopped, "no space") {
		t.Errorf("file holds %d frames, sidecar %d (%q); 30000 fit", rec.Frames(), res.Sidecar.Frames, res.Sidecar.Stopped)
	}
	checkAgainstSource(t, rec, &res.Sidecar)
}

// TestMain lets the test binary act as a recording process for the kill
// test: SPOTLOOM_RECORD_HELPER=FILE records a real-time replay into FILE
// and prints, at every status, the frames committed and the frames in the
// file (every block the writer took, flushed to it).
func TestMain(m *testing.M) {
	if out := os.Getenv("SPOTLOOM_RECORD_HELPER"); out != "" {
		src, _ := NewReplay(knownRecording(16000, 3, 16000*60), 1)
		_, err := Record(context.Background(), src, Options{Path: out, CommitEvery: 200 * time.Millisecond,
			Status: func(s Status) { fmt.Printf("committed %d written %d\n", s.Committed, s.Frames) }})
		fmt.Fprintln(os.Stderr, err)
		os.Exit(3)
	}
	os.Exit(m.Run())
}

// A recording process killed with SIGKILL (no chance to close anything)
// leaves a valid WAV holding every frame the writer took before the kill,
// committed or not, each equal to the source's, and a sidecar that says it
// was cut off.
func TestRecordSurvivesSIGKILL(t *testing.T) {
	path := filepath.Join(t.TempDir(), "killed.wav")
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), "SPOTLOOM_RECORD_HELPER="+path)
	stdout, _ := cmd.StdoutPipe()
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	lines := bufio.NewScanner(stdout)
	var committed, written int64
	status := func() {
		var c, w int64
		if _, err := fmt.Sscanf(lines.Text(), "committed %d written %d", &c, &w); err == nil {
			committed, written = max(committed, c), max(written, w)
		}
	}
	// Kill between two commits: after a status with frames written that
	// the header does not cover yet.
	for (committed < 16000 || written <= committed) && lines.Scan() {
		status()
	}
	cmd.Process.Signal(syscall.SIGKILL)
	for lines.Scan() { // statuses printed before the kill: their frames were in the file
		status()
	}
	cmd.Wait()
	if committed < 16000 {
		t.Fatalf("helper committed only %d frames before it ended", committed)
	}
	rec, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if int64(rec.Frames()) < written || rec.SampleRateHz != 16000 || len(rec.Channels) != 3 {
		t.Fatalf("killed file: %d frames at %g Hz, %d channels; %d were committed and %d written", rec.Frames(), rec.SampleRateHz, len(rec.Channels), committed, written)
	}
	side, err := ReadSidecar(SidecarPath(path))
	if err != nil {
		t.Fatal(err)
	}
	if side.Finished || side.Frames < committed || side.Frames > int64(rec.Frames()) {
		t.Errorf("sidecar of a killed recording: %+v (file %d frames, %d committed)", side, rec.Frames(), committed)
	}
	checkAgainstSource(t, rec, side)
	t.Logf("killed after %d committed and %d written frames; the file holds %d (warnings %q)", committed, written, rec.Frames(), rec.Warnings)
}
