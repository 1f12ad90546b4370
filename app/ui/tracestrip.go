package ui

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"sort"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
)

// Colours of the trace strip.
var (
	traceBackground = color.NRGBA{R: 0x16, G: 0x18, B: 0x1c, A: 0xff}
	traceLaneEdge   = color.NRGBA{R: 0x34, G: 0x38, B: 0x40, A: 0xff}
	traceColours    = [3]color.NRGBA{
		{R: 0xf2, G: 0xd0, B: 0x4a, A: 0xff}, // detector
		{R: 0x5c, G: 0xc8, B: 0xf0, A: 0xff}, // index
		{R: 0x7c, G: 0xe0, B: 0x8a, A: 0xff}, // position
	}
	traceField     = color.NRGBA{R: 0x3c, G: 0x78, B: 0xd8, A: 0x48}
	traceBaseline  = color.NRGBA{R: 0xe0, G: 0x80, B: 0x30, A: 0x22}
	traceFieldBar  = color.NRGBA{R: 0x3c, G: 0x78, B: 0xd8, A: 0xff}
	traceBaseBar   = color.NRGBA{R: 0xe0, G: 0x80, B: 0x30, A: 0xff}
	traceEdge      = color.NRGBA{R: 0xff, G: 0x50, B: 0x70, A: 0xff}
	traceThreshold = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0x90}
)

// TraceLegend says what the marks of the strip mean.
func TraceLegend() fyne.CanvasObject {
	item := func(c color.Color, text string) fyne.CanvasObject {
		t := canvas.NewText(text, theme.Color(theme.ColorNameForeground))
		t.TextSize = theme.CaptionTextSize()
		return container.NewHBox(swatch(c), t)
	}
	return container.NewHBox(
		item(traceFieldBar, "field of view"), item(traceBaseBar, "baseline"),
		item(traceEdge, "index edge"), item(traceThreshold, "threshold"))
}

// traceLane is one signal of the strip.
type traceLane struct {
	name    string
	channel int // -1 when the role has no channel
}

// TraceStrip draws the detector, index and position signals around one
// line, with the index edges, the field window and the baseline interval
// drawn over them, so a wrong threshold or delay shows at a glance.
type TraceStrip struct {
	widget.BaseWidget

	mu         sync.Mutex
	rec        *capture.Recording
	lanes      [3]traceLane
	lines      []Line
	chosen     int // index into lines, -1 for none
	threshold  float64
	hasThresh  bool
	prevLanes  [3]traceLane
	ranges     [3][2]float64 // whole-capture min and max of each lane
	rangesOf   *capture.Recording
	windowFrom float64 // seconds shown
	windowTo   float64
	caption    string
}

// NewTraceStrip returns an empty strip.
func NewTraceStrip() *TraceStrip {
	t := &TraceStrip{chosen: -1}
	t.ExtendBaseWidget(t)
	return t
}

// SetData gives the strip the capture, the channels of the three roles
// (detector, index, position; -1 for none), the lines found and the index
// threshold (NaN when unknown).
func (t *TraceStrip) SetData(rec *capture.Recording, detector, index, position int, lines []Line, threshold float64) {
	t.mu.Lock()
	t.rec = rec
	old := t.lanes
	t.lanes = [3]traceLane{{"detector", detector}, {"index", index}, {"position", position}}
	t.prevLanes = old
	t.lines = lines
	if rec != t.rangesOf || t.lanesChanged(detector, index, position) {
		t.rangesOf = rec
		for i, lane := range t.lanes {
			t.ranges[i] = channelRange(rec, lane.channel)
		}
	}
	t.threshold, t.hasThresh = threshold, !math.IsNaN(threshold)
	if t.chosen >= len(lines) {
		t.chosen = len(lines) - 1
	}
	if t.chosen < 0 && len(lines) > 0 {
		t.chosen = len(lines) / 2
	}
	t.placeWindow()
	t.mu.Unlock()
	t.Refresh()
}

func (t *TraceStrip) lanesChanged(detector, index, position int) bool {
	return t.prevLanes[0].channel != detector || t.prevLanes[1].channel != index || t.prevLanes[2].channel != position
}

