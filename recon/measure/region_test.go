package measure

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
)

func TestRegionAgainstGonum(t *testing.T) {
	f := blankFrame(30, 20, 0.5, 0.8, -7, 12)
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range f.Pix {
		f.Pix[i] = float32(100 + 5*rng.NormFloat64())
		f.Covered[i] = i%7 != 0
	}
	// Columns 4 … 12 and rows 3 … 9 by their centres.
	r := Rect{xOf(f, 4) - 0.1, yOf(f, 9) - 0.1, xOf(f, 12) + 0.1, yOf(f, 3) + 0.1}
	got, err := Region(f, r)
	if err != nil {
		t.Fatal(err)
	}
	var vals []float64
	for row := 3; row <= 9; row++ {
		for col := 4; col <= 12; col++ {
			if v, ok := f.At(col, row); ok {
				vals = append(vals, float64(v))
			}
		}
	}
	// gonum's stat.MeanStdDev (an independent library; unbiased, n − 1).
	mean, sd := stat.MeanStdDev(vals, nil)
	if got.Pixels != len(vals) || math.Abs(got.Mean-mean) > 1e-9 || math.Abs(got.SD-sd) > 1e-9 || math.Abs(got.SNR-mean/sd) > 1e-9 {
		t.Errorf("got %+v; gonum: %d pixels, mean %g, SD %g", got, len(vals), mean, sd)
	}
}

func TestCNRClosedForm(t *testing.T) {
	// |m₁ − m₂| / √((s₁² + s₂²)/2): means 10 and 4, SDs 3 and 4 give
	// 6/√12.5 (closed form).
	got := CNR(RegionStats{Mean: 10, SD: 3}, RegionStats{Mean: 4, SD: 4})
	if want := 6 / math.Sqrt(12.5); math.Abs(got-want) > 1e-12 {
		t.Errorf("CNR %g, want %g", got, want)
	}
}

func TestRegionRefusals(t *testing.T) {
	f := blankFrame(10, 10, 1, 1, 0, 9)
	if _, err := Region(f, Rect{20, 20, 30, 30}); err == nil {
		t.Error("a rectangle outside the frame was measured")
	}
	for i := range f.Covered {
		f.Covered[i] = false
	}
	if _, err := Region(f, Rect{1, 1, 5, 5}); !errors.Is(err, ErrNoData) {
		t.Errorf("no data: %v, want ErrNoData", err)
	}
}

func TestProfileOnAPlane(t *testing.T) {
	// On v = a + b·x + c·y, bilinear interpolation is exact and a band
	// centred on the line averages to the line's own value, so the
	// profile is the plane along the line (closed form).
	const a, b, c = 3.0, 0.25, -0.5
	f := blankFrame(40, 30, 0.5, 0.5, 10, 30)
	for row := 0; row < f.Height; row++ {
		for col := 0; col < f.Width; col++ {
			f.Pix[row*f.Width+col] = float32(a + b*xOf(f, float64(col)) + c*yOf(f, float64(row)))
		}
	}
	l := Line{12, 18, 25, 27}
	for _, band := range []float64{0, 2} {
		prof, err := Profile(f, l, band)
		if err != nil {
			t.Fatal(err)
		}
		length := Distance(l)
		if want := int(math.Floor(length/0.5)) + 1; len(prof) != want {
			t.Errorf("band %g: %d samples, want %d (every 0.5 mm over %.3f mm)", band, len(prof), want, length)
		}
		for _, p := range prof {
			x := l.X0 + (l.X1-l.X0)*p.DistanceMM/length
			y := l.Y0 + (l.Y1-l.Y0)*p.DistanceMM/length
			if want := a + b*x + c*y; math.Abs(p.Value-want) > 1e-5 {
				t.Fatalf("band %g: at %.2f mm %g, plane gives %g", band, p.DistanceMM, p.Value, want)
			}
		}
	}
	// Distance: the 5-12-13 right triangle.
	if d := Distance(Line{1, 2, 6, 14}); math.Abs(d-13) > 1e-12 {
		t.Errorf("distance %g, want 13", d)
	}
	if _, err := Profile(f, Line{100, 100, 120, 120}, 0); !errors.Is(err, ErrNoData) {
		t.Errorf("a line off the frame: %v, want ErrNoData", err)
	}
}

func TestProfileBandAverages(t *testing.T) {
	// v = |y − 20| with the kink on a row of pixel centres is exact under
	// bilinear interpolation; a 2 mm band at 0.5 mm pitch is sampled at
	// offsets −1, −0.5, 0, 0.5, 1 mm, so a line along y = 20 reads
	// (1 + 0.5 + 0 + 0.5 + 1)/5 = 0.6 (closed form), and 0 with no band.
	f := blankFrame(40, 41, 0.5, 0.5, 0, 30)
	for row := 0; row < f.Height; row++ {
		for col := 0; col < f.Width; col++ {
			f.Pix[row*f.Width+col] = float32(math.Abs(yOf(f, float64(row)) - 20))
		}
	}
	for _, c := range []struct{ band, want float64 }{{0, 0}, {2, 0.6}} {
		prof, err := Profile(f, Line{2, 20, 15, 20}, c.band)
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range prof {
			if math.Abs(p.Value-c.want) > 1e-6 {
				t.Fatalf("band %g mm: %g at %g mm, want %g", c.band, p.Value, p.DistanceMM, c.want)
			}
		}
	}
}
