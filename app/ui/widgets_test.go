package ui

import (
	"image"
	"math"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"spotloom/capture"
	"spotloom/recon"
)

// squareCapture is one second at 10 kHz: a detector at 0.5 with a bright
// stretch from 0.40 to 0.60 s, an index pulse from 0.20 to 0.21 s and from
// 0.70 to 0.71 s, and a steady position level.
func squareCapture() *capture.Recording {
	const rate = 10000
	n := rate
	det, idx, pos := make([]float32, n), make([]float32, n), make([]float32, n)
	for i := range n {
		t := float64(i) / rate
		det[i] = 0.5
		if t >= 0.40 && t < 0.60 {
			det[i] = 1
		}
		if (t >= 0.20 && t < 0.21) || (t >= 0.70 && t < 0.71) {
			idx[i] = 1
		}
		pos[i] = 0.25
	}
	return &capture.Recording{SampleRateHz: rate, Channels: []capture.Channel{
		{Name: "det", Unit: "V", Samples: det}, {Name: "idx", Unit: "V", Samples: idx}, {Name: "pos", Unit: "V", Samples: pos},
	}}
}

func TestTraceStripDrawsEdgesAndWindows(t *testing.T) {
	test.NewTempApp(t)
	rec := squareCapture()
	lines := []Line{
		{Number: 0, EdgeS: 0.20, FieldStartS: 0.35, FieldEndS: 0.65, BaselineStartS: 0.22, BaselineEndS: 0.30},
		{Number: 1, EdgeS: 0.70, FieldStartS: 0.85, FieldEndS: 1.15, BaselineStartS: 0.72, BaselineEndS: 0.80},
	}
	strip := NewTraceStrip()
	strip.SetData(rec, 0, 1, 2, lines, 0.5)
	strip.ShowLine(0)
	from, to := strip.Window()
	r := test.WidgetRenderer(strip).(*traceRenderer)
	const w, h = 1001, 300
	img := r.paint(w, h).(*image.NRGBA) // scale 1: one pixel per unit
	// Closed form: time s sits at column left + (s−from)/(to−from)·(plot width − 1).
	left, right := traceLeft, w-traceRight
	top, bottom := traceCaptionH, h-traceAxisH
	col := func(s float64) int { return left + int(math.Round((s-from)/(to-from)*float64(right-left-1))) }
	at := func(x, y int) [4]uint8 {
		i := y*img.Stride + 4*x
		return [4]uint8{img.Pix[i], img.Pix[i+1], img.Pix[i+2], img.Pix[i+3]}
	}
	// The index edge of line 0 is a line in the edge ink across the lanes.
	for _, y := range []int{top + 8, (top + bottom) / 2, bottom - 2} {
		if c := at(col(0.20), y); c[0] != traceEdge.R || c[1] != traceEdge.G || c[2] != traceEdge.B {
			t.Errorf("no index edge at column %d, row %d: %v", col(0.20), y, c)
		}
	}
	// The field bar runs along the top from field start to field end.
	mid := col(0.50)
	if c := at(mid, top+4); c[0] != traceFieldBar.R || c[2] != traceFieldBar.B {
		t.Errorf("no field bar at column %d: %v", mid, c)
	}
	if c := at(col(0.32), top+4); c[2] == traceFieldBar.B && c[0] == traceFieldBar.R {
		t.Errorf("field bar drawn before the field starts, column %d", col(0.32))
	}
	// The baseline bar covers 0.22–0.30 s.
	if c := at(col(0.26), top+1); c[0] != traceBaseBar.R || c[1] != traceBaseBar.G {
		t.Errorf("no baseline bar at column %d: %v", col(0.26), c)
	}
	// The detector lane shows its bright stretch near the top of the lane
	// and its dark level near the bottom: the whole-capture range is
	// 0.5…1, drawn over 0.47…1.03 (6 % more at each end).
	laneH := float64(bottom-top) / 3
	ytop, ybot := top+6, top+int(math.Round(laneH))-4
	rowOf := func(v float64) int { return ybot - int(math.Round((v-0.47)/0.56*float64(ybot-ytop))) }
	findTrace := func(x int) int {
		for y := top; y < top+int(laneH); y++ {
			if c := at(x, y); c == [4]uint8{traceColours[0].R, traceColours[0].G, traceColours[0].B, 0xff} {
				return y
			}
		}
		return -1
	}
	if y := findTrace(col(0.50)); y < rowOf(1)-1 || y > rowOf(1)+1 {
		t.Errorf("bright detector drawn at row %d, want %d", y, rowOf(1))
	}
	if y := findTrace(col(0.30)); y < rowOf(0.5)-1 || y > rowOf(0.5)+1 {
		t.Errorf("dark detector drawn at row %d, want %d", y, rowOf(0.5))
	}
}

