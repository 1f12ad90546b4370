package recon

import (
	"context"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// An extent that overflows int (here 5e307 mm at 1 mm, which int() turns
// into -9.2e18) is refused as too big before anything is allocated,
// instead of wrapping round to a negative or small frame.
func TestGridFrameRefusesOverflowingExtent(t *testing.T) {
	for _, in := range []gridInput{
		{sweep: &sweepMap{xMin: -2.7e307, xMax: 2.7e307}, yTop: 100, yBottom: 0, pitch: 1},
		{sweep: &sweepMap{xMin: 0, xMax: 100}, yTop: math.Inf(1), yBottom: 0, pitch: 1},
		{sweep: &sweepMap{xMin: 0, xMax: 100}, yTop: 100, yBottom: 0, pitch: 1e-300},
		{sweep: &sweepMap{xMin: 0, xMax: math.NaN()}, yTop: 100, yBottom: 0, pitch: 1},
	} {
		_, _, _, err := gridFrame(context.Background(), in)
		if err == nil || !strings.Contains(err.Error(), "more than 16777216 pixels") {
			t.Errorf("x %g..%g, y %g..%g, pitch %g: %v", in.sweep.xMin, in.sweep.xMax, in.yBottom, in.yTop, in.pitch, err)
		}
	}
}

// A detector that holds one value over the whole capture (all zero, or
// all NaN set to 0 by the reader) is refused with that diagnosis, not
// built into a frame "clipped on 100 % of lines".
func TestBuildRefusesFlatDetector(t *testing.T) {
	rig := baseRig()
	rec := rig.recording()
	clear(rec.Channels[0].Samples)
	rec.Warnings = []string{"96000 samples were NaN or infinite and were set to 0"}
	_, err := NewSession(rec).Build(context.Background(), rig.recipe(), nil)
	want := `the detector (channel 0 "detector") is 0 in all 96,000 samples: nothing to image`
	if err == nil || !strings.Contains(err.Error(), want) || !strings.Contains(err.Error(), "when read, 96000 samples were NaN") {
		t.Errorf("all-zero detector: %v\nwant %q and the reader's NaN count", err, want)
	}
	for i := range rec.Channels[0].Samples {
		rec.Channels[0].Samples[i] = 1 // stuck at a rail
	}
	rec.Warnings = nil
	if _, err := NewSession(rec).Build(context.Background(), rig.recipe(), nil); err == nil || !strings.Contains(err.Error(), "is 1 in all") {
		t.Errorf("stuck detector: %v", err)
	}
}

// stretchRE reads "a–b s" spans out of a warning.
var stretchRE = regexp.MustCompile(`(\d+\.\d+)–(\d+\.\d+) s`)

func spans(t *testing.T, w string) [][2]float64 {
	t.Helper()
	var out [][2]float64
	for _, m := range stretchRE.FindAllStringSubmatch(w, -1) {
		a, _ := strconv.ParseFloat(m[1], 64)
		b, _ := strconv.ParseFloat(m[2], 64)
		out = append(out, [2]float64{a, b})
	}
	return out
}

func warningWith(warns []string, part string) string {
	for _, w := range warns {
		if strings.Contains(w, part) {
			return w
		}
	}
	return ""
}

// A build says which seconds have no lines and where the detector stood
// still, and carries the reader's warnings into the report. The stretches
// are known by construction of the synthetic capture (48 kHz, 20 lines/s).
func TestBuildSaysWhatItCouldNotUse(t *testing.T) {
	rig := baseRig()
	clean := rig.recording()
	res, err := NewSession(clean).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, part := range []string{"lines cover only part", "without noise"} {
		if w := warningWith(res.Report.Warnings, part); w != "" {
			t.Errorf("clean capture warns: %s", w)
		}
	}

	rec := rig.recording()
	rate := rec.SampleRateHz
	idx, det := rec.Channels[1].Samples, rec.Channels[0].Samples
	clear(idx[:int(0.5*rate)]) // no index pulses in the first 0.5 s
	clear(idx[int(1.6*rate):]) // nor in the last 0.4 s
	clear(det[int(1.0*rate):int(1.4*rate)])
	rec.Warnings = []string{"12 samples were NaN or infinite and were set to 0"}
	res, err = NewSession(rec).Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	warns := res.Report.Warnings
	cover := warningWith(warns, "lines cover only part of the capture")
	got := spans(t, cover)
	// The first line's field starts after the first pulse past 0.5 s plus
	// the delay (under one 50 ms line period); the last one ends within a
	// period after the last pulse before 1.6 s.
	if len(got) != 2 || got[0][0] != 0 || got[0][1] < 0.5 || got[0][1] > 0.6 || got[1][1] != 2 || got[1][0] < 1.5 || got[1][0] > 1.65 {
		t.Errorf("coverage warning %q: spans %v, want 0–(0.5…0.6) s and (1.5…1.65)–2 s", cover, got)
	}
	flat := warningWith(warns, "the detector holds the value 0 without noise over 1.00–1.40 s")
	if flat == "" {
		t.Errorf("no warning about the dead stretch 1.0–1.4 s: %q", warns)
	}
	if warningWith(warns, "12 samples were NaN or infinite and were set to 0") == "" {
		t.Errorf("the reader's NaN count is not in the report: %q", warns)
	}
}

// Percentages print as percentages (the clipping warning said "1e+02 %").
func TestPercentText(t *testing.T) {
	for f, want := range map[float64]string{0: "0 %", 1: "100 %", 0.999: "100 %", 0.37: "37 %", 0.0025: "0.25 %", 0.05: "5 %", 0.0000001: "under 0.01 %"} {
		if got := percentText(f); got != want {
			t.Errorf("percentText(%g) = %q, want %q", f, got, want)
		}
	}
}

// A frame of a few pixels is warned about: 40 mm pixels over the 214 mm
// field (2·400·tan 15°) give ⌈214/40⌉ + 1 = 7 columns (the grid holds both
// edges), and the 60 mm the head travels 3 rows.
func TestBuildWarnsAboutTinyFrame(t *testing.T) {
	rig := baseRig()
	r := rig.recipe()
	r.Image.PitchMM = 40
	res, err := NewSession(rig.recording()).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if w := warningWith(res.Report.Warnings, "the frame is only 7 × 3 pixels"); w == "" {
		t.Errorf("no warning about a %d × %d frame: %q", res.Report.Columns, res.Report.Rows, res.Report.Warnings)
	}
}

// A split build of many strokes at a fine pitch is refused before any
// frame is gridded, with the sizes, instead of running out of memory: ten
// strokes (about 50 mm between the line centres) at 0.03 mm over the
// 214 mm field are ten frames of about 7,150 × 1,660 pixels, 118 M pixels
// in all, above the 64 M limit. At a coarser pitch the same capture builds
// its ten pages.
func TestSplitBuildRefusedAboveMemoryLimit(t *testing.T) {
	rig := baseRig()
	rig.y = func(t float64) float64 { // up and down every 0.2 s
		ph := math.Mod(t, 0.4) / 0.2
		if ph > 1 {
			ph = 2 - ph
		}
		return 10 + 60*ph
	}
	rec := rig.recording()
	r := rig.recipe()
	r.Rows.Strokes = "split"
	r.Image.PitchMM = 0.03
	_, err := NewSession(rec).Build(context.Background(), r, nil)
	if err == nil || !strings.Contains(err.Error(), "frames (rows.strokes split)") || !strings.Contains(err.Error(), "raise image.pitch_mm, or use rows.strokes merge or first") {
		t.Fatalf("fine split build: %v", err)
	}
	t.Log(err)
	r.Image.PitchMM = 2
	res, err := NewSession(rec).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Frames) < 9 {
		t.Errorf("%d frames from ten strokes", len(res.Frames))
	}
}
