package ui

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"spotloom/recon/recipe"
)

// TestParseSweepTable pins the table reader with one table of inputs, in
// the manner of encoding/csv's tests.
func TestParseSweepTable(t *testing.T) {
	cases := []struct {
		name, input string
		want        [][2]float64
		err         string // part of the message, "" for none
	}{
		{"commas", "0, -100\n0.5, 0\n1, 100\n", [][2]float64{{0, -100}, {0.5, 0}, {1, 100}}, ""},
		{"spreadsheet paste", "fraction\tx_mm\r\n0\t-10.5\r\n1\t12\r\n", [][2]float64{{0, -10.5}, {1, 12}}, ""},
		{"arrows and comments", "# measured 2026-11-30\n0 → −50\n\n0.25 -> -20\n1;60\n", [][2]float64{{0, -50}, {0.25, -20}, {1, 60}}, ""},
		{"one pair", "0, 1\n", nil, "needs two or more"},
		{"three numbers", "0, 1\n0.5, 2, 3\n", nil, "line 2"},
		{"not a number", "0, 1\n0.5, abc\n", nil, `line 2: "abc" is not a number`},
		{"fraction too big", "0, 1\n1.5, 2\n", nil, "line 2: the fraction 1.5 is outside 0 to 1"},
		{"fractions fall", "0, 1\n0.6, 2\n0.4, 3\n", nil, "line 3: the fraction 0.4 does not follow 0.6"},
		{"a header only first", "0, 1\nx, y\n", nil, "line 2"},
	}
	for _, c := range cases {
		got, err := parseSweepTable(c.input)
		switch {
		case c.err == "" && err != nil:
			t.Errorf("%s: %v", c.name, err)
		case c.err != "" && (err == nil || !strings.Contains(err.Error(), c.err)):
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.err)
		case c.err == "" && fmt.Sprint(got) != fmt.Sprint(c.want):
			t.Errorf("%s: got %v, want %v", c.name, got, c.want)
		}
	}
	// What formatSweepTable writes reads back the same.
	pairs := [][2]float64{{0, -123.456}, {0.3, 1e-3}, {1, 99}}
	if got, err := parseSweepTable(formatSweepTable(pairs)); err != nil || fmt.Sprint(got) != fmt.Sprint(pairs) {
		t.Errorf("round trip: %v %v, want %v", got, err, pairs)
	}
}

// TestUniformXIsTheClosedForm: a flat target at distance D sees the beam
// at D·tan θ, an angular one at D·θ, with θ = (f − ½)·field (the uniform
// law), computed here with the standard library's math.Tan.
func TestUniformXIsTheClosedForm(t *testing.T) {
	s := recipe.Sweep{FieldDeg: 40, DistanceMM: 500, Projection: "flat"}
	for _, f := range []float64{0, 0.1, 0.5, 0.75, 1} {
		theta := (f - 0.5) * 40 * math.Pi / 180
		if got, want := uniformX(s, f), 500*math.Tan(theta); math.Abs(got-want) > 1e-9 {
			t.Errorf("flat, f=%g: %g mm, want %g", f, got, want)
		}
		s.Projection = "angular"
		if got, want := uniformX(s, f), 500*theta; math.Abs(got-want) > 1e-9 {
			t.Errorf("angular, f=%g: %g mm, want %g", f, got, want)
		}
		s.Projection = "flat"
	}
	s.Reverse = true
	if got := uniformX(s, 0); math.Abs(got-500*math.Tan(20*math.Pi/180)) > 1e-9 {
		t.Errorf("reversed, f=0: %g mm, want +D·tan 20°", got)
	}
}

// TestTableEditorBuildsWithTheTable: choosing "measured table" with no
// table opens the editor instead of failing; the pairs typed build; a bad
// line is named and nothing changes.
func TestTableEditorBuildsWithTheTable(t *testing.T) {
	ws, w := newTestWorkstation(t)
	before := overlays(w)
	ws.controls.choice(ctlLaw).SetSelected(nameFor(string(recipe.LawTable), modeKeys(lawKeys), lawNames))
	ws.Wait()
	if overlays(w) <= before || ws.cur.Recipe.Sweep.Law == recipe.LawTable || ws.Problem() != "" {
		t.Errorf("choosing the table law with no table: %d dialogs (was %d), law %s, problem %q; want the editor and no build",
			overlays(w), before, ws.cur.Recipe.Sweep.Law, ws.Problem())
	}

	e := ws.newTableEditor()
	e.text.SetText("fraction, mm\n0, -150\n0.5 → 0\n0.2, 3\n")
	e.apply()
	ws.Wait()
	if !strings.Contains(ws.Problem(), "line 4") || ws.cur.Recipe.Sweep.Law == recipe.LawTable {
		t.Errorf("a falling fraction: problem %q, law %s; want line 4 named and no change", ws.Problem(), ws.cur.Recipe.Sweep.Law)
	}
	if !strings.Contains(e.message.Text, "line 4") {
		t.Errorf("the editor says %q, want line 4 named", e.message.Text)
	}

	ws.problem = ""
	e.text.SetText("fraction, mm\n0, -150\n0.5 → 0\n1\t150\n")
	e.apply()
	ws.Wait()
	r := ws.result.Recipe.Sweep
	if ws.Problem() != "" || r.Law != recipe.LawTable || fmt.Sprint(r.Table) != "[[0 -150] [0.5 0] [1 150]]" {
		t.Errorf("built with law %s table %v (problem %q)", r.Law, r.Table, ws.Problem())
	}
	// A straight table from −150 to 150 mm makes a frame 300 mm wide, give
	// or take a pitch at each end.
	f := ws.result.Frames[0]
	if width := float64(f.Width) * f.PitchXMM; math.Abs(width-300) > 2*f.PitchXMM+1e-9 {
		t.Errorf("frame is %.1f mm wide, want 300 mm from the table", width)
	}
}

// TestTablePlotDrawsThePoints finds a square of the table's ink at each
// point of the table, placed by the plot's closed-form axes.
func TestTablePlotDrawsThePoints(t *testing.T) {
	s := recipe.Sweep{FieldDeg: 40, DistanceMM: 300, Projection: "flat"}
	pairs := [][2]float64{{0, -80}, {0.5, 30}, {1, 90}}
	const w, h = 400, 240
	img := paintTable(pairs, s, w, h, 1)
	// The plot's range: the uniform law spans ±300·tan 20° = ±109.2 mm,
	// which holds the table; 5 % more at each end.
	half := 300 * math.Tan(20*math.Pi/180)
	lo, hi := -half-0.1*half, half+0.1*half
	left, right, top, bottom := 52, w-10, 20, h-30
	for _, p := range pairs {
		x := left + int(math.Round(p[0]*float64(right-left-1)))
		y := bottom - int(math.Round((p[1]-lo)/(hi-lo)*float64(bottom-top)))
		if c := img.NRGBAAt(x, y); c != tableInk {
			t.Errorf("point %v: pixel (%d,%d) is %v, want the table's ink", p, x, y, c)
		}
	}
}