// channelRange is the smallest and largest sample of a channel. Each lane
// is scaled to its channel's whole range, so a steady position level
// stays a flat line instead of its noise filling the lane.
func channelRange(rec *capture.Recording, ch int) [2]float64 {
	if rec == nil || ch < 0 || ch >= len(rec.Channels) || len(rec.Channels[ch].Samples) == 0 {
		return [2]float64{0, 1}
	}
	s := rec.Channels[ch].Samples
	lo, hi := s[0], s[0]
	for _, v := range s {
		lo, hi = min(lo, v), max(hi, v)
	}
	return [2]float64{float64(lo), float64(hi)}
}

// ShowLine chooses line i (an index into the lines given to SetData).
func (t *TraceStrip) ShowLine(i int) {
	t.mu.Lock()
	if i < 0 || i >= len(t.lines) || i == t.chosen {
		t.mu.Unlock()
		return
	}
	t.chosen = i
	t.placeWindow()
	t.mu.Unlock()
	t.Refresh()
}

// Chosen returns the index of the line shown, or -1.
func (t *TraceStrip) Chosen() int {
	t.mu.Lock()
	defer t.mu.Unlock()
	return t.chosen
}

// Window returns the time span shown, in seconds.
func (t *TraceStrip) Window() (from, to float64) {
	t.mu.Lock()
	defer t.mu.Unlock()
	return t.windowFrom, t.windowTo
}

// placeWindow shows the chosen line from a little before its index edge
// to a little after the next one. Call with mu held.
func (t *TraceStrip) placeWindow() {
	t.caption = "No line to show"
	if t.chosen < 0 || t.chosen >= len(t.lines) {
		t.windowFrom, t.windowTo = 0, 0
		return
	}
	l := t.lines[t.chosen]
	start, end := lineSpan(t.lines, t.chosen)
	margin := 0.12 * (end - start)
	t.windowFrom, t.windowTo = start-margin, end+margin
	repaired := ""
	if l.Repaired {
		repaired = " (edge filled in)"
	}
	t.caption = fmt.Sprintf("Line %d of %d · aperture %d · stroke %d · edge at %.4f s%s · field %.2f–%.2f ms after the edge · y %.1f mm",
		l.Number, len(t.lines), l.Aperture, l.Stroke, l.EdgeS, repaired,
		1000*(l.FieldStartS-l.EdgeS), 1000*(l.FieldEndS-l.EdgeS), l.YMM)
}

// hasBaseline says whether the line has a beam-off interval (the sine law
// has none, and leaves both ends at zero).
func (l Line) hasBaseline() bool { return l.BaselineEndS > l.BaselineStartS }

// lineSpan is the time span that shows line i whole: its index edge, its
// field, its baseline when it has one nearby, and the next distinct edge
// (lines of one mirror period share an edge, so "next" skips equal ones).
func lineSpan(lines []Line, i int) (start, end float64) {
	l := lines[i]
	period := 0.0
	for j := i + 1; j < len(lines); j++ {
		if d := lines[j].EdgeS - l.EdgeS; d > 0 {
			period = d
			break
		}
	}
	for j := i - 1; j >= 0 && !(period > 0); j-- {
		period = l.EdgeS - lines[j].EdgeS
	}
	if !(period > 0) {
		period = math.Max(math.Abs(l.FieldEndS-l.EdgeS), 1e-3)
	}
	start = math.Min(l.EdgeS, l.FieldStartS)
	end = math.Max(l.EdgeS+period, l.FieldEndS)
	if l.hasBaseline() && l.EdgeS-l.BaselineStartS < 3*period {
		start = math.Min(start, l.BaselineStartS)
		if l.BaselineEndS-l.EdgeS < 3*period {
			end = math.Max(end, l.BaselineEndS)
		}
	}
	return start, end
}

