package main

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"spotloom/recon/export"
	"spotloom/recon/measure"
	"spotloom/sampledata"
)

// simulatedFrame simulates scene, builds it with the simulator's recipe to
// out (a .tiff is 32-bit float, a .png 16-bit) and returns the truth.
func simulatedFrame(t *testing.T, dir, scene string, outs ...string) sampledata.Truth {
	t.Helper()
	wav := filepath.Join(dir, scene+".wav")
	truthPath := filepath.Join(dir, scene+".truth.json")
	start := filepath.Join(dir, scene+".start.json")
	if code, _, stderr := runCmd("simulate", "--scene", scene, "--out", wav, "--truth", truthPath, "--recipe", start); code != 0 {
		t.Fatalf("simulate: exit %d: %s", code, stderr)
	}
	for _, out := range outs {
		if code, _, stderr := runCmd("build", wav, "--recipe", start, "--out", out); code != 0 {
			t.Fatalf("build %s: exit %d: %s", out, code, stderr)
		}
	}
	return readTruth(t, truthPath)
}

func measureJSON(t *testing.T, args ...string) measure.Results {
	t.Helper()
	code, stdout, stderr := runCmd(append([]string{"measure"}, append(args, "--json")...)...)
	if code != 0 {
		t.Fatalf("measure %q: exit %d: %s", args, code, stderr)
	}
	var out measure.Results
	if err := json.Unmarshal([]byte(stdout), &out); err != nil {
		t.Fatalf("%v\n%s", err, stdout)
	}
	return out
}

func TestMeasureDotGridFrame(t *testing.T) {
	// The simulator's dot grid (25 mm spacing, sampledata truth) built to
	// a float TIFF: the fit's scale is 1 within the position sensor's bow
	// (the demo rig's is 1 % of its travel), and the command's numbers are
	// the measure package's on the frame export.Read gives.
	dir := t.TempDir()
	tiffPath := filepath.Join(dir, "grid.tiff")
	pngPath := filepath.Join(dir, "grid16.png")
	truth := simulatedFrame(t, dir, "dot-grid", tiffPath, pngPath)
	// A patch of the sheet between four dots, and the hole at the scene's
	// centre.
	cx, cy := truth.SceneCentreMM[0], truth.SceneCentreMM[1]
	sheet := measure.Rect{X0: cx + 7, Y0: cy + 7, X1: cx + 18, Y1: cy + 18}
	hole := strings.Join([]string{fmtG(cx - 2), fmtG(cy - 2), fmtG(cx + 2), fmtG(cy + 2)}, ",")
	sheetFlag := strings.Join([]string{fmtG(sheet.X0), fmtG(sheet.Y0), fmtG(sheet.X1), fmtG(sheet.Y1)}, ",")
	out := measureJSON(t, tiffPath, "--dots", "25", "--roi", sheetFlag, "--roi2", hole)
	if out.Dots == nil || out.Dots.Found < len(truth.Dots)*8/10 {
		t.Fatalf("dots %+v, truth %d dots", out.Dots, len(truth.Dots))
	}
	if math.Abs(out.Dots.ScaleX-1) > 0.01 || math.Abs(out.Dots.ScaleY-1) > 0.01 || math.Abs(out.Dots.RotationDeg) > 0.3 {
		t.Errorf("scale %.4f × %.4f, rotation %.3f°; the simulated grid is true", out.Dots.ScaleX, out.Dots.ScaleY, out.Dots.RotationDeg)
	}
	if out.Dots.Correction == nil || len(out.Dots.Correction.Steps) == 0 {
		t.Error("no correction offered")
	}
	l, err := export.Read(tiffPath)
	if err != nil {
		t.Fatal(err)
	}
	st, err := measure.Region(l.Frames[0], sheet)
	if err != nil {
		t.Fatal(err)
	}
	if out.ROI.Mean != st.Mean || out.ROI.Pixels != st.Pixels || out.CNR == nil || !(*out.CNR > 3) {
		t.Errorf("command roi %+v cnr %v, package %+v", out.ROI, out.CNR, st)
	}
	if out.OriginXMM != l.Frames[0].OriginXMM || out.PitchXMM != l.Frames[0].PitchXMM {
		t.Errorf("origin %g, pitch %g; frame %g, %g", out.OriginXMM, out.PitchXMM, l.Frames[0].OriginXMM, l.Frames[0].PitchXMM)
	}
	// The same region of the PNG export holds the same pixels, in tone
	// units.
	p := measureJSON(t, pngPath, "--roi", sheetFlag)
	if p.ROI.Pixels != out.ROI.Pixels || p.OriginXMM != out.OriginXMM || p.OriginYMM != out.OriginYMM {
		t.Errorf("PNG: %d pixels at origin %g, %g; TIFF %d at %g, %g", p.ROI.Pixels, p.OriginXMM, p.OriginYMM, out.ROI.Pixels, out.OriginXMM, out.OriginYMM)
	}
	if !strings.Contains(strings.Join(p.Notes, " "), "tone-mapped") {
		t.Errorf("PNG notes %q say nothing of tone-mapped values", p.Notes)
	}
}

