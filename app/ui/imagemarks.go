package ui

import (
	"image/color"
	"math"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"

	"spotloom/recon/measure"
)

// markColours are the outlines of the measurements drawn on the image, by
// kind: light, saturated colours that read on any grey and differ from
// the violet hatching of no-data pixels.
var markColours = map[measure.Kind]color.NRGBA{
	measure.KindEdge:     {R: 0xff, G: 0x6f, B: 0x3c, A: 0xff},
	measure.KindRegion:   {R: 0x33, G: 0xb5, B: 0xff, A: 0xff},
	measure.KindNPS:      {R: 0xf5, G: 0xc4, B: 0x00, A: 0xff},
	measure.KindProfile:  {R: 0x5c, G: 0xd6, B: 0x5c, A: 0xff},
	measure.KindDistance: {R: 0xff, G: 0x5f, B: 0xa2, A: 0xff},
	measure.KindDots:     {R: 0xc8, G: 0xc8, B: 0xc8, A: 0xff},
}

// markColour is the outline of kind k.
func markColour(k measure.Kind) color.NRGBA {
	if c, ok := markColours[k]; ok {
		return c
	}
	return color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}
}

// drawing is a rectangle or line being drawn, in frame mm.
type drawing struct {
	x0, y0, x1, y1 float64
}

// SetTool chooses what a drag on the image does: "" pans, a kind that
// takes a rectangle or a line draws one (then OnDrawn is called and the
// view goes back to panning, which it tells OnTool).
func (v *ImageView) SetTool(k measure.Kind) {
	v.mu.Lock()
	if !k.TakesRect() && !k.TakesLine() {
		k = ""
	}
	v.tool = k
	v.mu.Unlock()
}

// Tool returns the drawing tool in use ("" for panning).
func (v *ImageView) Tool() measure.Kind {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.tool
}

// SetMarks shows the measurements' shapes over the frame, the one
// labelled selected highlighted.
func (v *ImageView) SetMarks(shapes []measure.Shape, selected string) {
	v.mu.Lock()
	v.marks = measure.CloneList(shapes)
	v.selected = selected
	v.mu.Unlock()
	v.Refresh()
}

// MouseDown notes where a drag starts, so a drawn shape begins exactly
// under the press.
func (v *ImageView) MouseDown(ev *desktop.MouseEvent) {
	v.mu.Lock()
	v.press, v.pressed = ev.Position, true
	v.mu.Unlock()
}

// MouseUp ends a press.
func (v *ImageView) MouseUp(*desktop.MouseEvent) {}

// drawDragged extends the shape being drawn to the pointer; it returns
// false when no tool is chosen (the drag then pans). Call with mu held.
func (v *ImageView) drawDragged(ev *fyne.DragEvent) bool {
	if v.tool == "" || v.frame == nil {
		return false
	}
	v.applyFit()
	if v.drawn == nil {
		start := ev.Position.Subtract(ev.Dragged)
		if v.pressed {
			start = v.press
		}
		x, y := v.toMM(start.X, start.Y)
		v.drawn = &drawing{x0: x, y0: y}
	}
	v.drawn.x1, v.drawn.y1 = v.toMM(ev.Position.X, ev.Position.Y)
	return true
}

// DragEnd ends a pan, or hands the shape drawn to OnDrawn.
func (v *ImageView) DragEnd() {
	v.mu.Lock()
	d, tool, zoom := v.drawn, v.tool, v.zoom
	v.drawn, v.pressed = nil, false
	if d != nil {
		v.tool = ""
	}
	v.mu.Unlock()
	if d == nil {
		return
	}
	v.Refresh()
	if v.OnTool != nil {
		v.OnTool("")
	}
	// A shape less than a few screen units across is a slip, not a choice.
	if math.Hypot(d.x1-d.x0, d.y1-d.y0)*float64(zoom) < 4 {
		return
	}
	if v.OnDrawn != nil {
		v.OnDrawn(tool, [4]float64{d.x0, d.y0, d.x1, d.y1})
	}
}

// markAt returns the label of the mark under pos ("" for none): the
// smallest rectangle that holds it, or a line within a few units.
func (v *ImageView) markAt(pos fyne.Position) string {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	if v.zoom <= 0 {
		return ""
	}
	x, y := v.toMM(pos.X, pos.Y)
	tol := 6 / float64(v.zoom)
	best, bestArea := "", math.Inf(1)
	for _, s := range v.marks {
		switch {
		case s.Rect != nil:
			r := s.Rect
			if x >= math.Min(r.X0, r.X1)-tol && x <= math.Max(r.X0, r.X1)+tol && y >= math.Min(r.Y0, r.Y1)-tol && y <= math.Max(r.Y0, r.Y1)+tol {
				if a := math.Abs((r.X1 - r.X0) * (r.Y1 - r.Y0)); a < bestArea {
					best, bestArea = s.Label, a
				}
			}
		case s.Line != nil:
			if segmentDistance(x, y, *s.Line) <= tol && 0 < bestArea {
				best, bestArea = s.Label, 0
			}
		}
	}
	return best
}

