package recon

import (
	"math"
	"testing"

	"spotloom/recon/recipe"
)

// TestEveryLawHasAnImplementation: every allowed sweep.law has one, with
// the field fraction of its closed form: field/spacing for a wheel
// (30° of 90°), asin(keep)/180° for a resonant mirror (keep 1: half of
// each period, one line each way), the table's span for a table; and an
// unknown law is an error naming the allowed ones.
func TestEveryLawHasAnImplementation(t *testing.T) {
	sw := recipe.Default().Sweep
	sw.Apertures, sw.FieldDeg, sw.SineKeep = 4, 30, 1
	sw.Table = [][2]float64{{0.1, -10}, {0.4, 10}}
	want := map[recipe.Law]struct {
		fraction float64
		lines    int
		beamOff  bool
	}{
		recipe.LawUniform: {30.0 / 90, 1, true},
		recipe.LawSine:    {0.5, 2, false},
		recipe.LawTable:   {0.3, 1, true},
	}
	for _, l := range recipe.Laws {
		law, err := lawOf(l)
		if err != nil {
			t.Fatalf("%s: %v", l, err)
		}
		w := want[l]
		if got := law.fieldFraction(sw); math.Abs(got-w.fraction) > 1e-12 || law.linesPerIndex() != w.lines || law.hasBeamOff() != w.beamOff {
			t.Errorf("%s: fraction %g, %d lines per index, beam-off %v; want %g, %d, %v", l, got, law.linesPerIndex(), law.hasBeamOff(), w.fraction, w.lines, w.beamOff)
		}
	}
	if _, err := lawOf("spiral"); err == nil {
		t.Error("no error for an unknown law")
	}
}
