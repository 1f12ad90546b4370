package recon

import (
	"context"
	"math"
	"reflect"
	"testing"

	"spotloom/recon/recipe"
)

// TestReportDependsOnlyOnCaptureAndRecipe: every recipe of a set (each
// law, invert off and on, strokes split, the wheel laws also with their
// offsets and afterglow automatic) gives the same report, lines and
// frames, bit for bit, in a fresh session and in one session that built
// all the others first, in either order. The capture's detector is
// negative-going, so the delay stage has a finding (the polarity) that a
// stage left on the session would carry into the next build.
func TestReportDependsOnlyOnCaptureAndRecipe(t *testing.T) {
	rig := baseRig()
	dots := dotScene(20, 3)
	rig.scene = func(x, y float64) float64 { return -dots(x, y) }
	rig.y = func(t float64) float64 { return 10 + 60*math.Abs(t-1) } // a pass down and back up
	rec := rig.recording()

	uniform := rig.recipe()
	table := rig.recipe()
	table.Sweep.Law = recipe.LawTable
	for i := 0; i <= 30; i++ {
		theta := -rig.fieldDeg/2 + rig.fieldDeg*float64(i)/30
		f := (theta + rig.fieldDeg/2 + rig.delayDeg) / 90
		table.Sweep.Table = append(table.Sweep.Table, [2]float64{f, rig.distanceMM * math.Tan(theta*math.Pi/180)})
	}
	sine := rig.recipe()
	sine.Sweep.Law = recipe.LawSine
	sine.Signal.Baseline = "none"
	// The wheel laws also leave the aperture offsets and the afterglow
	// null, so the stages that estimate them (and the afterglow's own
	// offset estimate on the recorded detector) are shared too.
	automatic := func(r recipe.Recipe) recipe.Recipe {
		r = r.Clone()
		r.Sweep.ApertureOffsetsDeg, r.Signal.AfterglowUS = nil, nil
		return r
	}
	var set []recipe.Recipe
	for _, base := range []recipe.Recipe{uniform, table, sine, automatic(uniform), automatic(table)} {
		for _, invert := range []bool{false, true} {
			for _, strokes := range []string{"merge", "split"} {
				r := base.Clone()
				r.Signal.Invert = invert
				r.Rows.Strokes = strokes
				set = append(set, r)
			}
		}
	}
	type outcome struct {
		res *Result
		err string
	}
	build := func(s *Session, r recipe.Recipe) outcome {
		res, err := s.Build(context.Background(), r, nil)
		if err != nil {
			return outcome{err: err.Error()}
		}
		return outcome{res: res}
	}
	fresh := make([]outcome, len(set))
	for i, r := range set {
		fresh[i] = build(NewSession(rec), r)
	}
	// Every recipe of the set builds: a set of refusals would compare
	// nothing but error texts.
	for i, o := range fresh {
		if o.err != "" {
			t.Errorf("recipe %d (%s, strokes %s, invert %v) refused in a fresh session: %s", i, set[i].Sweep.Law, set[i].Rows.Strokes, set[i].Signal.Invert, o.err)
		}
	}
	for _, order := range [][]int{ascending(len(set)), descending(len(set))} {
		shared := NewSession(rec)
		for _, i := range order {
			got := build(shared, set[i])
			want := fresh[i]
			name := string(set[i].Sweep.Law) + "/" + set[i].Rows.Strokes
			if set[i].Signal.Invert {
				name += "/invert"
			}
			if set[i].Signal.AfterglowUS == nil {
				name += "/automatic"
			}
			if got.err != want.err {
				t.Errorf("%s: error %q in a shared session, %q in a fresh one", name, got.err, want.err)
				continue
			}
			if want.res == nil {
				continue
			}
			if !reflect.DeepEqual(got.res.Report, want.res.Report) {
				t.Errorf("%s: report in a shared session\n%+v\nin a fresh one\n%+v", name, got.res.Report, want.res.Report)
			}
			if !reflect.DeepEqual(got.res.Lines, want.res.Lines) || !reflect.DeepEqual(got.res.Recipe, want.res.Recipe) {
				t.Errorf("%s: lines or resolved recipe differ between a shared and a fresh session", name)
			}
			if len(got.res.Frames) != len(want.res.Frames) {
				t.Errorf("%s: %d frames in a shared session, %d in a fresh one", name, len(got.res.Frames), len(want.res.Frames))
				continue
			}
			for k := range got.res.Frames {
				if !sameBits(got.res.Frames[k].Pix, want.res.Frames[k].Pix) || !reflect.DeepEqual(got.res.Frames[k].Covered, want.res.Frames[k].Covered) {
					t.Errorf("%s: frame %d differs between a shared and a fresh session", name, k)
				}
			}
		}
	}
}

func ascending(n int) []int {
	v := make([]int, n)
	for i := range v {
		v[i] = i
	}
	return v
}

func descending(n int) []int {
	v := ascending(n)
	for i, j := 0, n-1; i < j; i, j = i+1, j-1 {
		v[i], v[j] = v[j], v[i]
	}
	return v
}

// sameBits compares float32 pixels bit for bit, so no-data NaNs match.
func sameBits(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return true
}
