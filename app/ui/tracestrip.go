package ui

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
)

// traceLegend says what the marks of the strip mean, one entry for each,
// with the strip's own inks on its paper ground.
func traceLegend() []fyne.CanvasObject {
	item := func(c color.Color, text string) fyne.CanvasObject {
		t := canvas.NewText(text, theme.Color(theme.ColorNameForeground))
		t.TextSize = theme.CaptionTextSize()
		return container.NewHBox(traceSwatch(c), t)
	}
	return []fyne.CanvasObject{
		item(traceColours[0], "detector"), item(traceColours[1], "index"), item(traceColours[2], "position"),
		item(traceFieldBar, "field"), item(traceBaseBar, "baseline"),
		item(traceEdge, "edge"), item(traceThreshold, "threshold"),
		item(traceCursors[0], "cursor A"), item(traceCursors[1], "cursor B"),
	}
}

// traceSwatch is a small piece of the strip: its paper with a bar of ink
// c across it, so the inks read the same beside the dark window as on the
// strip.
func traceSwatch(c color.Color) fyne.CanvasObject {
	paper := canvas.NewRectangle(tracePaper)
	paper.SetMinSize(fyne.NewSize(18, 12))
	paper.StrokeColor = traceLaneEdge
	paper.StrokeWidth = 1
	bar := canvas.NewRectangle(c)
	bar.SetMinSize(fyne.NewSize(12, 4))
	return container.NewCenter(container.NewStack(paper, container.NewCenter(bar)))
}

// traceLane is one signal of the strip.
type traceLane struct {
	name    string
	channel int // -1 when the role has no channel
}

// TraceStrip draws the detector, index and position signals around one
// line on a time axis in ms from the line's index edge, each lane with its
// own voltage axis, with the index edges, the field window, the baseline
// interval and the index threshold drawn over them, so a wrong threshold
// or delay shows at a glance. Two cursors read Δt and ΔV; the wheel zooms
// in time.
type TraceStrip struct {
	widget.BaseWidget

	mu        sync.Mutex
	rec       *capture.Recording
	lanes     [3]traceLane
	lines     []Line
	chosen    int // index into lines, -1 for none
	threshold float64
	hasThresh bool
	prevLanes [3]traceLane
	ranges    [3][2]float64 // whole-capture min and max of each lane
	rangesOf  *capture.Recording
	lineFrom  float64 // the chosen line's own span, seconds
	lineTo    float64
	// zoomFrom and zoomTo are the span shown in seconds from the chosen
	// line's edge when zoomed, so stepping lines keeps the zoom.
	zoomed           bool
	zoomFrom, zoomTo float64
	// cursors are in seconds from the chosen line's edge, NaN when unset,
	// so stepping lines keeps them where the lines are compared.
	cursors  [2]float64
	dragging int // the cursor a drag moves, -1 for a pan, -2 for none
	caption  string
	// live is set while the capture is still recorded (SetLive); total is
	// then the number of lines so far, of which lines are the newest.
	live  bool
	total int
}

// NewTraceStrip returns an empty strip.
func NewTraceStrip() *TraceStrip {
	t := &TraceStrip{chosen: -1, cursors: [2]float64{math.NaN(), math.NaN()}, dragging: -2}
	t.ExtendBaseWidget(t)
	return t
}

// SetData gives the strip the capture, the channels of the three roles
// (detector, index, position; -1 for none), the lines found and the index
// threshold (NaN when unknown).
func (t *TraceStrip) SetData(rec *capture.Recording, detector, index, position int, lines []Line, threshold float64) {
	t.setData(rec, [3]int{detector, index, position}, lines, threshold, nil, 0)
}

// SetLive gives the strip a capture still being recorded: lines are its
// newest (a live build lists only those), total how many there are so
// far, and ranges each lane's range so far, kept by the recorder, so no
// update scans the whole capture. The strip shows the newest line at every
// update, keeping its zoom and cursors while the capture grows.
func (t *TraceStrip) SetLive(rec *capture.Recording, detector, index, position int, lines []Line, threshold float64, ranges [3][2]float64, total int) {
	t.setData(rec, [3]int{detector, index, position}, lines, threshold, &ranges, total)
}

