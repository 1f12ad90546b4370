package sampledata

import (
	"math"
	"testing"
)

// TestScenesRenderAtAnyPitch renders every scene at three pitches and
// checks that the area-averaged rasters agree: the mean yield over the same
// area is the same at every pitch (within 0.5 %), and each pixel of the
// coarse raster is close to the mean of the fine pixels it covers.
func TestScenesRenderAtAnyPitch(t *testing.T) {
	for _, name := range SceneNames() {
		s, err := Scene(name)
		if err != nil {
			t.Fatal(err)
		}
		var means []float64
		for _, pitch := range []float64{0.25, 1, 2} {
			// Pixel edges at ±160 × ±240 mm for every pitch.
			r, err := NewRaster(-160+pitch/2, 160-pitch/2, -240+pitch/2, 240-pitch/2, pitch)
			if err != nil {
				t.Fatal(err)
			}
			s.Render(r, 0, 0, 500)
			sum := 0.0
			lo, hi := 1.0, 0.0
			for _, v := range r.Pix {
				sum += float64(v)
				lo, hi = math.Min(lo, float64(v)), math.Max(hi, float64(v))
			}
			switch {
			case name == "sheet":
				// The uniform sheet fills the raster: one yield, the
				// sheet's, everywhere.
				if lo != hi || math.Abs(lo-yieldSheet) > 1e-6 {
					t.Errorf("%s at %g mm: yields from %g to %g, want %g everywhere", name, pitch, lo, hi, yieldSheet)
				}
			case lo < 0 || hi > 1 || hi-lo < 0.3:
				t.Errorf("%s at %g mm: yields from %g to %g", name, pitch, lo, hi)
			}
			means = append(means, sum/float64(len(r.Pix)))
		}
		for i, m := range means {
			if math.Abs(m-means[0]) > 0.005*means[0] {
				t.Errorf("%s: mean yield %g at pitch %d, %g at the finest", name, m, i, means[0])
			}
		}
	}
}

// TestDotGridTruth checks that the truth's dot centres lie where the scene
// has its holes (yield of air at the centre, sheet yield 6 mm away) and
// on a 25 mm grid.
func TestDotGridTruth(t *testing.T) {
	r := DemoRig()
	r.DurationS = 1
	_, truth, err := Simulate(t.Context(), r, "dot-grid", SimOptions{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(truth.Dots) < 50 || truth.DotDiameterMM != dotDiameterMM {
		t.Fatalf("%d dots of %g mm", len(truth.Dots), truth.DotDiameterMM)
	}
	s := dotGridScene()
	cx, cy := truth.SceneCentreMM[0], truth.SceneCentreMM[1]
	for _, d := range truth.Dots {
		if y := s.YieldAt(d[0]-cx, d[1]-cy, r.DistanceMM); y != yieldAir {
			t.Fatalf("dot at %v: yield %g, want %g", d, y, yieldAir)
		}
		if y := s.YieldAt(d[0]-cx+6, d[1]-cy, r.DistanceMM); y != yieldSheet {
			t.Fatalf("6 mm beside dot %v: yield %g, want %g", d, y, yieldSheet)
		}
		gx, gy := (d[0]-cx)/dotPitchMM, (d[1]-cy)/dotPitchMM
		if gx != math.Round(gx) || gy != math.Round(gy) {
			t.Fatalf("dot %v is off the 25 mm grid", d)
		}
		if math.Abs(d[0]) > truth.HalfWidthMM-4 || d[1] < truth.YRangeMM[0]+4 || d[1] > truth.YRangeMM[1]-4 {
			t.Fatalf("dot %v is outside the scanned area", d)
		}
	}
}

// TestEdgeCardTilt checks the reported edges against the scene: points
// 1 mm inside and outside each edge, perpendicular to its reported
// direction, fall on the card and the backing.
func TestEdgeCardTilt(t *testing.T) {
	s := edgeCardScene()
	if len(s.Features) != 4 {
		t.Fatalf("%d edges", len(s.Features))
	}
	for _, f := range s.Features {
		a := f.AngleDeg * math.Pi / 180
		nx, ny := -math.Sin(a), math.Cos(a) // normal to the edge
		// The centre of the card is inside: pick the side facing it.
		if nx*(-f.XMM)+ny*(-f.YMM) < 0 {
			nx, ny = -nx, -ny
		}
		tilt := math.Mod(f.AngleDeg, 90)
		if math.Abs(tilt-edgeCardTiltDeg) > 1e-9 {
			t.Errorf("%s: angle %g°, want %d° off an axis", f.Name, f.AngleDeg, edgeCardTiltDeg)
		}
		for _, along := range []float64{-40, 0, 40} {
			x, y := f.XMM+along*math.Cos(a), f.YMM+along*math.Sin(a)
			if in := s.YieldAt(x+nx, y+ny, 500); in != yieldSheet {
				t.Errorf("%s: 1 mm inside has yield %g", f.Name, in)
			}
			if out := s.YieldAt(x-nx, y-ny, 500); out != yieldCardBack {
				t.Errorf("%s: 1 mm outside has yield %g", f.Name, out)
			}
		}
	}
}

// TestBarFrequencies checks each bar group's period against its line pairs
// per centimetre by counting yield transitions across the group.
func TestBarFrequencies(t *testing.T) {
	s := barsScene()
	for _, f := range s.Features {
		if f.Kind != "bars" {
			continue
		}
		// Walk across the bars through the group centre, 0.01 mm a step.
		dx, dy := 1.0, 0.0
		span := f.WidthMM
		if f.AngleDeg == 0 {
			dx, dy, span = 0, 1, f.HeightMM
		}
		dark, edges := false, 0
		for u := -span/2 - 2; u <= span/2+2; u += 0.01 {
			d := s.YieldAt(f.XMM+u*dx, f.YMM+u*dy, 500) == yieldLead
			if d != dark {
				edges++
				dark = d
			}
		}
		// Five bars: ten edges; the group is 9 bar widths = 4.5 periods.
		period := 10 / f.LinePairsPerCM
		if edges != 10 || math.Abs(span-4.5*period) > 1e-9 {
			t.Errorf("%s: %d edges over %g mm, want 10 over %g mm", f.Name, edges, span, 4.5*period)
		}
	}
}
