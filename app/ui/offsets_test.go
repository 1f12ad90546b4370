package ui

import (
	"context"
	"fmt"
	"math"
	"testing"

	"spotloom/sampledata"
)

// TestNullOffsetsShowTheBuildsValues: with sweep.aperture_offsets_deg
// null the offset controls show the offsets the last build estimated,
// marked as estimated, while the recipe keeps its null; moving one sets
// them all by hand from the values shown. The estimate is checked against
// the demo's ground truth (sampledata.Simulate's record of the wheel's
// aperture errors): with the mean removed, within 0.05°, the tolerance of
// recon's own truth tests. With the offsets set (the demo's zeros) the
// note is hidden and leaves no gap.
func TestNullOffsetsShowTheBuildsValues(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	if ws.controls.offsetNote.Visible() {
		t.Errorf("offsets set in the recipe show the note %q", ws.controls.offsetNote.Text)
	}
	r := sampledata.DemoRecipe()
	r.Sweep.ApertureOffsetsDeg = nil
	ws.applyRecipe(r, "")
	ws.Wait()
	if ws.Problem() != "" {
		t.Fatal(ws.Problem())
	}
	if ws.cur.Recipe.Sweep.ApertureOffsetsDeg != nil {
		t.Errorf("the recipe's offsets became %v after a build, want them null", ws.cur.Recipe.Sweep.ApertureOffsetsDeg)
	}
	est := ws.result.Recipe.Sweep.ApertureOffsetsDeg
	if len(ws.controls.offsets) != len(est) || len(est) != r.Sweep.Apertures {
		t.Fatalf("%d offset controls for %d estimated offsets on %d apertures", len(ws.controls.offsets), len(est), r.Sweep.Apertures)
	}
	if !ws.controls.offsetNote.Visible() || ws.controls.offsetNote.Text == "" {
		t.Error("estimated offsets are not marked as estimated")
	}
	_, truth, err := sampledata.Simulate(context.Background(), sampledata.DemoRig(), "parcel", sampledata.SimOptions{Seed: sampledata.DemoSeed})
	if err != nil {
		t.Fatal(err)
	}
	mean := func(v []float64) (m float64) {
		for _, x := range v {
			m += x / float64(len(v))
		}
		return m
	}
	nonzero := false
	for k, c := range ws.controls.offsets {
		if c.value != est[k] || c.entry.Text != fmt.Sprintf("%.3f", est[k]) {
			t.Errorf("aperture %d shows %g (%q), the build estimated %g", k, c.value, c.entry.Text, est[k])
		}
		want := truth.ApertureOffsetsDeg[k] - mean(truth.ApertureOffsetsDeg)
		if got := est[k] - mean(est); math.Abs(got-want) > 0.05 {
			t.Errorf("aperture %d: estimated %.3f° (mean removed), truth %.3f°", k, got, want)
		}
		nonzero = nonzero || c.entry.Text != "0.000"
	}
	if !nonzero {
		t.Error("every estimated offset shows 0.000")
	}

	// Moving one sets them all: the others keep the values shown.
	ws.controls.offsets[2].typed("0.3")
	ws.Wait()
	got := ws.cur.Recipe.Sweep.ApertureOffsetsDeg
	if len(got) != len(est) {
		t.Fatalf("after moving one the recipe holds offsets %v", got)
	}
	for k := range got {
		want := est[k]
		if k == 2 {
			want = 0.3
		}
		if got[k] != want {
			t.Errorf("aperture %d set to %g, want %g", k, got[k], want)
		}
	}
	if ws.controls.offsetNote.Visible() {
		t.Errorf("offsets set by hand still show %q", ws.controls.offsetNote.Text)
	}
}
