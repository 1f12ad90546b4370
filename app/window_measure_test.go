package main

import (
	"encoding/json"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2/test"

	"spotloom/app/ui"
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
		t.Error("no MTF50 for the edge card's edge")
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
