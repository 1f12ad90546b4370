package measure

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"

	"spotloom/recon"
)

// twoLevelFrame is 100 × 60 mm at 1 mm: level 10 on the left half and 30
// on the right, with Gaussian noise of SD 2 (seeded).
func twoLevelFrame() *recon.Frame {
	f := blankFrame(100, 60, 1, 1, 0, 59)
	rng := rand.New(rand.NewPCG(7, 12))
	for row := 0; row < f.Height; row++ {
		for col := 0; col < f.Width; col++ {
			level := 10.0
			if col >= 50 {
				level = 30
			}
			f.Pix[row*f.Width+col] = float32(level + 2*rng.NormFloat64())
		}
	}
	return f
}

// pixelsIn lists the values whose pixel centres lie in the rectangle
// x0…x1, y0…y1 (mm) of a frame with its origin at (0, 59) and 1 mm pitch.
func pixelsIn(f *recon.Frame, x0, y0, x1, y1 float64) []float64 {
	var v []float64
	for row := 0; row < f.Height; row++ {
		for col := 0; col < f.Width; col++ {
			x, y := float64(col), 59-float64(row)
			if x >= x0 && x <= x1 && y >= y0 && y <= y1 {
				v = append(v, float64(f.Pix[row*f.Width+col]))
			}
		}
	}
	return v
}

func TestListRegionsAndCNR(t *testing.T) {
	// A list's regions give gonum's mean and sample SD of the same pixels
	// (stat.MeanStdDev, an independent library), and R2's CNR with R1 is
	// |m₁ − m₂| / √((s₁² + s₂²)/2) from those; the shapes give the numbers
	// of the request the measure command would be given.
	f := twoLevelFrame()
	list := []Shape{
		{Kind: KindRegion, Label: "R1", Rect: &Rect{X0: 5, Y0: 5, X1: 40, Y1: 50}},
		{Kind: KindRegion, Label: "R2", Rect: &Rect{X0: 90, Y0: 50, X1: 60, Y1: 5}, CNRWith: "R1"},
		{Kind: KindDistance, Label: "D1", Line: &Line{X0: 0, Y0: 0, X1: 30, Y1: 40}},
	}
	if err := CheckList(list); err != nil {
		t.Fatal(err)
	}
	taken := RunList(f, list)
	m1, s1 := stat.MeanStdDev(pixelsIn(f, 5, 5, 40, 50), nil)
	m2, s2 := stat.MeanStdDev(pixelsIn(f, 60, 5, 90, 50), nil)
	for i, want := range [][2]float64{{m1, s1}, {m2, s2}} {
		r := taken[i].Results.ROI
		if taken[i].Err != nil || r == nil || math.Abs(r.Mean-want[0]) > 1e-9*math.Abs(want[0]) || math.Abs(r.SD-want[1]) > 1e-9*want[1] {
			t.Fatalf("%s: %+v (%v), gonum mean %g SD %g", list[i].Label, r, taken[i].Err, want[0], want[1])
		}
	}
	if taken[0].Results.CNR != nil {
		t.Error("R1 names no other region but has a CNR")
	}
	wantCNR := math.Abs(m1-m2) / math.Sqrt((s1*s1+s2*s2)/2)
	if c := taken[1].Results.CNR; c == nil || math.Abs(*c-wantCNR) > 1e-9*wantCNR {
		t.Errorf("R2's CNR %v, want %g", c, wantCNR)
	}
	// A 30-40-50 triangle (Pythagoras).
	if d := taken[2].Results.DistanceMM; d == nil || math.Abs(*d-50) > 1e-12 {
		t.Errorf("D1 %v mm, want 50", d)
	}
	// The same numbers as the request "--roi R2 --roi2 R1" of the command.
	q, err := list[1].Request(list)
	if err != nil {
		t.Fatal(err)
	}
	direct, err := Run(f, q)
	if err != nil || *direct.CNR != *taken[1].Results.CNR || direct.ROI.Mean != taken[1].Results.ROI.Mean {
		t.Errorf("the request gives %+v (%v), the list %+v", direct, err, taken[1].Results)
	}
}