// CreateRenderer makes the strip's renderer.
func (t *TraceStrip) CreateRenderer() fyne.WidgetRenderer {
	r := &traceRenderer{strip: t}
	r.raster = canvas.NewRaster(r.paint)
	r.caption = canvas.NewText("", theme.Color(theme.ColorNameForeground))
	r.caption.TextSize = theme.CaptionTextSize()
	for i := range r.labels {
		r.labels[i] = canvas.NewText("", traceColours[i])
		r.labels[i].TextSize = theme.CaptionTextSize()
	}
	return r
}

type traceRenderer struct {
	strip   *TraceStrip
	raster  *canvas.Raster
	caption *canvas.Text
	labels  [3]*canvas.Text
	size    fyne.Size
}

const traceHeader = 18 // units above the lanes for the caption

func (r *traceRenderer) Layout(size fyne.Size) {
	r.size = size
	r.raster.Move(fyne.NewPos(0, traceHeader))
	r.raster.Resize(fyne.NewSize(size.Width, size.Height-traceHeader))
	r.caption.Move(fyne.NewPos(4, 1))
	r.caption.Resize(fyne.NewSize(size.Width-8, traceHeader-2))
	laneH := (size.Height - traceHeader) / 3
	for i, l := range r.labels {
		l.Move(fyne.NewPos(6, traceHeader+float32(i)*laneH+2))
		l.Resize(l.MinSize())
	}
}

func (r *traceRenderer) MinSize() fyne.Size { return fyne.NewSize(200, 150) }

func (r *traceRenderer) Refresh() {
	s := r.strip
	s.mu.Lock()
	r.caption.Text = s.caption
	for i, lane := range s.lanes {
		label := lane.name
		if s.rec != nil && lane.channel >= 0 && lane.channel < len(s.rec.Channels) {
			c := s.rec.Channels[lane.channel]
			label = fmt.Sprintf("%s · ch %d %s (%s)", lane.name, lane.channel, c.Name, c.Unit)
		} else if lane.name != "" {
			label = lane.name + " · none"
		}
		r.labels[i].Text = label
	}
	s.mu.Unlock()
	r.Layout(r.size)
	r.caption.Refresh()
	for _, l := range r.labels {
		l.Refresh()
	}
	r.raster.Refresh()
}

func (r *traceRenderer) Objects() []fyne.CanvasObject {
	return []fyne.CanvasObject{r.raster, r.caption, r.labels[0], r.labels[1], r.labels[2]}
}

func (r *traceRenderer) Destroy() {}