func (t *TraceStrip) setData(rec *capture.Recording, ch [3]int, lines []Line, threshold float64, ranges *[3][2]float64, total int) {
	t.mu.Lock()
	growing := ranges != nil && t.live
	if rec != t.rec && !growing {
		t.zoomed = false
		t.cursors = [2]float64{math.NaN(), math.NaN()}
	}
	t.live, t.total = ranges != nil, total
	t.rec = rec
	old := t.lanes
	t.lanes = [3]traceLane{{"detector", ch[0]}, {"index", ch[1]}, {"position", ch[2]}}
	t.prevLanes = old
	t.lines = lines
	switch {
	case ranges != nil:
		t.ranges, t.rangesOf = *ranges, nil
	case rec != t.rangesOf || t.lanesChanged(ch[0], ch[1], ch[2]):
		t.rangesOf = rec
		for i, lane := range t.lanes {
			t.ranges[i] = channelRange(rec, lane.channel)
		}
	}
	t.threshold, t.hasThresh = threshold, !math.IsNaN(threshold)
	if t.chosen >= len(lines) || t.live {
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

// Window returns the time span shown, in seconds from the capture's start.
func (t *TraceStrip) Window() (from, to float64) {
	t.mu.Lock()
	defer t.mu.Unlock()
	return t.window()
}

// window is the span shown. Call with mu held.
func (t *TraceStrip) window() (from, to float64) {
	if t.zoomed && t.chosen >= 0 {
		edge := t.lines[t.chosen].EdgeS
		return edge + t.zoomFrom, edge + t.zoomTo
	}
	return t.lineFrom, t.lineTo
}

// edge is the time of the chosen line's index edge. Call with mu held.
func (t *TraceStrip) edge() float64 {
	if t.chosen < 0 || t.chosen >= len(t.lines) {
		return 0
	}
	return t.lines[t.chosen].EdgeS
}

// ZoomTime narrows the span shown by factor (above 1 zooms in) keeping
// the time aboutS (seconds from the capture's start) where it is. The span
// stays between 8 samples and the whole capture.
func (t *TraceStrip) ZoomTime(factor, aboutS float64) {
	t.mu.Lock()
	defer t.Refresh()
	defer t.mu.Unlock()
	if t.chosen < 0 || t.rec == nil || !(factor > 0) || t.rec.SampleRateHz <= 0 {
		return
	}
	from, to := t.window()
	if !(to > from) {
		return
	}
	if math.IsNaN(aboutS) || aboutS < from || aboutS > to {
		aboutS = (from + to) / 2
	}
	span := (to - from) / factor
	span = math.Min(math.Max(span, 8/t.rec.SampleRateHz), math.Max(t.rec.DurationS(), t.lineTo-t.lineFrom))
	k := (aboutS - from) / (to - from)
	edge := t.edge()
	t.zoomFrom = aboutS - k*span - edge
	t.zoomTo = t.zoomFrom + span
	t.zoomed = true
}

// PanTime moves the span shown by deltaS seconds.
func (t *TraceStrip) PanTime(deltaS float64) {
	t.mu.Lock()
	from, to := t.window()
	if t.chosen >= 0 && to > from && !math.IsNaN(deltaS) {
		edge := t.edge()
		t.zoomFrom, t.zoomTo, t.zoomed = from+deltaS-edge, to+deltaS-edge, true
	}
	t.mu.Unlock()
	t.Refresh()
}

// ResetTime shows the chosen line whole again.
func (t *TraceStrip) ResetTime() {
	t.mu.Lock()
	t.zoomed = false
	t.mu.Unlock()
	t.Refresh()
}

// SetCursor puts cursor k (0 for A, 1 for B) at atS seconds from the
// capture's start; NaN removes it.
func (t *TraceStrip) SetCursor(k int, atS float64) {
	if k < 0 || k > 1 {
		return
	}
	t.mu.Lock()
	t.cursors[k] = atS - t.edge()
	t.mu.Unlock()
	t.Refresh()
}

// ClearCursors removes both cursors.
func (t *TraceStrip) ClearCursors() {
	t.mu.Lock()
	t.cursors = [2]float64{math.NaN(), math.NaN()}
	t.mu.Unlock()
	t.Refresh()
}

// Reading returns what the cursors read on the line shown.
func (t *TraceStrip) Reading() traceReading {
	v := t.view()
	return v.reading()
}

// view copies what one picture needs.
func (t *TraceStrip) view() *traceView {
	t.mu.Lock()
	defer t.mu.Unlock()
	v := &traceView{rec: t.rec, lanes: t.lanes, lines: t.lines, chosen: t.chosen,
		threshold: t.threshold, hasThresh: t.hasThresh, ranges: t.ranges, caption: t.caption}
	v.from, v.to = t.window()
	v.edgeS = t.edge()
	for k, c := range t.cursors {
		v.cursors[k] = v.edgeS + c
	}
	for i, lane := range t.lanes {
		v.labels[i] = lane.name + " · none"
		if t.rec != nil && lane.channel >= 0 && lane.channel < len(t.rec.Channels) {
			c := t.rec.Channels[lane.channel]
			v.labels[i] = fmt.Sprintf("%s · %s", lane.name, channelOption(lane.channel, c))
			v.units[i] = c.Unit
		}
	}
	return v
}

// Picture draws the strip as it is shown, at width×height units and scale
// pixels per unit: the picture a user saves has the same inks and axes.
func (t *TraceStrip) Picture(width, height float32, scale float64) image.Image {
	return paintTraces(t.view(), int(float64(width)*scale), int(float64(height)*scale), scale)
}

// placeWindow shows the chosen line from a little before its index edge
// to a little after the next one. Call with mu held.
func (t *TraceStrip) placeWindow() {
	t.caption = "No line to show"
	if t.chosen < 0 || t.chosen >= len(t.lines) {
		t.lineFrom, t.lineTo = 0, 0
		return
	}
	l := t.lines[t.chosen]
	start, end := lineSpan(t.lines, t.chosen)
	margin := 0.12 * (end - start)
	t.lineFrom, t.lineTo = start-margin, end+margin
	repaired := ""
	if l.Repaired {
		repaired = " (edge filled in)"
	}
	of := fmt.Sprintf("of %d", len(t.lines))
	if t.live {
		of = fmt.Sprintf("of %d so far", t.total)
	}
	stroke := ""
	if l.Stroke >= 0 {
		stroke = fmt.Sprintf(" · stroke %d", l.Stroke)
	}
	t.caption = fmt.Sprintf("Line %d %s · aperture %d%s · edge at %.4f s%s · field %.2f–%.2f ms · y %.1f mm",
		l.Number, of, l.Aperture, stroke, l.EdgeS, repaired,
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

// timeAt is the time under x units from the strip's left. Call with mu held.
func (t *TraceStrip) timeAt(x float32) float64 {
	from, to := t.window()
	width := float64(t.Size().Width) - traceLeft - traceRight
	if width <= 0 {
		return math.NaN()
	}
	return from + (float64(x)-traceLeft)/width*(to-from)
}

// Tapped puts cursor A under the pointer.
func (t *TraceStrip) Tapped(ev *fyne.PointEvent) { t.placeCursor(0, ev.Position.X) }

// TappedSecondary puts cursor B under the pointer.
func (t *TraceStrip) TappedSecondary(ev *fyne.PointEvent) { t.placeCursor(1, ev.Position.X) }

func (t *TraceStrip) placeCursor(k int, x float32) {
	t.mu.Lock()
	at := t.timeAt(x)
	t.mu.Unlock()
	if !math.IsNaN(at) {
		t.SetCursor(k, at)
	}
}

// Scrolled zooms in time about the pointer: one wheel step is 1.25.
func (t *TraceStrip) Scrolled(ev *fyne.ScrollEvent) {
	steps := math.Max(-1, math.Min(1, float64(ev.Scrolled.DY)/10))
	if steps == 0 {
		return
	}
	t.mu.Lock()
	at := t.timeAt(ev.Position.X)
	t.mu.Unlock()
	t.ZoomTime(math.Pow(1.25, steps), at)
}

// Dragged moves the cursor nearest the pointer when the drag starts on
// one, else pans in time.
func (t *TraceStrip) Dragged(ev *fyne.DragEvent) {
	t.mu.Lock()
	if t.dragging == -2 {
		t.dragging = -1
		start := ev.Position.X - ev.Dragged.DX
		from, to := t.window()
		width := float64(t.Size().Width) - traceLeft - traceRight
		for k, c := range t.cursors {
			if math.IsNaN(c) || width <= 0 {
				continue
			}
			x := traceLeft + (t.edge()+c-from)/(to-from)*width
			if math.Abs(x-float64(start)) <= 8 {
				t.dragging = k
			}
		}
	}
	k := t.dragging
	from, to := t.window()
	width := float64(t.Size().Width) - traceLeft - traceRight
	at := t.timeAt(ev.Position.X)
	t.mu.Unlock()
	switch {
	case k >= 0:
		t.SetCursor(k, at)
	case width > 0:
		t.PanTime(-float64(ev.Dragged.DX) / width * (to - from))
	}
}

// DragEnd ends a cursor move or a pan.
func (t *TraceStrip) DragEnd() {
	t.mu.Lock()
	t.dragging = -2
	t.mu.Unlock()
}

// Cursor shows a cross over the traces.
func (t *TraceStrip) Cursor() desktop.Cursor { return desktop.CrosshairCursor }

// CreateRenderer makes the strip's renderer.
func (t *TraceStrip) CreateRenderer() fyne.WidgetRenderer {
	r := &traceRenderer{strip: t}
	r.raster = canvas.NewRaster(r.paint)
	return r
}

type traceRenderer struct {
	strip  *TraceStrip
	raster *canvas.Raster
	size   fyne.Size
}

func (r *traceRenderer) Layout(size fyne.Size) {
	r.size = size
	r.raster.Move(fyne.NewPos(0, 0))
	r.raster.Resize(size)
}

func (r *traceRenderer) MinSize() fyne.Size { return fyne.NewSize(240, 150) }

func (r *traceRenderer) Refresh() { r.raster.Refresh() }

func (r *traceRenderer) Objects() []fyne.CanvasObject { return []fyne.CanvasObject{r.raster} }

func (r *traceRenderer) Destroy() {}

// paint draws the strip at screen resolution: for every screen column the
// minimum-to-maximum span of the samples it covers, so no peak is lost
// however many samples fall in a column.
func (r *traceRenderer) paint(w, h int) image.Image {
	scale := 1.0
	if r.size.Width > 0 {
		scale = float64(w) / float64(r.size.Width)
	}
	return paintTraces(r.strip.view(), w, h, scale)
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