func TestParseListForms(t *testing.T) {
	// One list, written the ways files carry it: a bare list, a sidecar's
	// "measurements", and a measure request (which is turned into E1, R1,
	// R2 with its CNR against R1).
	list := []Shape{
		{Kind: KindEdge, Label: "E1", Rect: &Rect{X0: 1, Y0: 2, X1: 3, Y1: 4}},
		{Kind: KindProfile, Label: "P1", Line: &Line{X0: 0, Y0: 0, X1: 10, Y1: 0}, BandMM: 2},
		{Kind: KindDots, SpacingMM: 10},
	}
	data, _ := json.Marshal(list)
	got, err := ParseList(data, "list.json")
	if err != nil {
		t.Fatal(err)
	}
	if got[2].Label != "G1" || !SameList(got[:2], list[:2]) {
		t.Errorf("bare list read back as %+v", got)
	}
	side := `{"format": "spotloom-export/1", "recipe": {}, "report": {"lines": 3}, "measurements": ` + string(data) + `}`
	if got2, err := ParseList([]byte(side), "f.recipe.json"); err != nil || !SameList(got2, got) {
		t.Errorf("sidecar: %+v, %v", got2, err)
	}
	req := `{"file": "f.tiff", "request": {"edge": {"x0_mm": 1, "y0_mm": 2, "x1_mm": 3, "y1_mm": 4}, "roi": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 5, "y1_mm": 5}, "roi2": {"x0_mm": 6, "y0_mm": 0, "x1_mm": 9, "y1_mm": 5}}, "edge": {"mtf50_lp_mm": 1}}`
	got3, err := ParseList([]byte(req), "m.json")
	if err != nil || len(got3) != 3 || got3[0].Kind != KindEdge || got3[2].Label != "R2" || got3[2].CNRWith != "R1" || got3[2].Rect.X0 != 6 {
		t.Errorf("measure output: %+v, %v", got3, err)
	}
	if _, err := ParseList([]byte(`{"format": "spotloom-export/1", "recipe": {}}`), "old.recipe.json"); !errors.Is(err, ErrNoList) {
		t.Errorf("sidecar without a list: %v, want ErrNoList", err)
	}
}

func TestParseListErrors(t *testing.T) {
	for _, c := range []struct{ data, want string }{
		{`[{"kind": "blur", "rect": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 1, "y1_mm": 1}}]`, "not one of"},
		{`[{"kind": "edge"}]`, `needs a "rect"`},
		{`[{"kind": "distance", "rect": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 1, "y1_mm": 1}}]`, `needs a "line"`},
		{`[{"kind": "dots"}]`, "spacing_mm"},
		{`[{"kind": "roi", "label": "R1", "rect": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 1, "y1_mm": 1}, "cnr_with": "R7"}]`, "names no other roi"},
		{`[{"kind": "nps", "label": "A", "rect": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 1, "y1_mm": 1}}, {"kind": "dots", "label": "A", "spacing_mm": 5}]`, "given to two"},
		{`[{"kind": "edge", "rect": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 1, "y1_mm": 1}, "colour": 3}]`, "colour"},
		{`[{"kind": "edge", "rect": {"x0_mm": 0, "y0_mm": 0, "x1_mm": 1, "y1_mm": 1}, "band_mm": 2}]`, "band_mm goes with a profile"},
		{`{"request": {}}`, "asks for no measurement"},
		{`not json`, "not a JSON"},
	} {
		if _, err := ParseList([]byte(c.data), "m.json"); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want %q", c.data, err, c.want)
		}
	}
}

func TestNextLabelAndClone(t *testing.T) {
	list := []Shape{{Kind: KindEdge, Label: "E1"}, {Kind: KindEdge, Label: "E3"}, {Kind: KindRegion, Label: "R1"}}
	if l := NextLabel(list, KindEdge); l != "E2" {
		t.Errorf("next edge label %q, want E2", l)
	}
	a := []Shape{{Kind: KindRegion, Label: "R1", Rect: &Rect{X1: 1, Y1: 1}}}
	b := CloneList(a)
	b[0].Rect.X1 = 5
	if a[0].Rect.X1 != 1 || SameList(a, b) {
		t.Error("CloneList shares the rectangle")
	}
}
