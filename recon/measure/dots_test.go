package measure

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spotloom/recon"

	"spotloom/recon/recipe"
)

// gridFrame draws round holes of diameterMM (value lo) in a sheet (value
// hi) at the nominal grid points (s·i, s·j) mapped by measured = M·g + t,
// each pixel the covered fraction of its area from 8 × 8 sub-samples.
func gridFrame(w, h int, pitch, s, diameterMM float64, m [2][2]float64, t [2]float64, lo, hi float64) *recon.Frame {
	f := blankFrame(w, h, pitch, pitch, -float64(w-1)*pitch/2, float64(h-1)*pitch/2)
	r := diameterMM / 2
	var centres [][2]float64
	for j := -20; j <= 20; j++ {
		for i := -20; i <= 20; i++ {
			gx, gy := s*float64(i), s*float64(j)
			centres = append(centres, [2]float64{m[0][0]*gx + m[0][1]*gy + t[0], m[1][0]*gx + m[1][1]*gy + t[1]})
		}
	}
	for row := 0; row < h; row++ {
		for col := 0; col < w; col++ {
			x, y := xOf(f, float64(col)), yOf(f, float64(row))
			inside := 0
			for _, c := range centres {
				if math.Abs(c[0]-x) > r+pitch || math.Abs(c[1]-y) > r+pitch {
					continue
				}
				for a := 0; a < 8; a++ {
					for b := 0; b < 8; b++ {
						sx, sy := x+((float64(a)+0.5)/8-0.5)*pitch, y+((float64(b)+0.5)/8-0.5)*pitch
						if math.Hypot(sx-c[0], sy-c[1]) < r {
							inside++
						}
					}
				}
			}
			f.Pix[row*w+col] = float32(hi + (lo-hi)*float64(inside)/64)
		}
	}
	return f
}

func TestGridRecoversAnAffineMap(t *testing.T) {
	// A grid drawn through a known map: scale 1.02 in x, 0.97 in y,
	// turned 1.5°, with a shift. The truth is the map itself.
	const s = 20.0
	rot := 1.5 * math.Pi / 180
	sx, sy := 1.02, 0.97
	m := [2][2]float64{{sx * math.Cos(rot), -sy * math.Sin(rot)}, {sx * math.Sin(rot), sy * math.Cos(rot)}}
	ff := gridFrame(160, 140, 1, s, 6, m, [2]float64{3.3, -2.1}, 0.1, 0.8)
	g, err := Grid(ff, s)
	if err != nil {
		t.Fatal(err)
	}
	if !g.DarkDots {
		t.Error("holes darker than the sheet not told as dark dots")
	}
	if math.Abs(g.ScaleX-sx) > 1e-3 || math.Abs(g.ScaleY-sy) > 1e-3 {
		t.Errorf("scale %.5f × %.5f, drawn %.5f × %.5f", g.ScaleX, g.ScaleY, sx, sy)
	}
	if math.Abs(g.RotationDeg-1.5) > 0.02 || math.Abs(g.ShearDeg) > 0.02 {
		t.Errorf("rotation %.4f°, shear %.4f°, drawn 1.5° and 0°", g.RotationDeg, g.ShearDeg)
	}
	// Area-sampled circles at 1 mm pitch put centroids within a few
	// hundredths of a millimetre.
	if g.RMSMM > 0.05 || g.MaxMM > 0.15 {
		t.Errorf("residual RMS %.4f mm, worst %.4f mm", g.RMSMM, g.MaxMM)
	}
	// Whole dots inside a 160 × 140 mm frame on a 20 mm grid: 7 × 6 at
	// least.
	if g.Found < 42 {
		t.Errorf("%d dots found", g.Found)
	}

	// The same least-squares problem solved by gonum's QR (mat.Dense
	// Solve, an independent library) gives the same map.
	a := mat.NewDense(len(g.Dots), 3, nil)
	bx := mat.NewDense(len(g.Dots), 2, nil)
	for k, d := range g.Dots {
		a.SetRow(k, []float64{s * float64(d.I), s * float64(d.J), 1})
		bx.SetRow(k, []float64{d.XMM, d.YMM})
	}
	var sol mat.Dense
	if err := sol.Solve(a, bx); err != nil {
		t.Fatal(err)
	}
	for r := 0; r < 2; r++ {
		for c := 0; c < 2; c++ {
			if math.Abs(sol.At(c, r)-g.M[r][c]) > 1e-9 {
				t.Errorf("M[%d][%d] %.12f, gonum %.12f", r, c, g.M[r][c], sol.At(c, r))
			}
		}
		if math.Abs(sol.At(2, r)-g.T[r]) > 1e-9 {
			t.Errorf("T[%d] %.12f, gonum %.12f", r, g.T[r], sol.At(2, r))
		}
	}
	t.Logf("%d dots, scale %.5f × %.5f, rotation %.4f°, shear %.4f°, RMS %.4f mm, worst %.4f mm",
		g.Found, g.ScaleX, g.ScaleY, g.RotationDeg, g.ShearDeg, g.RMSMM, g.MaxMM)
}

func TestGridCorrectionUndoesTheScale(t *testing.T) {
	// x = D·tan θ scales with D, so D/scale makes x true (flat
	// projection, closed form); calibration millimetres divided by the y
	// scale make y true.
	r := recipe.Default()
	r.Sweep.Projection = "flat"
	r.Sweep.DistanceMM = 500
	r.Rows.Calibration = [][2]float64{{0.5, 0}, {4.5, 400}}
	c, err := GridCorrection(r, GridResult{ScaleX: 1.25, ScaleY: 0.8})
	if err != nil {
		t.Fatal(err)
	}
	if c.Recipe.Sweep.DistanceMM != 400 || c.DistanceMM != 400 {
		t.Errorf("distance %g, want 400", c.Recipe.Sweep.DistanceMM)
	}
	if got := c.Recipe.Rows.Calibration; len(got) != 2 || got[1] != [2]float64{4.5, 500} {
		t.Errorf("calibration %v, want [[0.5 0] [4.5 500]]", got)
	}
	if r.Rows.Calibration[1][1] != 400 {
		t.Error("the correction changed the recipe it was given")
	}
}

func TestGridRefusesAFlatFrame(t *testing.T) {
	f := blankFrame(50, 50, 1, 1, 0, 49)
	if _, err := Grid(f, 10); err == nil {
		t.Error("a flat frame gave a grid")
	}
	if _, err := Grid(f, 2); err == nil {
		t.Error("dots 2 pixels apart were accepted")
	}
}