func TestImageViewZoomKeepsPointOverPointer(t *testing.T) {
	test.NewTempApp(t)
	f := &recon.Frame{Width: 200, Height: 100, PitchXMM: 0.5, PitchYMM: 0.5, OriginXMM: -50, OriginYMM: 25}
	f.Pix = make([]float32, f.Width*f.Height)
	f.Covered = make([]bool, len(f.Pix))
	for i := range f.Pix {
		f.Pix[i], f.Covered[i] = float32(i%f.Width), i%7 != 0
	}
	v := NewImageView()
	win := test.NewWindow(v)
	defer win.Close()
	win.Resize(fyne.NewSize(400, 300))
	v.SetFrame(f, recon.Tone{Window: 200, Level: 100, Gamma: 1})
	pointer := fyne.NewPos(120, 80)
	before := v.pointerAt(pointer)
	v.Scrolled(&fyne.ScrollEvent{PointEvent: fyne.PointEvent{Position: pointer}, Scrolled: fyne.Delta{DY: 10}})
	after := v.pointerAt(pointer)
	if math.Abs(after.XMM-before.XMM) > 1e-3 || math.Abs(after.YMM-before.YMM) > 1e-3 {
		t.Errorf("the point under the pointer moved from (%.3f, %.3f) to (%.3f, %.3f) mm", before.XMM, before.YMM, after.XMM, after.YMM)
	}
	// Fit: the 100 mm × 50 mm frame in a view about 400 × 300 units is
	// limited by its width, so one mm covers width/100 units.
	v.ZoomFit()
	if z, want := v.Zoom(), v.Size().Width/100; math.Abs(float64(z-want)) > 1e-3 {
		t.Errorf("fit zoom %.4f units/mm, want %.4f", z, want)
	}
	// The pixel under the pointer maps back to its own mm position:
	// x = origin + col·pitch (recon.Frame's documented axes).
	p := v.pointerAt(pointer)
	if !p.Inside {
		t.Fatal("pointer is not over the frame")
	}
	if x := f.OriginXMM + float64(p.Col)*f.PitchXMM; math.Abs(x-p.XMM) > f.PitchXMM/2+1e-9 {
		t.Errorf("pixel %d is centred at %.2f mm, pointer at %.2f mm", p.Col, x, p.XMM)
	}
	wantCovered := (p.Row*f.Width+p.Col)%7 != 0
	if p.Covered != wantCovered {
		t.Errorf("covered %v at %d,%d, want %v", p.Covered, p.Col, p.Row, wantCovered)
	}
}

