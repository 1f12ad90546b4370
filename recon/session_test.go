package recon

import (
	"context"
	"math"
	"testing"

	"spotloom/recon/recipe"
)

// dotFit measures the centroid of every whole dot of a dot grid in a frame
// and compares them with the true centres after removing the mean shift
// (a translation-only fit). It returns the RMS residual in mm, the x and y
// scale of a least-squares line through measured against true, and the
// number of dots.
func dotFit(t *testing.T, f *Frame, spacing, threshold float64) (rms, scaleX, scaleY float64, n int) {
	t.Helper()
	type pair struct{ tx, ty, mx, my float64 }
	var pairs []pair
	xMin, xMax := f.OriginXMM, f.OriginXMM+float64(f.Width-1)*f.PitchXMM
	yMax, yMin := f.OriginYMM, f.OriginYMM-float64(f.Height-1)*f.PitchYMM
	for gx := spacing * math.Ceil(xMin/spacing); gx <= xMax; gx += spacing {
		for gy := spacing * math.Ceil(yMin/spacing); gy <= yMax; gy += spacing {
			if gx-spacing/2 < xMin || gx+spacing/2 > xMax || gy-spacing/2 < yMin || gy+spacing/2 > yMax {
				continue
			}
			var sw, sx, sy float64
			complete := true
			for row := 0; row < f.Height; row++ {
				y := f.OriginYMM - float64(row)*f.PitchYMM
				if math.Abs(y-gy) > spacing/2 {
					continue
				}
				for col := 0; col < f.Width; col++ {
					x := f.OriginXMM + float64(col)*f.PitchXMM
					if math.Abs(x-gx) > spacing/2 {
						continue
					}
					v, ok := f.At(col, row)
					if !ok {
						complete = false
						continue
					}
					if w := float64(v) - threshold; w > 0 {
						sw += w
						sx += w * x
						sy += w * y
					}
				}
			}
			if complete && sw > 0 {
				pairs = append(pairs, pair{gx, gy, sx / sw, sy / sw})
			}
		}
	}
	n = len(pairs)
	if n < 3 {
		t.Fatalf("only %d whole dots in a %d×%d frame", n, f.Width, f.Height)
	}
	var dx, dy float64
	for _, p := range pairs {
		dx += p.mx - p.tx
		dy += p.my - p.ty
	}
	dx /= float64(n)
	dy /= float64(n)
	var ss float64
	for _, p := range pairs {
		ex, ey := p.mx-p.tx-dx, p.my-p.ty-dy
		ss += ex*ex + ey*ey
	}
	slope := func(get func(p pair) (float64, float64)) float64 {
		var st, sm, stt, stm float64
		for _, p := range pairs {
			a, b := get(p)
			st += a
			sm += b
			stt += a * a
			stm += a * b
		}
		k := float64(n)
		den := k*stt - st*st
		if den == 0 {
			return 1
		}
		return (k*stm - st*sm) / den
	}
	scaleX = slope(func(p pair) (float64, float64) { return p.tx, p.mx })
	scaleY = slope(func(p pair) (float64, float64) { return p.ty, p.my })
	return math.Sqrt(ss / float64(n)), scaleX, scaleY, n
}

func TestBuildWheelDotGrid(t *testing.T) {
	rig := baseRig()
	s := NewSession(rig.recording())
	res, err := s.Build(context.Background(), rig.recipe(), nil)
	if err != nil {
		t.Fatal(err)
	}
	rep := res.Report
	// Closed form: 300 rev/min × 4 apertures = 20 lines/s; sweep time is
	// field/spacing of a line period = 30/90 × 50 ms = 16.7 ms.
	if math.Abs(rep.RPMMean-300)/300 > 0.002 {
		t.Errorf("rpm %g, want 300 within 0.2 %%", rep.RPMMean)
	}
	if math.Abs(rep.LineRateHz-20) > 0.05 {
		t.Errorf("line rate %g Hz, want 20", rep.LineRateHz)
	}
	if math.Abs(rep.SweepMS-50.0/3) > 0.05 {
		t.Errorf("sweep %g ms, want 16.67", rep.SweepMS)
	}
	if math.Abs(rep.DelayDeg-rig.delayDeg) > 0.3 {
		t.Errorf("automatic delay %g°, want %g° within 0.3°", rep.DelayDeg, rig.delayDeg)
	}
	f := res.Frames[0]
	rms, sx, sy, n := dotFit(t, f, 20, 0.6)
	t.Logf("report %+v; %d dots, rms %.3f mm, scale %.4f %.4f", rep, n, rms, sx, sy)
	if rms > 0.5 || math.Abs(sx-1) > 0.005 || math.Abs(sy-1) > 0.005 {
		t.Errorf("dots: rms %.3f mm (want ≤ 0.5), scale x %.4f y %.4f (want 1 ± 0.005)", rms, sx, sy)
	}
	_ = recipe.RecipeFormat
}