// segmentDistance is the distance from (x, y) to the segment l.
func segmentDistance(x, y float64, l measure.Line) float64 {
	dx, dy := l.X1-l.X0, l.Y1-l.Y0
	t := 0.0
	if n := dx*dx + dy*dy; n > 0 {
		t = math.Max(0, math.Min(1, ((x-l.X0)*dx+(y-l.Y0)*dy)/n))
	}
	return math.Hypot(x-(l.X0+t*dx), y-(l.Y0+t*dy))
}

// toView converts frame mm to view units. Call with mu held and fit
// applied.
func (v *ImageView) toView(x, y float64) (float32, float32) {
	return float32((x-v.centreX)*float64(v.zoom)) + v.size.Width/2, float32((v.centreY-y)*float64(v.zoom)) + v.size.Height/2
}

// markObjects draws the measurements and the shape being drawn, clipped
// to the view (nothing may spill over the toolbars around it).
func (v *ImageView) markObjects() []fyne.CanvasObject {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	if v.frame == nil || v.zoom <= 0 {
		return nil
	}
	var out []fyne.CanvasObject
	w, h := v.size.Width, v.size.Height
	add := func(label string, c color.NRGBA, rect bool, x0, y0, x1, y1 float64, bold bool) {
		ax, ay := v.toView(x0, y0)
		bx, by := v.toView(x1, y1)
		width := float32(2)
		if bold {
			width = 3.5
		}
		var lx, ly float32
		if rect {
			l, t := max(min(ax, bx), 0), max(min(ay, by), 0)
			r, b := min(max(ax, bx), w), min(max(ay, by), h)
			if r <= l || b <= t {
				return
			}
			box := canvas.NewRectangle(color.Transparent)
			box.StrokeColor, box.StrokeWidth = c, width
			if bold {
				box.FillColor = color.NRGBA{R: c.R, G: c.G, B: c.B, A: 0x30}
			}
			box.Move(fyne.NewPos(l, t))
			box.Resize(fyne.NewSize(r-l, b-t))
			out = append(out, box)
			lx, ly = l, t
		} else {
			p, q, ok := clipSegment(ax, ay, bx, by, w, h)
			if !ok {
				return
			}
			line := canvas.NewLine(c)
			line.StrokeWidth = width
			line.Position1, line.Position2 = p, q
			out = append(out, line)
			lx, ly = p.X, p.Y
		}
		if label == "" {
			return
		}
		text := canvas.NewText(label, c)
		text.TextSize = theme.CaptionTextSize()
		text.TextStyle = fyne.TextStyle{Bold: true}
		ts := text.MinSize()
		lx, ly = min(max(lx, 0), w-ts.Width-4), min(max(ly-ts.Height-1, 0), h-ts.Height)
		back := canvas.NewRectangle(color.NRGBA{A: 0xa0})
		back.Move(fyne.NewPos(lx, ly))
		back.Resize(fyne.NewSize(ts.Width+4, ts.Height))
		text.Move(fyne.NewPos(lx+2, ly))
		text.Resize(ts)
		out = append(out, back, text)
	}
	for _, s := range v.marks {
		c, bold := markColour(s.Kind), s.Label == v.selected && s.Label != ""
		if s.Rect != nil {
			add(s.Label, c, true, s.Rect.X0, s.Rect.Y0, s.Rect.X1, s.Rect.Y1, bold)
		} else if s.Line != nil {
			add(s.Label, c, false, s.Line.X0, s.Line.Y0, s.Line.X1, s.Line.Y1, bold)
		}
	}
	if d := v.drawn; d != nil {
		add("", markColour(v.tool), v.tool.TakesRect(), d.x0, d.y0, d.x1, d.y1, false)
	}
	return out
}

// clipSegment clips the segment a–b to the box 0…w × 0…h (Liang and
// Barsky's parametric clipping); ok is false when nothing is left.
func clipSegment(ax, ay, bx, by, w, h float32) (p, q fyne.Position, ok bool) {
	t0, t1 := float32(0), float32(1)
	dx, dy := bx-ax, by-ay
	for _, e := range [4][2]float32{{-dx, ax}, {dx, w - ax}, {-dy, ay}, {dy, h - ay}} {
		pk, qk := e[0], e[1]
		if pk == 0 {
			if qk < 0 {
				return p, q, false
			}
			continue
		}
		t := qk / pk
		if pk < 0 {
			t0 = max(t0, t)
		} else {
			t1 = min(t1, t)
		}
	}
	if t0 > t1 {
		return p, q, false
	}
	return fyne.NewPos(ax+t0*dx, ay+t0*dy), fyne.NewPos(ax+t1*dx, ay+t1*dy), true
}
