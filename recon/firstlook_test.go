package recon

import (
	"context"
	"math"
	"slices"
	"strings"
	"testing"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// geometryOnly is what a builder knows without looking at the capture:
// the wheel, the field, the distance and the position calibration. The
// rest of the recipe is the default.
func geometryOnly(rig sampledata.Rig) (recipe.Recipe, Known) {
	r := recipe.Default()
	rr := rig.Recipe()
	r.Sweep.Apertures, r.Timing.PulsesPerRev = rr.Sweep.Apertures, rr.Timing.PulsesPerRev
	r.Sweep.FieldDeg, r.Sweep.DistanceMM = rr.Sweep.FieldDeg, rr.Sweep.DistanceMM
	r.Rows.Calibration = rr.Rows.Calibration
	return r, Known{"sweep.apertures": true, "timing.pulses_per_rev": true, "sweep.field_deg": true, "sweep.distance_mm": true, "rows.calibration": true}
}

// TestFirstLookSoundCard: on a sound-card capture (tone position,
// AC-coupled detector), a first look given only the geometry and the
// calibration reads the position as a tone, finds the coupling's corner
// (the simulator's 20 Hz, within 15 %), and gives an image that
// correlates with the simulator's truth raster as well as the rig's own
// recipe does (Pearson r ≥ 0.9, cross-checked with gonum's
// stat.Correlation), with every aperture's field start (the delay and
// the offsets it measured) within 0.05° of the truth.
func TestFirstLookSoundCard(t *testing.T) {
	rig := sampledata.SoundCardRig()
	rig.DurationS, rig.Motion.StrokeS = 12, 10
	ctx := context.Background()
	rec, truth, err := sampledata.Simulate(ctx, rig, "parcel", sampledata.SimOptions{Seed: sampledata.DemoSeed, TruthPitchMM: 1})
	if err != nil {
		t.Fatal(err)
	}
	start, known := geometryOnly(rig)
	look, err := FirstLook(ctx, NewSession(rec), start, known, nil)
	if err != nil {
		t.Fatal(err)
	}
	r := look.Recipe
	t.Logf("notes %q; warnings %q", look.Notes, look.Result.Report.Warnings)
	if r.Rows.Source != recipe.SourceTone {
		t.Fatalf("rows.source %q, want tone", r.Rows.Source)
	}
	if c := r.Signal.ACCornerHz; math.Abs(c-20) > 3 {
		t.Errorf("signal.ac_corner_hz %g, want the rig's 20 Hz within 15 %%", c)
	}
	// The offsets nobody stated are measured and written: each aperture's
	// field starts where the simulator's truth has it (delay_deg +
	// aperture_offsets_deg[k], from the rig's numbers) within 0.05°.
	sw := r.Sweep
	if len(sw.ApertureOffsetsDeg) != sw.Apertures || sw.DelayDeg == nil {
		t.Fatalf("offsets %v and delay %v for %d apertures", sw.ApertureOffsetsDeg, sw.DelayDeg, sw.Apertures)
	}
	worst := 0.0
	for k, o := range sw.ApertureOffsetsDeg {
		got, want := *sw.DelayDeg+o, truth.DelayDeg+truth.ApertureOffsetsDeg[k]
		worst = math.Max(worst, math.Abs(got-want))
		if math.Abs(got-want) > 0.05 {
			t.Errorf("aperture %d field starts %.3f° after its edge, truth %.3f°", k, got, want)
		}
	}
	t.Logf("worst field start %.4f° from the truth; corner %g Hz", worst, r.Signal.ACCornerHz)
	if c := truthCorrelation(t, look.Result.Frames[0], truth); c < 0.9 {
		t.Errorf("correlation with the truth %.3f, want ≥ 0.9", c)
	}
	// A corner the user stated is kept, and the note says the value the
	// drift fits.
	stated := look.Recipe
	stated.Signal.ACCornerHz = 0
	again, err := FirstLook(ctx, NewSession(rec), stated, KnowAll, nil)
	if err != nil {
		t.Fatal(err)
	}
	if again.Recipe.Signal.ACCornerHz != 0 || !slices.ContainsFunc(again.Notes, func(n string) bool { return strings.Contains(n, "set signal.ac_corner_hz to") }) {
		t.Errorf("stated corner 0: got %g Hz, notes %q", again.Recipe.Signal.ACCornerHz, again.Notes)
	}
}

// lookFromNothing simulates scene on rig and takes a first look at it told
// nothing (the default recipe, no key stated).
func lookFromNothing(t *testing.T, rig sampledata.Rig, scene string, seed uint64) (*Look, *sampledata.Truth) {
	t.Helper()
	rec, truth, err := sampledata.Simulate(context.Background(), rig, scene, sampledata.SimOptions{Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	look, err := FirstLook(context.Background(), NewSession(rec), recipe.Default(), Known{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	return look, truth
}

// TestFirstLookSoundCardFromNothing: told nothing, a first look on the
// sound-card capture finds the wheel's six apertures from the beam-on
// stretch (the simulator's rig: 6 apertures, a 30° field, so 50 % of
// each line), the coupling's corner on the lines of that count (the
// simulator's 20 Hz, within 15 %), and says nothing of a beam-on fraction
// that disagrees: the fraction is measured once the coupling is undone.
func TestFirstLookSoundCardFromNothing(t *testing.T) {
	rig := sampledata.SoundCardRig()
	rig.DurationS, rig.Motion.StrokeS = 8, 6
	look, _ := lookFromNothing(t, rig, "dot-grid", 3)
	r := look.Recipe
	if r.Sweep.Apertures != rig.Wheel.ApertureCount || r.Sweep.FieldDeg != 30 || math.Abs(r.Signal.ACCornerHz-20) > 3 {
		t.Errorf("%d apertures, %g° field, corner %g Hz; want the rig's %d, 30° and 20 Hz within 15 %%", r.Sweep.Apertures, r.Sweep.FieldDeg, r.Signal.ACCornerHz, rig.Wheel.ApertureCount)
	}
	for _, n := range append(look.Notes, look.Result.Report.Warnings...) {
		if strings.Contains(n, "the beam is on for") || strings.Contains(n, "beam-on stretch lasts") {
			t.Errorf("a note that the beam-on fraction disagrees: %q", n)
		}
	}
}

// TestFirstLookDCCapture: the demo rig (DC position, DC-coupled
// detector) keeps rows.source position and no AC corner, and a first look
// from nothing finds the wheel's six apertures.
func TestFirstLookDCCapture(t *testing.T) {
	rig := sampledata.DemoRig()
	rig.DurationS = 8
	look, truth := lookFromNothing(t, rig, "parcel", 12)
	r := look.Recipe
	t.Logf("notes %q", look.Notes)
	if r.Rows.Source != recipe.SourcePosition || r.Signal.ACCornerHz != 0 || r.Sweep.Apertures != rig.Wheel.ApertureCount {
		t.Errorf("source %q, corner %g Hz, apertures %d; want position, 0 and %d", r.Rows.Source, r.Signal.ACCornerHz, r.Sweep.Apertures, rig.Wheel.ApertureCount)
	}
	// The rev/min then matches the rig's own (within the 0.2 % of the
	// engine's accuracy target).
	if got, want := look.Result.Report.RPMMean, truth.RevPerMinMean; math.Abs(got-want) > 0.002*want {
		t.Errorf("rev/min %.2f, truth %.2f", got, want)
	}
}

// TestFirstLookDutyDisagrees: four apertures and a 45° field make the
// beam-on fraction 50 %; stated as four apertures and a 40° field (44 %),
// the first look says that they disagree and keeps both stated values.
func TestFirstLookDutyDisagrees(t *testing.T) {
	w := baseRig()
	w.fieldDeg, w.delayDeg = 45, 20
	w.noise = 0.002
	w.scene = func(x, y float64) float64 { return 0.3 + 0.2*math.Sin(x/9)*math.Cos(y/7) + 0.004*y }
	rec := w.recording()
	r := w.recipe()
	r.Sweep.FieldDeg = 40
	look, err := FirstLook(context.Background(), NewSession(rec), r, Known{"*": true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if look.Recipe.Sweep.Apertures != 4 || look.Recipe.Sweep.FieldDeg != 40 {
		t.Errorf("stated values changed: %d apertures, %g°", look.Recipe.Sweep.Apertures, look.Recipe.Sweep.FieldDeg)
	}
	if !slices.ContainsFunc(look.Notes, func(n string) bool { return strings.Contains(n, "the beam is on for 50 %") }) {
		t.Errorf("no note on the disagreement: %q", look.Notes)
	}
	// The right field passes silently.
	r.Sweep.FieldDeg = 45
	look, err = FirstLook(context.Background(), NewSession(rec), r, Known{"*": true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(look.Notes) != 0 {
		t.Errorf("notes for a recipe that fits: %q", look.Notes)
	}
}

// TestFirstLookNoBeamOff: a field as wide as the aperture spacing leaves
// the detector lit for the whole line; the first look says so instead of
// failing, and builds with no baseline.
func TestFirstLookNoBeamOff(t *testing.T) {
	w := baseRig()
	w.fieldDeg, w.delayDeg = 90, 0
	w.scene = func(x, y float64) float64 { return 0.3 + 0.2*math.Sin(x/9)*math.Cos(y/7) + 0.004*y }
	look, err := FirstLook(context.Background(), NewSession(w.recording()), w.recipe(), Known{"*": true, "sweep.delay_deg": false, "signal.baseline": false}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Contains(look.Notes, WarnNoBeamOff) || look.Recipe.Signal.Baseline != "none" {
		t.Errorf("notes %q, baseline %q", look.Notes, look.Recipe.Signal.Baseline)
	}
}
