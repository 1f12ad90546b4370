package main

import (
	"encoding/json"
	"fmt"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2/test"

	"spotloom/app/ui"
	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
)

// TestWindowMeasuresAsTheCommand: the window, building the simulator's
// edge card with its recipe, gives for each shape of its list the numbers
// "spotloom measure --json" gives on the frame "spotloom build" wrote from
// the same capture and recipe, key by key of the command's JSON.
func TestWindowMeasuresAsTheCommand(t *testing.T) {
	if testing.Short() {
		t.Skip("opens the window")
	}
	dir := t.TempDir()
	tiffPath := filepath.Join(dir, "card.tiff")
	truth := simulatedFrame(t, dir, "edge-card", tiffPath)
	r, err := recipe.Load(filepath.Join(dir, "edge-card.start.json"))
	if err != nil {
		t.Fatal(err)
	}
	a := test.NewTempApp(t)
	ws := ui.New(a, a.NewWindow("measure"), ui.Options{})
	ws.OpenFile(filepath.Join(dir, "edge-card.wav"), &r)
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatal(p)
	}
	left := truth.Features[0]
	x, y := left.XMM, left.YMM
	edge := [4]float64{x - 20, y - 20, x + 20, y + 20}
	dark := [4]float64{x - 30, y - 10, x - 22, y + 10}
	light := [4]float64{x + 22, y - 10, x + 30, y + 10}
	line := [4]float64{x - 25, y, x + 25, y + 3}
	rect := func(v [4]float64) *measure.Rect { return &measure.Rect{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]} }
	for _, s := range []measure.Shape{
		{Kind: measure.KindEdge, Rect: rect(edge)},
		{Kind: measure.KindRegion, Rect: rect(dark)},
		{Kind: measure.KindRegion, Rect: rect(light), CNRWith: "R1"},
		{Kind: measure.KindProfile, Line: &measure.Line{X0: line[0], Y0: line[1], X1: line[2], Y1: line[3]}, BandMM: 2},
	} {
		ws.AddMeasurement(s)
	}
	taken := ws.Measured()
	if len(taken) != 4 {
		t.Fatalf("the window lists %d measurements", len(taken))
	}
	for i, args := range [][]string{
		{"--edge", fourExact(edge)},
		{"--roi", fourExact(dark)},
		{"--roi", fourExact(light), "--roi2", fourExact(dark)},
		{"--profile", fourExact(line), "--band", "2"},
	} {
		if taken[i].Err != nil {
			t.Fatalf("%s: %v", taken[i].Shape.Label, taken[i].Err)
		}
		cmd := measureJSON(t, append([]string{tiffPath}, args...)...)
		win := taken[i].Results
		for _, pair := range [][2]any{{win.Edge, cmd.Edge}, {win.ROI, cmd.ROI}, {win.CNR, cmd.CNR}, {win.Profile, cmd.Profile}, {win.DistanceMM, cmd.DistanceMM}} {
			w, _ := json.Marshal(pair[0])
			c, _ := json.Marshal(pair[1])
			if string(w) != string(c) {
				t.Errorf("%s: the window gives %s, spotloom measure %s", taken[i].Shape.Label, w, c)
			}
		}
	}
	if taken[0].Results.Edge == nil || taken[0].Results.Edge.MTF50 == nil {
		t.Fatal("no MTF50 for the edge card's edge")
	}

	// The window's list, in a sidecar as its Export… writes it, is what
	// "spotloom report --measure" takes: the sheet prints the window's
	// MTF50 and CNR (read back with poppler's pdftotext).
	if _, err := exec.LookPath("pdftotext"); err != nil {
		t.Skip("pdftotext is not installed (Debian poppler-utils; .ci/run installs it)")
	}
	var shapes []measure.Shape
	for _, tk := range taken {
		shapes = append(shapes, tk.Shape)
	}
	shown := filepath.Join(dir, "shown.tiff")
	if err := export.Write(shown, []*recon.Frame{ws.ShownFrame()}, export.Options{Raw: true, Measurements: shapes}); err != nil {
		t.Fatal(err)
	}
	// "spotloom measure --measure" takes the same list from the sidecar
	// and gives the window's numbers for every shape.
	code, stdout, stderr := runCmd("measure", shown, "--measure", export.SidecarPath(shown), "--json")
	if code != 0 {
		t.Fatalf("measure --measure: exit %d: %s", code, stderr)
	}
	var listedOut struct {
		Measurements []struct {
			Shape   measure.Shape   `json:"shape"`
			Results measure.Results `json:"results"`
		} `json:"measurements"`
	}
	if err := json.Unmarshal([]byte(stdout), &listedOut); err != nil || len(listedOut.Measurements) != len(taken) {
		t.Fatalf("measure --measure --json: %v\n%s", err, stdout)
	}
	for i, m := range listedOut.Measurements {
		win := taken[i].Results
		w, _ := json.Marshal([]any{win.Edge, win.ROI, win.ROI2, win.CNR, win.Profile, win.DistanceMM})
		c, _ := json.Marshal([]any{m.Results.Edge, m.Results.ROI, m.Results.ROI2, m.Results.CNR, m.Results.Profile, m.Results.DistanceMM})
		if m.Shape.Label != taken[i].Shape.Label || string(w) != string(c) {
			t.Errorf("%s: the window gives %s, measure --measure %s: %s", taken[i].Shape.Label, w, m.Shape.Label, c)
		}
	}
	if code, _, _ := runCmd("measure", shown, "--measure", export.SidecarPath(shown), "--edge", fourExact(edge)); code != 2 {
		t.Errorf("--measure with --edge: exit %d, want 2 (usage)", code)
	}

	sheet := filepath.Join(dir, "shown.pdf")
	if code, _, stderr := runCmd("report", filepath.Join(dir, "edge-card.wav"), "--recipe", export.SidecarPath(shown), "--out", sheet, "--measure", export.SidecarPath(shown)); code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	out, err := exec.Command("pdftotext", sheet, "-").CombinedOutput()
	if err != nil {
		t.Fatalf("pdftotext: %v: %s", err, out)
	}
	for _, want := range []string{fmt.Sprintf("MTF50 %.4g lp/mm", *taken[0].Results.Edge.MTF50), fmt.Sprintf("CNR against R1: %.4g", *taken[2].Results.CNR), "E1", "P1"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("the sheet from the window's sidecar lacks %q:\n%s", want, out)
		}
	}
}

// fourExact writes X0,Y0,X1,Y1 with every digit, so the command reads the
// very numbers the window holds.
func fourExact(v [4]float64) string {
	parts := make([]string, 4)
	for i, x := range v {
		parts[i] = strconv.FormatFloat(x, 'g', -1, 64)
	}
	return strings.Join(parts, ",")
}
