package ui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
)

// stripArea lays out the trace strip under its toolbar: the tools
// (objects[0]) at their own size on the left, the legend's entries
// (objects[1:n-1]) in a grid of as many columns as the room beside them
// holds, and the strip (objects[n-1]) in what is left below. The legend
// wraps rather than scrolling or widening the window, and goes under the
// tools when that makes a lower bar than beside them.
type stripArea struct{}

// newStripArea puts tools, the legend's entries and the strip in one
// stripArea container.
func newStripArea(tools fyne.CanvasObject, legend []fyne.CanvasObject, strip fyne.CanvasObject) *fyne.Container {
	objects := append(append([]fyne.CanvasObject{tools}, legend...), strip)
	return container.New(stripArea{}, objects...)
}

// arrange places the tools and the legend in width and returns the bar's
// height (where the strip starts).
func (stripArea) arrange(objects []fyne.CanvasObject, width float32, place bool) float32 {
	tools, entries := objects[0], objects[1:len(objects)-1]
	ts := tools.MinSize()
	gap := 2 * theme.Padding()
	widest, rowH := float32(0), float32(0)
	for _, e := range entries {
		s := e.MinSize()
		widest, rowH = max(widest, s.Width), max(rowH, s.Height)
	}
	// Beside the tools when that makes the lower bar, else under them
	// across the whole width.
	beside := func() (cols int, colW []float32, barH float32) {
		cols, colW = legendColumns(entries, width-ts.Width-gap, gap)
		return cols, colW, max(ts.Height, legendRows(entries, cols)*rowH)
	}
	under := func() (cols int, colW []float32, barH float32) {
		cols, colW = legendColumns(entries, width, gap)
		return cols, colW, ts.Height + legendRows(entries, cols)*rowH
	}
	cols, colW, barH := under()
	x0, top := float32(0), ts.Height
	if width-ts.Width-gap >= widest {
		if c, w, h := beside(); h <= barH {
			cols, colW, barH = c, w, h
			x0, top = ts.Width+gap, (h-legendRows(entries, c)*rowH)/2
		}
	}
	if place {
		tools.Move(fyne.NewPos(0, 0))
		tools.Resize(ts)
		for i, e := range entries {
			x := x0
			for c := range i % cols {
				x += colW[c] + gap
			}
			e.Move(fyne.NewPos(x, top+float32(i/cols)*rowH))
			e.Resize(fyne.NewSize(colW[i%cols], rowH))
		}
	}
	return barH
}

// legendRows is how many rows entries take in cols columns.
func legendRows(entries []fyne.CanvasObject, cols int) float32 {
	return float32((len(entries) + cols - 1) / cols)
}

// legendColumns is the most columns entries (placed row by row) fit in
// room with gap between columns, and the columns' widths.
func legendColumns(entries []fyne.CanvasObject, room, gap float32) (int, []float32) {
	for cols := len(entries); cols > 1; cols-- {
		widths := make([]float32, cols)
		for i, e := range entries {
			widths[i%cols] = max(widths[i%cols], e.MinSize().Width)
		}
		total := gap * float32(cols-1)
		for _, w := range widths {
			total += w
		}
		if total <= room {
			return cols, widths
		}
	}
	w := float32(0)
	for _, e := range entries {
		w = max(w, e.MinSize().Width)
	}
	return 1, []float32{w}
}

func (a stripArea) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	barH := a.arrange(objects, size.Width, true)
	strip := objects[len(objects)-1]
	strip.Move(fyne.NewPos(0, barH))
	strip.Resize(fyne.NewSize(size.Width, max(size.Height-barH, 0)))
}

// MinSize is as wide as the tools and as tall as the tools with the
// legend beside them over the strip's own minimum; a narrower area takes
// the legend's extra rows from the strip.
func (a stripArea) MinSize(objects []fyne.CanvasObject) fyne.Size {
	ts := objects[0].MinSize()
	ss := objects[len(objects)-1].MinSize()
	return fyne.NewSize(max(ts.Width, ss.Width), ts.Height+ss.Height)
}

// stripShare keeps the trace strip tall enough to read on a low screen:
// until the user drags the divider, the split between the image and the
// strip gives the strip its usual share of the height, or stripTall units
// when that share is less, within stripMostShare of the height.
type stripShare struct {
	split *container.Split
	set   float64 // the offset this layout last set (0: none yet)
}

const (
	stripUsualShare = 0.32
	stripTall       = 260
	stripMostShare  = 0.42
)

func newStripShare(split *container.Split) *fyne.Container {
	return container.New(&stripShare{split: split}, split)
}

// offset is the image's share of height h.
func stripOffset(h float32) float64 {
	strip := max(stripUsualShare*float64(h), min(stripTall, stripMostShare*float64(h)))
	return 1 - strip/float64(h)
}

func (s *stripShare) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	if size.Height > 0 && (s.set == 0 || s.split.Offset == s.set) {
		s.split.Offset = stripOffset(size.Height)
		s.set = s.split.Offset
	}
	objects[0].Move(fyne.NewPos(0, 0))
	objects[0].Resize(size)
}

func (s *stripShare) MinSize(objects []fyne.CanvasObject) fyne.Size { return objects[0].MinSize() }