// paint draws the lanes at screen resolution: for every screen column the
// minimum-to-maximum span of the samples it covers, so no peak is lost
// however many samples fall in a column.
func (r *traceRenderer) paint(w, h int) image.Image {
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	fill(img, traceBackground)
	s := r.strip
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.rec == nil || s.rec.SampleRateHz <= 0 || !(s.windowTo > s.windowFrom) || w < 2 || h < 6 {
		return img
	}
	t0, t1 := s.windowFrom, s.windowTo
	toX := func(ts float64) int { return int(math.Round((ts - t0) / (t1 - t0) * float64(w-1))) }
	laneH := h / 3

	// Bands first, so the traces draw over them.
	lo := sort.Search(len(s.lines), func(i int) bool { return s.lines[i].EdgeS >= t0-(t1-t0) })
	for i := lo; i < len(s.lines) && s.lines[i].EdgeS <= t1+(t1-t0); i++ {
		l := s.lines[i]
		if l.hasBaseline() {
			shade(img, toX(l.BaselineStartS), toX(l.BaselineEndS), 0, h, traceBaseline)
			// Solid bars along the top say the same where the traces cover the bands.
			shade(img, toX(l.BaselineStartS), toX(l.BaselineEndS), 0, 3, traceBaseBar)
		}
		shade(img, toX(l.FieldStartS), toX(l.FieldEndS), 0, h, traceField)
		shade(img, toX(l.FieldStartS), toX(l.FieldEndS), 3, 6, traceFieldBar)
	}
	for lane := 1; lane < 3; lane++ {
		hline(img, 0, w, lane*laneH, traceLaneEdge)
	}

	for lane, tl := range s.lanes {
		if tl.channel < 0 || tl.channel >= len(s.rec.Channels) {
			continue
		}
		samples := s.rec.Channels[tl.channel].Samples
		vmin, vmax := s.ranges[lane][0], s.ranges[lane][1]
		if lane == 1 && s.hasThresh {
			vmin, vmax = math.Min(vmin, s.threshold), math.Max(vmax, s.threshold)
		}
		if !(vmax > vmin) {
			vmax, vmin = vmin+1, vmin-1
		}
		top, bottom := lane*laneH+4, (lane+1)*laneH-4
		toY := func(v float64) int {
			return bottom - int(math.Round((v-vmin)/(vmax-vmin)*float64(bottom-top)))
		}
		if lane == 1 && s.hasThresh {
			y := toY(s.threshold)
			for x := 0; x < w; x += 6 {
				hline(img, x, min(x+3, w), y, traceThreshold)
			}
		}
		prevLo, prevHi := -1, -1
		for x := 0; x < w; x++ {
			a, b, ok := columnSamples(x, w, t0, t1, s.rec.SampleRateHz, len(samples))
			if !ok {
				prevLo, prevHi = -1, -1
				continue
			}
			mn, mx := samples[a], samples[a]
			for _, v := range samples[a:b] {
				mn, mx = min(mn, v), max(mx, v)
			}
			yLo, yHi := toY(float64(mx)), toY(float64(mn))
			// Join to the previous column so steep edges stay connected.
			if prevLo >= 0 {
				if yLo > prevHi {
					yLo = prevHi
				}
				if yHi < prevLo {
					yHi = prevLo
				}
			}
			vline(img, x, yLo, yHi+1, traceColours[lane])
			prevLo, prevHi = toY(float64(mx)), toY(float64(mn))
		}
	}
	for i := lo; i < len(s.lines) && s.lines[i].EdgeS <= t1+(t1-t0); i++ {
		x := toX(s.lines[i].EdgeS)
		c := traceEdge
		if s.lines[i].Repaired {
			c = color.NRGBA{R: 0xff, G: 0xa0, B: 0xff, A: 0xff}
		}
		vline(img, x, 0, h, c)
		if i == s.chosen {
			vline(img, x+1, 0, h, c)
		}
	}
	return img
}

// columnSamples is the span [a, b) of sample indices that screen column x
// of w covers when the strip shows t0…t1 seconds; ok is false when the
// column lies wholly before the first or after the last sample. The window
// may start before the capture (a line near its start) or end after it.
func columnSamples(x, w int, t0, t1, rateHz float64, frames int) (a, b int, ok bool) {
	from := (t0 + (t1-t0)*float64(x)/float64(w)) * rateHz
	to := (t0 + (t1-t0)*float64(x+1)/float64(w)) * rateHz
	if !(to > 0) || !(from < float64(frames)) || frames <= 0 {
		return 0, 0, false
	}
	a = int(math.Floor(math.Max(from, 0)))
	b = int(math.Floor(math.Min(to, float64(frames))))
	a = min(a, frames-1)
	b = min(max(b, a+1), frames)
	return a, b, true
}

func blend(dst []uint8, c color.NRGBA) {
	a := uint32(c.A)
	for k, v := range [3]uint8{c.R, c.G, c.B} {
		dst[k] = uint8((uint32(v)*a + uint32(dst[k])*(255-a)) / 255)
	}
	dst[3] = 0xff
}

func shade(img *image.NRGBA, x0, x1, y0, y1 int, c color.NRGBA) {
	b := img.Bounds()
	x0, x1 = max(x0, 0), min(x1, b.Dx())
	y0, y1 = max(y0, 0), min(y1, b.Dy())
	for y := y0; y < y1; y++ {
		for x := x0; x < x1; x++ {
			blend(img.Pix[y*img.Stride+4*x:], c)
		}
	}
}

func vline(img *image.NRGBA, x, y0, y1 int, c color.NRGBA) { shade(img, x, x+1, y0, y1, c) }
func hline(img *image.NRGBA, x0, x1, y int, c color.NRGBA) { shade(img, x0, x1, y, y+1, c) }
