package main

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2/test"

	"spotloom/app/ui"
	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// writeRigCapture simulates a parcel capture of rig as NAME.wav in dir.
func writeRigCapture(t *testing.T, dir, name string, rig sampledata.Rig) string {
	t.Helper()
	rec, _, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, name+".wav")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := capture.WriteWAV(f, rec, "int16"); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestCommandAndWindowAgree: "spotloom recipe FILE" and the window's
// first look at FILE give the identical resolved recipe (pitch included),
// for a DC-level capture and a sound-card capture.
func TestCommandAndWindowAgree(t *testing.T) {
	if testing.Short() {
		t.Skip("opens the window")
	}
	dir := t.TempDir()
	dc := sampledata.DemoRig()
	dc.DurationS = 6
	for name, rig := range map[string]sampledata.Rig{"dc": dc, "sound-card": sampledata.SoundCardRig()} {
		path := writeRigCapture(t, dir, name, rig)
		var out, errOut bytes.Buffer
		if code := run([]string{"recipe", path}, &out, &errOut); code != 0 {
			t.Fatalf("%s: recipe exit %d: %s", name, code, errOut.String())
		}
		a := test.NewTempApp(t)
		ws := ui.New(a, a.NewWindow("first look"), ui.Options{})
		ws.OpenFile(path, nil)
		ws.Wait()
		got, ok := ws.ResolvedRecipe()
		if !ok {
			t.Fatalf("%s: the window shows nothing: %s", name, ws.Problem())
		}
		if w, c := string(got.JSON()), out.String(); w != c {
			t.Errorf("%s: the window's first look differs from spotloom recipe's:\nwindow  %s\ncommand %s", name, w, c)
		}
	}
}

// TestRecipeSoundCardCapture: given only the geometry (flags) and the
// calibration (a partial recipe), "spotloom recipe" on a sound-card
// capture reads the position as a tone and undoes the AC coupling, saying
// both on stderr; the frame then has the rig's travel in rows (about
// 400 mm at the automatic pitch), not a few pixels.
func TestRecipeSoundCardCapture(t *testing.T) {
	dir := t.TempDir()
	rig := sampledata.SoundCardRig()
	path := writeRigCapture(t, dir, "card", rig)
	partial := map[string]any{
		"format": recipe.RecipeFormat,
		"rows":   map[string]any{"calibration": rig.Recipe().Rows.Calibration},
	}
	data, err := json.Marshal(partial)
	if err != nil {
		t.Fatal(err)
	}
	from := filepath.Join(dir, "known.json")
	if err := os.WriteFile(from, data, 0o644); err != nil {
		t.Fatal(err)
	}
	var out, errOut bytes.Buffer
	if code := run([]string{"recipe", path, "--from", from, "--apertures", "6", "--field", "30", "--distance", "500"}, &out, &errOut); code != 0 {
		t.Fatalf("recipe exit %d: %s", code, errOut.String())
	}
	r, err := recipe.Parse(out.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	if r.Rows.Source != recipe.SourceTone || r.Signal.ACCornerHz < 17 || r.Signal.ACCornerHz > 23 {
		t.Errorf("source %q, corner %g Hz; want tone and about the rig's 20 Hz", r.Rows.Source, r.Signal.ACCornerHz)
	}
	if !strings.Contains(errOut.String(), "tone") || !strings.Contains(errOut.String(), "AC-coupled") {
		t.Errorf("stderr does not say what was found: %q", errOut.String())
	}
	if r.Rows.Calibration[0] != rig.Recipe().Rows.Calibration[0] {
		t.Errorf("the stated calibration was changed: %v", r.Rows.Calibration)
	}
	// The recipe written builds the rig's frame: the field's width is
	// 2·D·tan(field/2) = 2·500·tan 15° = 268 mm (closed form), the rows
	// span the head's travel (the rig's 400 mm stroke), each within a
	// tenth (the spot's blur and the turning ends).
	rec, err := capture.Open(path, capture.Options{})
	if err != nil {
		t.Fatal(err)
	}
	res, err := recon.NewSession(rec).Build(context.Background(), r, nil)
	if err != nil {
		t.Fatal(err)
	}
	f := res.Frames[0]
	width, height := float64(f.Width)*f.PitchXMM, float64(f.Height)*f.PitchYMM
	wantW := 2 * 500 * math.Tan(15*math.Pi/180)
	t.Logf("frame %.0f × %.0f mm at %g mm pitch", width, height, f.PitchXMM)
	if math.Abs(width-wantW) > 0.1*wantW || math.Abs(height-rig.Motion.TravelMM) > 0.1*rig.Motion.TravelMM {
		t.Errorf("frame %d × %d px at %g mm: %.0f × %.0f mm, want about %.0f × %.0f mm", f.Width, f.Height, f.PitchXMM, width, height, wantW, rig.Motion.TravelMM)
	}
}

// TestRecipeWarnsFieldApertureMismatch: the demo wheel's beam is on for
// half of each line; "--apertures 4 --field 40" makes 44 %, which the
// first look says (and keeps both values as stated).
func TestRecipeWarnsFieldApertureMismatch(t *testing.T) {
	dir := t.TempDir()
	rig := sampledata.DemoRig()
	rig.DurationS = 5
	rig.Wheel.ApertureCount, rig.Index.PulsesPerRev = 4, 4
	rig.Wheel.ApertureErrorsDeg = nil
	rig.FieldDeg = 45
	path := writeRigCapture(t, dir, "half", rig)
	var out, errOut bytes.Buffer
	if code := run([]string{"recipe", path, "--apertures", "4", "--field", "40"}, &out, &errOut); code != 0 {
		t.Fatalf("recipe exit %d: %s", code, errOut.String())
	}
	if !strings.Contains(errOut.String(), "4 apertures and a 40° field make 44 %") {
		t.Errorf("no warning about the mismatch: %q", errOut.String())
	}
}
