package recon

import (
	"context"
	"maps"
	"math"
	"strings"
	"testing"

	"spotloom/recon/recipe"
)

// Each control re-runs only the stages that depend on it.
func TestStageCaching(t *testing.T) {
	ctx := context.Background()
	rig := baseRig()
	s := NewSession(rig.recording())
	r := rig.recipe()
	first, err := s.Build(ctx, r, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]int{"timing": 1, "rows": 1, "delay": 1, "placement": 1, "gridding": 1}
	check := func(step string) {
		t.Helper()
		if !maps.Equal(s.runs, want) {
			t.Errorf("after %s: stage runs %v, want %v", step, s.runs, want)
		}
	}
	check("the first build")

	if _, err := s.Build(ctx, r, nil); err != nil {
		t.Fatal(err)
	}
	check("the same recipe again")

	// The resolved recipe (threshold, hysteresis, delay written in) reuses
	// every stage.
	if _, err := s.Build(ctx, first.Recipe, nil); err != nil {
		t.Fatal(err)
	}
	check("the resolved recipe")

	r.Sweep.DelayDeg = recipe.Float(first.Report.DelayDeg + 0.2)
	if _, err := s.Build(ctx, r, nil); err != nil {
		t.Fatal(err)
	}
	want["placement"]++
	want["gridding"]++
	check("a delay change")

	r.Image.PitchMM = 2
	if _, err := s.Build(ctx, r, nil); err != nil {
		t.Fatal(err)
	}
	want["gridding"]++
	check("a pitch change")

	r.Signal.Invert = true
	if _, err := s.Build(ctx, r, nil); err != nil {
		t.Fatal(err)
	}
	want["gridding"]++
	check("invert")

	r.Timing.Hysteresis = recipe.Float(0.5)
	if _, err := s.Build(ctx, r, nil); err != nil {
		t.Fatal(err)
	}
	want["timing"]++
	want["placement"]++
	want["gridding"]++
	check("a hysteresis change")
}

// A result's frames belong to the caller: editing them does not reach the
// session's cache.
func TestResultIsACopy(t *testing.T) {
	rig := baseRig()
	s := NewSession(rig.recording())
	a, err := s.Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	a.Frames[0].Pix[0] = 12345
	b, err := s.Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if b.Frames[0].Pix[0] == 12345 {
		t.Error("the cached frame was changed through a result")
	}
}

// Progress names the stages in order, with fractions from 0 to 1.
func TestProgress(t *testing.T) {
	rig := baseRig()
	var stages []string
	last := map[string]float64{}
	_, err := NewSession(rig.recording()).Build(context.Background(), rig.recipe(), func(stage string, f float64) {
		if f < 0 || f > 1 || f < last[stage] {
			t.Errorf("%s: fraction %g after %g", stage, f, last[stage])
		}
		last[stage] = f
		if len(stages) == 0 || stages[len(stages)-1] != stage {
			stages = append(stages, stage)
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"timing", "rows", "delay", "placement", "gridding"}
	if len(stages) != len(want) {
		t.Fatalf("stages %v, want %v", stages, want)
	}
	for i := range want {
		if stages[i] != want[i] || last[want[i]] != 1 {
			t.Errorf("stages %v (last fractions %v), want %v each ending at 1", stages, last, want)
			break
		}
	}
}

// Null channels are taken from the role guess: the simulator's channel
// order (detector, index, position) is found.
func TestAutomaticChannels(t *testing.T) {
	rig := baseRig()
	r := rig.recipe()
	r.Channels = recipe.Channels{}
	s := NewSession(rig.recording())
	got, err := s.Resolve(context.Background(), r)
	if err != nil {
		t.Fatal(err)
	}
	if got.Channels.Detector != "0" || got.Channels.Index != "1" || got.Channels.Position != "2" {
		t.Errorf("channels %+v, want detector 0, index 1, position 2", got.Channels)
	}
}

// A scene that sends nothing back shows no detail, not even the field's
// edges, to measure aperture offsets from: the error says so instead of
// returning noise.
func TestOffsetsNeedDetail(t *testing.T) {
	rig := baseRig()
	rig.scene = func(x, y float64) float64 { return 0 }
	r := rig.recipe()
	_, err := EstimateApertureOffsets(context.Background(), NewSession(rig.recording()), r)
	if err == nil || !strings.Contains(err.Error(), "no beam-on stretch") {
		t.Errorf("dark scene, automatic delay: %v", err)
	}
	r.Sweep.DelayDeg = recipe.Float(rig.delayDeg)
	_, err = EstimateApertureOffsets(context.Background(), NewSession(rig.recording()), r)
	if err == nil || !strings.Contains(err.Error(), "too little detail") {
		t.Errorf("dark scene: %v", err)
	}
	// The dot grid has detail: offsets come back, one per aperture,
	// near the rig's (zero) offsets.
	off, err := EstimateApertureOffsets(context.Background(), NewSession(baseRig().recording()), baseRig().recipe())
	if err != nil {
		t.Fatal(err)
	}
	for k, o := range off {
		if math.Abs(o) > 0.05 {
			t.Errorf("aperture %d offset %.3f°, the rig has none", k, o)
		}
	}
}