func TestMeasureEdgeCardFrame(t *testing.T) {
	// The edge card's left edge is turned to 95° (sampledata truth); its
	// MTF50 lies near the demo spot's (5 mm FWHM: exp(−2π²σ²f²) = 0.5 at
	// 0.094 lp/mm), lower for the rig's afterglow, low-pass and aperture
	// errors.
	dir := t.TempDir()
	tiffPath := filepath.Join(dir, "card.tiff")
	truth := simulatedFrame(t, dir, "edge-card", tiffPath)
	var left sampledata.Feature
	for _, f := range truth.Features {
		if f.Name == "left edge" {
			left = f
		}
	}
	rect := strings.Join([]string{fmtG(left.XMM - 20), fmtG(left.YMM - 20), fmtG(left.XMM + 20), fmtG(left.YMM + 20)}, ",")
	out := measureJSON(t, tiffPath, "--edge", rect, "--profile", rect, "--band", "4")
	if out.Edge == nil || out.Edge.MTF50 == nil {
		t.Fatalf("edge %+v", out.Edge)
	}
	if math.Abs(out.Edge.Angle-left.AngleDeg) > 0.2 || out.Edge.Across != "x" {
		t.Errorf("angle %.3f° resolving %s, truth %.3f° (x)", out.Edge.Angle, out.Edge.Across, left.AngleDeg)
	}
	if *out.Edge.MTF50 < 0.06 || *out.Edge.MTF50 > 0.095 {
		t.Errorf("MTF50 %.4f lp/mm", *out.Edge.MTF50)
	}
	if len(out.Edge.MTF) < 10 || out.Edge.MTF[0] != [2]float64{0, 1} {
		t.Errorf("MTF curve starts %v", out.Edge.MTF[:min(2, len(out.Edge.MTF))])
	}
	if want := math.Hypot(40, 40); out.DistanceMM == nil || math.Abs(*out.DistanceMM-want) > 1e-9 || len(out.Profile) < 50 {
		t.Errorf("distance %v, want %g; %d profile points", out.DistanceMM, want, len(out.Profile))
	}
}

func fmtG(v float64) string { return strconv.FormatFloat(v, 'f', 3, 64) }

func TestMeasureErrors(t *testing.T) {
	dir := t.TempDir()
	tiffPath := filepath.Join(dir, "grid.tiff")
	simulatedFrame(t, dir, "dot-grid", tiffPath)
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{tiffPath}, 2, "nothing to measure"},
		{[]string{tiffPath, "--roi", "1,2,3"}, 2, "X0,Y0,X1,Y1"},
		{[]string{tiffPath, "--roi2", "1,2,3,4"}, 2, "needs --roi"},
		{[]string{tiffPath, "--roi", "5000,5000,5100,5100"}, 1, "outside the frame"},
		{[]string{filepath.Join(dir, "none.tiff"), "--roi", "0,0,1,1"}, 1, "none.tiff"},
		{[]string{filepath.Join(dir, "dot-grid.start.json"), "--roi", "0,0,1,1"}, 1, "neither a TIFF"},
	} {
		code, _, stderr := runCmd(append([]string{"measure"}, c.args...)...)
		if code != c.code || !strings.Contains(stderr, c.want) || strings.Count(strings.TrimSpace(stderr), "\n") > 0 {
			t.Errorf("measure %q: exit %d, stderr %q; want exit %d naming %q on one line", c.args, code, stderr, c.code, c.want)
		}
	}
}
