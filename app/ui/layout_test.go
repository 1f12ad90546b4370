package ui

import (
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// area is a box in window coordinates.
type area struct{ x0, y0, x1, y1 float32 }

func boxOf(o fyne.CanvasObject) area {
	// AbsolutePositionForObject leaves out the canvas's inset.
	p := fyne.CurrentApp().Driver().AbsolutePositionForObject(o)
	if c := fyne.CurrentApp().Driver().CanvasForObject(o); c != nil {
		inset, _ := c.InteractiveArea()
		p = p.Add(inset)
	}
	s := o.Size()
	return area{p.X, p.Y, p.X + s.Width, p.Y + s.Height}
}

func (r area) inside(o area) bool {
	const slack = 0.5
	return r.x0 >= o.x0-slack && r.y0 >= o.y0-slack && r.x1 <= o.x1+slack && r.y1 <= o.y1+slack
}

func (r area) overlaps(o area) bool {
	const slack = 0.5
	return r.x0 < o.x1-slack && o.x0 < r.x1-slack && r.y0 < o.y1-slack && o.y0 < r.y1-slack
}

// buttons lists the visible buttons under o, leaving out what lies in a
// scrolled container (that may be scrolled out of sight by design).
func buttons(o fyne.CanvasObject) []*widget.Button {
	if !o.Visible() {
		return nil
	}
	switch v := o.(type) {
	case *widget.Button:
		return []*widget.Button{v}
	case *container.Scroll:
		return nil
	case *fyne.Container:
		var out []*widget.Button
		for _, c := range v.Objects {
			out = append(out, buttons(c)...)
		}
		return out
	case fyne.Widget:
		var out []*widget.Button
		if r := widgetRenderer(v); r != nil {
			for _, c := range r.Objects() {
				out = append(out, buttons(c)...)
			}
		}
		return out
	}
	return nil
}

// TestLayoutFitsSmallScreens renders the window at two common laptop
// sizes: the window's minimum size fits, the main regions do not overlap,
// every toolbar button lies inside its toolbar's region and the window,
// and the warnings are in sight.
func TestLayoutFitsSmallScreens(t *testing.T) {
	for _, size := range []fyne.Size{fyne.NewSize(1366, 768), fyne.NewSize(1024, 700)} {
		t.Run(fmt.Sprintf("%.0fx%.0f", size.Width, size.Height), func(t *testing.T) {
			ws, err := snapshotWindow(size, "", nil, Options{})
			if err != nil {
				t.Fatal(err)
			}
			c := ws.win.Canvas()
			if min := c.Content().MinSize(); min.Width > size.Width || min.Height > size.Height {
				t.Errorf("the window needs at least %v, more than the screen's %v", min, size)
			}
			window := area{0, 0, size.Width, size.Height}
			regions := map[string]fyne.CanvasObject{
				"toolbar": ws.topBar, "left column": ws.leftScroll, "middle": ws.middle,
				"right column": ws.rightScroll, "status bar": ws.statusBar,
			}
			for name, o := range regions {
				if !boxOf(o).inside(window) {
					t.Errorf("the %s %v reaches outside the window", name, boxOf(o))
				}
				for other, p := range regions {
					if name < other && boxOf(o).overlaps(boxOf(p)) {
						t.Errorf("the %s %v overlaps the %s %v", name, boxOf(o), other, boxOf(p))
					}
				}
			}
			bars := map[string]struct {
				bar, region fyne.CanvasObject
			}{
				"window toolbar": {ws.topBar, ws.topBar}, "image toolbar": {ws.viewBar, ws.middle},
				"trace toolbar": {ws.stripBar, ws.middle}, "status bar": {ws.statusBar, ws.statusBar},
				"measuring tools": {ws.marking.bar, ws.middle},
			}
			for name, b := range bars {
				bs := buttons(b.bar)
				if len(bs) == 0 {
					t.Errorf("no buttons found in the %s", name)
				}
				for _, btn := range bs {
					if r := boxOf(btn); !r.inside(boxOf(b.region)) || !r.inside(window) {
						t.Errorf("%s: button %q at %v lies outside %v", name, btn.Text, r, boxOf(b.region))
					}
				}
			}
			for _, col := range []struct {
				name           string
				content, outer fyne.CanvasObject
			}{{"left", ws.leftBox, ws.leftScroll}, {"right", ws.facts.object(), ws.rightScroll}, {"measurements", ws.measures.object(), ws.rightScroll}} {
				if need, have := col.content.MinSize().Width, col.outer.Size().Width; need > have {
					t.Errorf("the %s column's content needs %.0f wide, the column is %.0f: its right edge is cut", col.name, need, have)
				}
			}
			checkTraceLegendAndAxes(t, ws)
			checkCaptionsWhole(t, ws)
			if r := boxOf(ws.facts.warnings); !(r.y0 < size.Height-ws.statusBar.Size().Height) {
				t.Errorf("the warnings start at y %.0f, below the visible part of the window", r.y0)
			}
			if dir := os.Getenv("SPOTLOOM_LAYOUT_SHOTS"); dir != "" {
				f, _ := os.Create(filepath.Join(dir, fmt.Sprintf("layout-%.0fx%.0f.png", size.Width, size.Height)))
				png.Encode(f, c.Capture())
				f.Close()
			}
		})
	}
}

// checkTraceLegendAndAxes: the trace strip's legend lies whole in the
// middle column, beside or under its tools and above the strip, with no
// entry over another (it wraps rather than scrolls); and every lane of the
// strip labels at least two voltage ticks, at least a label's height
// (10 units, the small face is 10.5) apart.
func checkTraceLegendAndAxes(t *testing.T, ws *Workstation) {
	t.Helper()
	middle, strip := boxOf(ws.middle), boxOf(ws.strip)
	for i, e := range ws.legend {
		r := boxOf(e)
		if !r.inside(middle) || r.overlaps(strip) || r.overlaps(boxOf(ws.stripBar)) {
			t.Errorf("legend entry %d at %v is cut off or covers the strip %v or its tools %v", i, r, strip, boxOf(ws.stripBar))
		}
		if e.Size().Width < e.MinSize().Width {
			t.Errorf("legend entry %d is %.0f wide, narrower than its text's %.0f", i, e.Size().Width, e.MinSize().Width)
		}
		for j, o := range ws.legend[:i] {
			if r.overlaps(boxOf(o)) {
				t.Errorf("legend entries %d %v and %d %v overlap", j, boxOf(o), i, r)
			}
		}
	}
	p := newTracePainter(nil, 1)
	h, w := int(ws.strip.Size().Height), int(ws.strip.Size().Width)
	rows := p.captionRows(ws.strip.view(), w-p.px(traceRight))
	for lane, a := range p.laneAxes(ws.strip.view(), p.px(traceCaptionH)*len(rows), h-p.px(traceAxisH)) {
		var ys []int
		for k, tick := range a.ticks {
			if a.labelled[k] {
				ys = append(ys, a.toY(tick))
			}
		}
		if len(ys) < 2 {
			t.Errorf("lane %d labels %d voltage ticks (%v), want at least two", lane, len(ys), a.ticks)
		}
		for k := 1; k < len(ys); k++ {
			if ys[k-1]-ys[k] < 10 {
				t.Errorf("lane %d: labels at y %v stand closer than 10 units", lane, ys)
			}
		}
	}
}

func widgetRenderer(w fyne.Widget) fyne.WidgetRenderer { return test.WidgetRenderer(w) }

// checkCaptionsWhole: the trace strip's caption and the cursors' readout,
// with no cursor, one and both, are laid out whole (wrapped, not cut) in
// the strip's width with room left for the lanes; and the pointer's
// read-out in the status bar has room for its text.
func checkCaptionsWhole(t *testing.T, ws *Workstation) {
	t.Helper()
	p := newTracePainter(nil, 1)
	w, h := int(ws.strip.Size().Width), int(ws.strip.Size().Height)
	room := w - p.px(traceRight) - p.px(4)
	from, to := ws.strip.Window()
	for _, c := range [][2]float64{{math.NaN(), math.NaN()}, {0.3, math.NaN()}, {0.3, 0.7}} {
		ws.strip.ClearCursors()
		for k := range c {
			if !math.IsNaN(c[k]) {
				ws.strip.SetCursor(k, from+c[k]*(to-from))
			}
		}
		v := ws.strip.view()
		rows := p.captionRows(v, w-p.px(traceRight))
		var got []string
		for _, r := range rows {
			if width := textWidth(p.face, r.left) + textWidth(p.small, r.right); width > room {
				t.Errorf("caption row %q / %q is %d wide, the strip has %d", r.left, r.right, width, room)
			}
			got = append(got, r.left, r.right)
		}
		if joined := strings.Join(got, " · "); !strings.Contains(joined, strings.Split(v.caption, " · ")[0]) ||
			!v.noCursors() && !strings.Contains(joined, cursorReadout(v)) {
			t.Errorf("caption rows %q leave out part of %q or the readout %q", got, v.caption, cursorReadout(v))
		}
		if plot := h - p.px(traceCaptionH)*len(rows) - p.px(traceAxisH); plot < 3*30 {
			t.Errorf("with cursors %v the caption takes %d rows, leaving %d units for three lanes", c, len(rows), plot)
		}
	}
	ws.strip.ClearCursors()
	ws.pointerMoved(Pointer{Inside: true, Covered: true, Value: -0.012345, XMM: -123.4, YMM: 456.7, Col: 1234, Row: 5678})
	need := fyne.MeasureText(ws.readout.Text, theme.TextSize(), ws.readout.TextStyle).Width + 2*theme.InnerPadding()
	if have := ws.readout.Size().Width; have < need-0.5 {
		t.Errorf("the pointer read-out %q needs %.0f wide, has %.0f", ws.readout.Text, need, have)
	}
}