func TestImageViewHatchesNoData(t *testing.T) {
	test.NewTempApp(t)
	f := &recon.Frame{Width: 4, Height: 1, PitchXMM: 1, PitchYMM: 1, Pix: []float32{0, 0, 1, 1}, Covered: []bool{true, false, true, false}}
	v := NewImageView()
	win := test.NewWindow(v)
	defer win.Close()
	win.Resize(fyne.NewSize(400, 100))
	v.SetFrame(f, recon.Tone{Window: 1, Level: 0.5, Gamma: 1})
	r := test.WidgetRenderer(v).(*imageViewRenderer)
	size := v.Size()
	img := r.paint(int(size.Width), int(size.Height)).(*image.NRGBA)
	z := float64(v.Zoom())
	for col := range 4 {
		x := int(float64(size.Width)/2 + (float64(col)-1.5)*z)
		y := int(size.Height / 2)
		i := y*img.Stride + 4*x
		c := img.Pix[i : i+3]
		grey := c[0] == c[1] && c[1] == c[2]
		if f.Covered[col] != grey {
			t.Errorf("column %d (covered %v) painted %v", col, f.Covered[col], c)
		}
	}
}

// A frame that follows another on the same grid with the same tone (a live
// update) is toned again only where it changed, and the view then holds
// what toning the new frame whole gives: round(255·Tone.Map(v)) at each
// covered pixel, the mapping retone documents. A new tone or grid tones
// the frame whole.
func TestImageViewTonesOnlyChangedPixels(t *testing.T) {
	test.NewTempApp(t)
	frame := func(shift float32, covered func(i int) bool) *recon.Frame {
		f := &recon.Frame{Width: 40, Height: 30, PitchXMM: 0.5, PitchYMM: 0.5, OriginXMM: -10, OriginYMM: 7}
		f.Pix = make([]float32, f.Width*f.Height)
		f.Covered = make([]bool, len(f.Pix))
		for i := range f.Pix {
			f.Pix[i], f.Covered[i] = float32(i%f.Width)/40, covered(i)
			if i/f.Width >= 10 {
				f.Pix[i] += shift // the rows the newest lines cross
			}
		}
		return f
	}
	tone := recon.Tone{Window: 1.2, Level: 0.6, Gamma: 1.4}
	v := NewImageView()
	check := func(what string, f *recon.Frame, tone recon.Tone) {
		t.Helper()
		for i, c := range f.Covered {
			if want := uint8(math.Round(255 * tone.Map(f.Pix[i]))); c && v.toned[i] != want {
				t.Fatalf("%s: pixel %d toned %d, want %d", what, i, v.toned[i], want)
			}
		}
	}
	a := frame(0, func(i int) bool { return i < 700 })
	v.SetFrame(a, tone)
	check("the first frame", a, tone)
	b := frame(0.3, func(i int) bool { return i < 1000 })
	v.SetFrame(b, tone)
	check("a frame with new rows and new values", b, tone)
	darker := tone
	darker.Level = 0.8
	v.SetFrame(b, darker)
	check("a new tone", b, darker)
	// The grid grown by two rows at the top and one at the bottom (a live
	// image as the head moves on): b's rows at their new places, new
	// values in the new rows and in one old one, coverage gained and lost.
	g := &recon.Frame{Width: b.Width, Height: b.Height + 3, PitchXMM: b.PitchXMM, PitchYMM: b.PitchYMM, OriginXMM: b.OriginXMM, OriginYMM: b.OriginYMM + 2*b.PitchYMM}
	g.Pix, g.Covered = make([]float32, g.Width*g.Height), make([]bool, g.Width*g.Height)
	for i := range g.Pix {
		g.Pix[i], g.Covered[i] = -0.2+float32(i%7)/5, true
	}
	copy(g.Pix[2*g.Width:], b.Pix)
	copy(g.Covered[2*g.Width:], b.Covered)
	g.Pix[5*g.Width+3] += 0.25
	g.Covered[6*g.Width+4], g.Covered[30*g.Width+1] = false, true
	v.SetFrame(g, darker)
	check("a frame grown by whole rows", g, darker)
	c := frame(0.1, func(i int) bool { return true })
	c.OriginYMM += 0.2
	v.SetFrame(c, darker)
	check("a frame on another grid", c, darker)
}
