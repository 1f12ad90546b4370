package export

import (
	"image"
	_ "image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"spotloom/recon"
	"spotloom/recon/measure"
)

// sheetFrame is a 240 × 160 mm frame at 1 mm pitch: dark on the left of a
// slanted edge at x ≈ 0, bright on the right, with a little ripple.
func sheetFrame() *recon.Frame {
	f := testFrame(240, 160, 1)
	f.OriginXMM, f.OriginYMM = -119.5, 80
	for row := 0; row < f.Height; row++ {
		for col := 0; col < f.Width; col++ {
			x := f.OriginXMM + float64(col) + 0.09*float64(row)
			v := 0.1 + 0.8/(1+math.Exp(-x/1.5))
			f.Pix[row*f.Width+col] = float32(v + 0.01*math.Sin(float64(col*row)))
			f.Covered[row*f.Width+col] = true
		}
	}
	return f
}

func TestSheetPrintScale(t *testing.T) {
	// A 240 mm wide frame does not fit the 180 mm frame box at 1:1; 1:2
	// is the next scale of the list, 120 × 80 mm on paper.
	for _, c := range []struct{ w, h, want float64 }{{240, 160, 2}, {100, 100, 1}, {30, 20, 0.25}, {900, 400, 5}} {
		if got, err := printScale(c.w, c.h); err != nil || got != c.want {
			t.Errorf("%g × %g mm: scale %g (%v), want %g", c.w, c.h, got, err, c.want)
		}
	}
}

func TestSheetRendersWithPoppler(t *testing.T) {
	// The sheet is checked the way a reader sees it: poppler's pdftoppm
	// renders it to pixels and pdftotext extracts its text (both
	// independent of the writer, Debian poppler-utils).
	for _, tool := range []string{"pdftoppm", "pdftotext"} {
		if _, err := exec.LookPath(tool); err != nil {
			t.Skipf("%s is not installed (Debian poppler-utils; .ci/run installs it)", tool)
		}
	}
	f := sheetFrame()
	f.Report.Warnings = []string{"a warning worth reading"}
	req := measure.Request{Edge: &measure.Rect{X0: -20, Y0: -30, X1: 20, Y1: 30}, ROI: &measure.Rect{X0: 40, Y0: -20, X1: 80, Y1: 20},
		ROI2: &measure.Rect{X0: -80, Y0: -20, X1: -40, Y1: 20}, Profile: &measure.Line{X0: -60, Y0: 50, X1: 60, Y1: 50}, BandMM: 3,
		NPS: &measure.Rect{X0: 30, Y0: -70, X1: 110, Y1: 70}}
	taken := measure.RunList(f, measure.FromRequest(req))
	for _, m := range taken {
		if m.Err != nil {
			t.Fatalf("%s: %v", m.Shape.Label, m.Err)
		}
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "sheet.pdf")
	date := time.Date(2026, 3, 4, 5, 6, 0, 0, time.UTC)
	layout, err := WriteSheet(path, Sheet{Frame: f, Source: "bench-run.wav", Measurements: taken, Date: date}, false)
	if err != nil {
		t.Fatal(err)
	}
	if layout.PrintScale != 2 || layout.Pages != 2 {
		t.Errorf("print scale %g, %d pages; want 1:2 and 2", layout.PrintScale, layout.Pages)
	}
	if _, err := WriteSheet(path, Sheet{Frame: f, Source: "x", Date: date}, false); err == nil || !strings.Contains(err.Error(), "exists") {
		t.Errorf("a second sheet over the first: %v, want refused", err)
	}

	const dpi = 50
	if out, err := exec.Command("pdftoppm", "-r", "50", "-gray", "-png", path, filepath.Join(dir, "page")).CombinedOutput(); err != nil {
		t.Fatalf("pdftoppm: %v: %s", err, out)
	}
	pages, _ := filepath.Glob(filepath.Join(dir, "page-*.png"))
	if len(pages) != 2 {
		t.Fatalf("pdftoppm made %d pages: %v", len(pages), pages)
	}
	fh, err := os.Open(pages[0])
	if err != nil {
		t.Fatal(err)
	}
	img, _, err := image.Decode(fh)
	fh.Close()
	if err != nil {
		t.Fatal(err)
	}
	// A4 at 50 dpi is 413 × 585 pixels (210 × 297 mm).
	if b := img.Bounds(); math.Abs(float64(b.Dx())-210/25.4*dpi) > 2 || math.Abs(float64(b.Dy())-297/25.4*dpi) > 2 {
		t.Errorf("page 1 is %v pixels, A4 at %d dpi is 413 × 585", b, dpi)
	}
	gray := func(xMM, yMM float64) float64 {
		r, _, _, _ := img.At(int(xMM/25.4*dpi), int(yMM/25.4*dpi)).RGBA()
		return float64(r) / 0xffff
	}
	mean := func(x0, y0, x1, y1 float64) float64 {
		var s float64
		n := 0
		for y := y0; y < y1; y += 1 {
			for x := x0; x < x1; x += 1 {
				s += gray(x, y)
				n++
			}
		}
		return s / float64(n)
	}
	// The frame is where the layout says: its dark left quarter and bright
	// right quarter (away from the marks), and white paper in the margin.
	lx, ly, lw, lh := layout.FrameXMM, layout.FrameYMM, layout.FrameWMM, layout.FrameHMM
	dark := mean(lx+2, ly+lh*0.7, lx+lw*0.25, ly+lh-2)
	bright := mean(lx+lw*0.75, ly+lh*0.8, lx+lw-2, ly+lh-2)
	paper := mean(2, ly, 12, ly+lh)
	if !(dark < 0.3 && bright > 0.7 && paper > 0.97) {
		t.Errorf("frame dark side %.2f, bright side %.2f, margin %.2f: the frame is not where the layout puts it", dark, bright, paper)
	}
	out, err := exec.Command("pdftotext", "-layout", path, "-").CombinedOutput()
	if err != nil {
		t.Fatalf("pdftotext: %v: %s", err, out)
	}
	text := string(out)
	for _, want := range []string{"Spotloom report sheet", "bench-run.wav", "2026-03-04 05:06", "print scale 1:2", "Capture and rig",
		"rev/min", "Recipe in short", "a warning worth reading", "MTF50", "CNR", "Noise power spectrum", "Line profile",
		"E1", "CNR against R1", "P1"} {
		if !strings.Contains(text, want) {
			t.Errorf("the sheet's text lacks %q", want)
		}
	}
}
