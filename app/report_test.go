package main

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// edgeCardFrame simulates the edge card and builds it to a float TIFF
// (skipping without pdftotext, which the sheet tests read with); it
// returns the folder, the TIFF and a 40 mm square about the card's left
// edge (sampledata truth).
func edgeCardFrame(t *testing.T) (dir, tiffPath string, edge [4]float64) {
	t.Helper()
	if _, err := exec.LookPath("pdftotext"); err != nil {
		t.Skip("pdftotext is not installed (Debian poppler-utils; .ci/run installs it)")
	}
	dir = t.TempDir()
	tiffPath = filepath.Join(dir, "card.tiff")
	truth := simulatedFrame(t, dir, "edge-card", tiffPath)
	left := truth.Features[0]
	return dir, tiffPath, [4]float64{left.XMM - 20, left.YMM - 20, left.XMM + 20, left.YMM + 20}
}

// fourText writes X0,Y0,X1,Y1 as the measure command takes them.
func fourText(v [4]float64) string {
	return strings.Join([]string{fmtG(v[0]), fmtG(v[1]), fmtG(v[2]), fmtG(v[3])}, ",")
}

func TestReportSheetFromMeasurements(t *testing.T) {
	// The sheet re-measures the request of "spotloom measure --json" on
	// the rebuilt frame, so it prints the measure command's numbers; its
	// text is read back with poppler's pdftotext (independent of the
	// writer).
	dir, tiffPath, edge := edgeCardFrame(t)
	rect := fourText(edge)
	code, stdout, stderr := runCmd("measure", tiffPath, "--edge", rect, "--json")
	if code != 0 {
		t.Fatalf("measure: exit %d: %s", code, stderr)
	}
	mPath := filepath.Join(dir, "m.json")
	os.WriteFile(mPath, []byte(stdout), 0o644)
	m := measureJSON(t, tiffPath, "--edge", rect)

	sheet := filepath.Join(dir, "card.pdf")
	wav, start := filepath.Join(dir, "edge-card.wav"), filepath.Join(dir, "edge-card.start.json")
	if code, _, stderr := runCmd("report", wav, "--recipe", start, "--out", sheet, "--measure", mPath); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	out, err := exec.Command("pdftotext", sheet, "-").CombinedOutput()
	if err != nil {
		t.Fatalf("pdftotext: %v: %s", err, out)
	}
	want := fmt.Sprintf("MTF50 %.4g lp/mm", *m.Edge.MTF50)
	if !strings.Contains(string(out), want) || !strings.Contains(string(out), "edge-card.wav") {
		t.Errorf("the sheet's text lacks %q:\n%s", want, out)
	}
	// Never replaced without --force; a name that is not .pdf is bad usage.
	if code, _, stderr := runCmd("report", wav, "--recipe", start, "--out", sheet); code != 1 || !strings.Contains(stderr, "--force") {
		t.Errorf("second sheet: exit %d, %q", code, stderr)
	}
	if code, _, _ := runCmd("report", wav, "--recipe", start, "--out", filepath.Join(dir, "x.png")); code != 2 {
		t.Errorf("--out x.png: exit %d, want 2", code)
	}
}

func TestReportSheetFromAList(t *testing.T) {
	// --measure takes a measurement list too (as the window writes it into
	// a sidecar): the sheet gives each shape its label and the measure
	// command's numbers for the same rectangle, and the length of a
	// distance line (here a 3-4-5 triangle of 30, 40 and 50 mm).
	dir, tiffPath, edge := edgeCardFrame(t)
	x0, y0, x1, y1 := edge[0], edge[1], edge[2], edge[3]
	m := measureJSON(t, tiffPath, "--edge", fourText(edge))
	list := fmt.Sprintf(`{"measurements": [
		{"kind": "edge", "label": "E1", "rect": {"x0_mm": %s, "y0_mm": %s, "x1_mm": %s, "y1_mm": %s}},
		{"kind": "distance", "line": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 30, "y1_mm": 40}}]}`, fmtG(x0), fmtG(y0), fmtG(x1), fmtG(y1))
	listPath := filepath.Join(dir, "list.json")
	if err := os.WriteFile(listPath, []byte(list), 0o644); err != nil {
		t.Fatal(err)
	}
	sheet := filepath.Join(dir, "card.pdf")
	wav, start := filepath.Join(dir, "edge-card.wav"), filepath.Join(dir, "edge-card.start.json")
	if code, _, stderr := runCmd("report", wav, "--recipe", start, "--out", sheet, "--measure", listPath); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	out, err := exec.Command("pdftotext", sheet, "-").CombinedOutput()
	if err != nil {
		t.Fatalf("pdftotext: %v: %s", err, out)
	}
	for _, want := range []string{fmt.Sprintf("MTF50 %.4g lp/mm", *m.Edge.MTF50), "E1", "D1", "Length 50 mm"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("the sheet's text lacks %q:\n%s", want, out)
		}
	}
	bad := filepath.Join(dir, "bad.json")
	os.WriteFile(bad, []byte(`{"measurements": [{"kind": "roi"}]}`), 0o644)
	if code, _, stderr := runCmd("report", wav, "--recipe", start, "--out", filepath.Join(dir, "b.pdf"), "--measure", bad); code != 1 || !strings.Contains(stderr, `needs a "rect"`) {
		t.Errorf("a roi without a rectangle: exit %d, %q", code, stderr)
	}
}
