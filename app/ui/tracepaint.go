package ui

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"sort"
	"strings"
	"sync"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"

	"spotloom/capture"
)

// The strip's own palette: dark inks on a paper ground, one ink per role,
// so the strip reads like a chart and not like an instrument's screen. The
// legend, the role labels of the source panel and the saved picture of the
// strip all take their colours from here.
var (
	tracePaper    = color.NRGBA{R: 0xf6, G: 0xf3, B: 0xea, A: 0xff}
	traceInk      = color.NRGBA{R: 0x2e, G: 0x2b, B: 0x26, A: 0xff}
	traceMuted    = color.NRGBA{R: 0x76, G: 0x70, B: 0x64, A: 0xff}
	traceLaneEdge = color.NRGBA{R: 0xb9, G: 0xb2, B: 0xa2, A: 0xff}
	traceGrid     = color.NRGBA{R: 0xe2, G: 0xdc, B: 0xce, A: 0xff}
	// traceColours are the inks of the detector, index and position lanes.
	traceColours = [3]color.NRGBA{
		{R: 0x1f, G: 0x4e, B: 0x8c, A: 0xff}, // detector: ink blue
		{R: 0xb2, G: 0x3a, B: 0x1e, A: 0xff}, // index: brick
		{R: 0x6a, G: 0x3d, B: 0x8f, A: 0xff}, // position: plum
	}
	traceField     = color.NRGBA{R: 0x5a, G: 0x9b, B: 0xd0, A: 0x38}
	traceBaseline  = color.NRGBA{R: 0xd9, G: 0xa5, B: 0x21, A: 0x2c}
	traceFieldBar  = color.NRGBA{R: 0x5a, G: 0x9b, B: 0xd0, A: 0xff}
	traceBaseBar   = color.NRGBA{R: 0xd9, G: 0xa5, B: 0x21, A: 0xff}
	traceEdge      = traceInk
	traceRepaired  = color.NRGBA{R: 0xe0, G: 0x7b, B: 0x00, A: 0xff}
	traceThreshold = color.NRGBA{R: 0x7a, G: 0x22, B: 0x0e, A: 0xff}
	traceCursors   = [2]color.NRGBA{
		{R: 0x00, G: 0x7a, B: 0x5e, A: 0xff}, // A: green
		{R: 0xb0, G: 0x00, B: 0x84, A: 0xff}, // B: magenta
	}
)

// Geometry of the strip in Fyne units; the painter scales it to pixels.
const (
	traceCaptionH = 18 // caption and cursor readout
	traceAxisH    = 16 // time tick labels
	traceLeft     = 58 // voltage tick labels
	traceRight    = 8
	traceTickGap  = 12 // least distance between voltage tick labels
)

var cursorNames = [2]string{"A", "B"}

// traceView is everything one picture of the strip needs, copied out of
// the strip so painting holds no lock and a saved picture is the same.
type traceView struct {
	rec       *capture.Recording
	lanes     [3]traceLane
	labels    [3]string
	units     [3]string
	lines     []Line
	chosen    int
	threshold float64
	hasThresh bool
	ranges    [3][2]float64
	from, to  float64 // seconds shown
	edgeS     float64 // the chosen line's index edge: time zero of the axis
	cursors   [2]float64
	caption   string
}

// laneRange is the span of values lane i is drawn over: its channel's
// whole range (with the threshold for the index), a little wider.
func (v *traceView) laneRange(i int) (lo, hi float64) {
	lo, hi = v.ranges[i][0], v.ranges[i][1]
	if i == 1 && v.hasThresh {
		lo, hi = math.Min(lo, v.threshold), math.Max(hi, v.threshold)
	}
	if !(hi > lo) {
		return lo - 1, hi + 1
	}
	pad := 0.06 * (hi - lo)
	return lo - pad, hi + pad
}

// reading is what the two cursors read.
type traceReading struct {
	// AtMS are the cursors' times in ms from the index edge, NaN when unset.
	AtMS [2]float64
	// DtMS is B − A in ms, NaN unless both are set.
	DtMS float64
	// Value are the lanes' samples at A and B; Has says which exist.
	Value [3][2]float64
	Has   [3][2]bool
	// DV is B − A per lane; HasDV says where both exist.
	DV    [3]float64
	HasDV [3]bool
}

func (v *traceView) reading() traceReading {
	var r traceReading
	for k, c := range v.cursors {
		r.AtMS[k] = 1000 * (c - v.edgeS)
	}
	r.DtMS = r.AtMS[1] - r.AtMS[0]
	for i, lane := range v.lanes {
		if v.rec == nil || lane.channel < 0 || lane.channel >= len(v.rec.Channels) {
			continue
		}
		for k, c := range v.cursors {
			r.Value[i][k], r.Has[i][k] = sampleAt(v.rec.Channels[lane.channel].Samples, v.rec.SampleRateHz, c)
		}
		if r.Has[i][0] && r.Has[i][1] {
			r.DV[i], r.HasDV[i] = r.Value[i][1]-r.Value[i][0], true
		}
	}
	return r
}

var traceFont = sync.OnceValues(func() (*opentype.Font, error) { return opentype.Parse(goregular.TTF) })

var traceFaces struct {
	sync.Mutex
	bySize map[int]font.Face
}

// traceFace is the Go font at px pixels (nil if it cannot be loaded, when
// the strip is drawn without text).
func traceFace(px int) font.Face {
	traceFaces.Lock()
	defer traceFaces.Unlock()
	if f, ok := traceFaces.bySize[px]; ok {
		return f
	}
	fnt, err := traceFont()
	if err != nil {
		return nil
	}
	face, err := opentype.NewFace(fnt, &opentype.FaceOptions{Size: float64(px), DPI: 72, Hinting: font.HintingFull})
	if err != nil {
		return nil
	}
	if traceFaces.bySize == nil {
		traceFaces.bySize = map[int]font.Face{}
	}
	traceFaces.bySize[px] = face
	return face
}

// painter draws text and lines on one picture of the strip.
type tracePainter struct {
	img   *image.NRGBA
	face  font.Face
	small font.Face
	scale float64
}

// newTracePainter paints on img at scale pixels per unit.
func newTracePainter(img *image.NRGBA, scale float64) *tracePainter {
	return &tracePainter{img: img, scale: scale, face: traceFace(int(math.Round(12 * scale))), small: traceFace(int(math.Round(10.5 * scale)))}
}

func (p *tracePainter) px(units float64) int { return int(math.Round(units * p.scale)) }

func textWidth(face font.Face, s string) int {
	if face == nil {
		return 0
	}
	return font.MeasureString(face, s).Round()
}

// text draws s with its baseline at y, starting at x (align 0), centred on
// x (align 1) or ending at x (align 2), on a paper backing so it stays
// readable over traces.
func (p *tracePainter) text(face font.Face, s string, x, y, align int, c color.NRGBA, backed bool) int {
	if face == nil || s == "" {
		return 0
	}
	w := textWidth(face, s)
	x -= align * w / 2
	m := face.Metrics()
	if backed {
		back := tracePaper
		back.A = 0xe0
		shade(p.img, x-2, x+w+2, y-m.Ascent.Ceil()-1, y+m.Descent.Ceil(), back)
	}
	d := font.Drawer{Dst: p.img, Src: image.NewUniform(c), Face: face, Dot: fixed.P(x, y)}
	d.DrawString(s)
	return w
}

// paintTraces draws v on a w×h picture whose pixels are scale times the
// strip's units.
func paintTraces(v *traceView, w, h int, scale float64) *image.NRGBA {
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	fill(img, tracePaper)
	if scale <= 0 {
		scale = 1
	}
	p := newTracePainter(img, scale)
	axisH := p.px(traceAxisH)
	left, right := p.px(traceLeft), w-p.px(traceRight)
	rows := p.captionRows(v, right)
	capH := p.px(traceCaptionH) * len(rows)
	top, bottom := capH, h-axisH
	if right-left < 8 || bottom-top < 12 {
		return img
	}
	for i, r := range rows {
		y := p.px(traceCaptionH)*(i+1) - p.px(5)
		p.text(p.small, r.right, right, y, 2, traceInk, false)
		p.text(p.face, truncateText(p.face, r.left, right-p.px(4)), p.px(4), y, 0, traceInk, false)
	}
	shade(img, left, right, top, bottom, color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0x70})
	if v.rec == nil || v.rec.SampleRateHz <= 0 || !(v.to > v.from) {
		p.text(p.face, "No line to show", (left+right)/2, (top+bottom)/2, 1, traceMuted, false)
		return img
	}
	t0, t1 := v.from, v.to
	toX := func(ts float64) int { return left + int(math.Round((ts-t0)/(t1-t0)*float64(right-left-1))) }
	axes := p.laneAxes(v, top, bottom)

	// Time grid: ticks in ms from the chosen line's index edge.
	msFrom, msTo := 1000*(t0-v.edgeS), 1000*(t1-v.edgeS)
	msStep := niceStep(msTo-msFrom, max(2, (right-left)/p.px(70)))
	for _, ms := range axisTicks(msFrom, msTo, max(2, (right-left)/p.px(70))) {
		x := toX(v.edgeS + ms/1000)
		vline(img, x, top, bottom, traceGrid)
		vline(img, x, bottom, bottom+p.px(3), traceMuted)
		p.text(p.small, tickLabel(ms, msStep), x, h-p.px(3), 1, traceMuted, false)
	}
	unitLabel := "ms from the index edge"
	p.text(p.small, unitLabel, right, h-p.px(3), 2, traceInk, true)

	// Bands, so the traces draw over them; solid bars along the top say
	// the same where the traces cover the bands.
	clipX := func(x int) int { return min(max(x, left), right) }
	lo := sort.Search(len(v.lines), func(i int) bool { return v.lines[i].EdgeS >= t0-(t1-t0) })
	for i := lo; i < len(v.lines) && v.lines[i].EdgeS <= t1+(t1-t0); i++ {
		l := v.lines[i]
		if l.hasBaseline() {
			shade(img, clipX(toX(l.BaselineStartS)), clipX(toX(l.BaselineEndS)), top, bottom, traceBaseline)
			shade(img, clipX(toX(l.BaselineStartS)), clipX(toX(l.BaselineEndS)), top, top+p.px(3), traceBaseBar)
		}
		shade(img, clipX(toX(l.FieldStartS)), clipX(toX(l.FieldEndS)), top, bottom, traceField)
		shade(img, clipX(toX(l.FieldStartS)), clipX(toX(l.FieldEndS)), top+p.px(3), top+p.px(6), traceFieldBar)
	}

	for lane, tl := range v.lanes {
		ax := axes[lane]
		lt, lb := ax.top, ax.bottom
		if lane > 0 {
			hline(img, left, right, lt, traceLaneEdge)
		}
		toY := ax.toY
		for k, tick := range ax.ticks {
			y := toY(tick)
			hline(img, left, right, y, traceGrid)
			hline(img, left-p.px(3), left, y, traceMuted)
			if ax.labelled[k] {
				p.text(p.small, tickLabel(tick, ax.step), left-p.px(5), y+p.px(4), 2, traceMuted, false)
			}
		}
		if tl.channel < 0 || v.rec == nil || tl.channel >= len(v.rec.Channels) {
			p.text(p.face, v.labels[lane], left+p.px(6), lt+p.px(15), 0, traceMuted, true)
			continue
		}
		samples := v.rec.Channels[tl.channel].Samples
		if lane == 1 && v.hasThresh {
			// Threshold: a thick dashed line in a darker ink of the index.
			y := toY(v.threshold)
			dash, gap := p.px(8), p.px(4)
			for x := left; x < right; x += dash + gap {
				shade(img, x, min(x+dash, right), y-max(1, p.px(1)), y+max(1, p.px(1))+1, traceThreshold)
			}
		}
		thick := max(1, p.px(1.3))
		prevLo, prevHi := -1, -1
		for x := left; x < right; x++ {
			a, b, ok := columnSamples(x-left, right-left, t0, t1, v.rec.SampleRateHz, len(samples))
			if !ok {
				prevLo, prevHi = -1, -1
				continue
			}
			mn, mx := samples[a], samples[a]
			for _, s := range samples[a:b] {
				mn, mx = min(mn, s), max(mx, s)
			}
			yLo, yHi := toY(float64(mx)), toY(float64(mn))
			// Join to the previous column so steep edges stay connected.
			if prevLo >= 0 {
				yLo, yHi = min(yLo, prevHi), max(yHi, prevLo)
			}
			shade(img, x, x+1, max(yLo-thick/2, lt+1), min(yHi+thick-thick/2, lb), traceColours[lane])
			prevLo, prevHi = toY(float64(mx)), toY(float64(mn))
		}
		p.text(p.face, v.labels[lane], left+p.px(6), lt+p.px(15), 0, traceColours[lane], true)
		if lane == 1 && v.hasThresh {
			// At the right end, or left of the lane's cursor reading when
			// the lane is too low for both to stand one above the other.
			y, end := toY(v.threshold)-p.px(4), right-p.px(6)
			if rd := laneReadout(v.reading(), lane, v.units[lane]); rd != "" && abs(y-(lt+p.px(15))) < p.px(13) {
				end -= textWidth(p.small, rd) + p.px(12)
			}
			p.text(p.small, fmt.Sprintf("threshold %.4g %s", v.threshold, v.units[1]), end, y, 2, traceThreshold, true)
		}
	}

	// Index edges over everything but the cursors; the chosen line's edge
	// is drawn thicker.
	for i := lo; i < len(v.lines) && v.lines[i].EdgeS <= t1+(t1-t0); i++ {
		x := toX(v.lines[i].EdgeS)
		if x < left || x >= right {
			continue
		}
		c := traceEdge
		if v.lines[i].Repaired {
			c = traceRepaired
		}
		width := max(1, p.px(1))
		if i == v.chosen {
			width = max(2, p.px(2))
		}
		shade(img, x, min(x+width, right), top, bottom, c)
	}

	// Cursors, with their letter in a flag at the top and each lane's
	// reading beside the lane's label.
	rd := v.reading()
	for k, c := range v.cursors {
		if math.IsNaN(c) {
			continue
		}
		x := toX(c)
		if x < left || x >= right {
			continue
		}
		for y := top; y < bottom; y += p.px(6) {
			shade(img, x, x+max(1, p.px(1)), y, min(y+p.px(4), bottom), traceCursors[k])
		}
		fw := textWidth(p.small, cursorNames[k]) + p.px(6)
		shade(img, x, x+fw, top, top+p.px(13), traceCursors[k])
		p.text(p.small, cursorNames[k], x+p.px(3), top+p.px(10), 0, tracePaper, false)
	}
	for lane := range v.lanes {
		if s := laneReadout(rd, lane, v.units[lane]); s != "" {
			p.text(p.small, s, right-p.px(6), axes[lane].top+p.px(15), 2, traceInk, true)
		}
	}
	rect(img, left, top, right, bottom, traceLaneEdge)
	return img
}

// captionRow is one row of the strip's caption: the line's facts on the
// left, the cursors' readout (or the hint) ending at the right.
type captionRow struct{ left, right string }

// captionRows lays the caption and the cursors' readout out in rows of
// width pixels: one row when both fit, else the caption's parts (split at
// " · ") wrapped over as many rows as they need, with the readout at the
// end of the last row or on a row of its own. The hint of what the mouse
// does gives way rather than taking a row; nothing is cut off unless a
// single part is wider than the strip.
func (p *tracePainter) captionRows(v *traceView, width int) []captionRow {
	readout := cursorReadout(v)
	gap, room := p.px(12), width-p.px(4)
	fits := func(left, right string) bool {
		w := textWidth(p.face, left)
		if right != "" {
			w += gap + textWidth(p.small, right)
		}
		return w <= room
	}
	if fits(v.caption, readout) {
		return []captionRow{{v.caption, readout}}
	}
	if v.noCursors() {
		readout = "" // the hint gives way to the line's own caption
	}
	var rows []captionRow
	line := ""
	for _, part := range strings.Split(v.caption, " · ") {
		switch {
		case line == "":
			line = part
		case fits(line+" · "+part, ""):
			line += " · " + part
		default:
			rows = append(rows, captionRow{left: line})
			line = part
		}
	}
	rows = append(rows, captionRow{left: line})
	if last := &rows[len(rows)-1]; readout != "" {
		if fits(last.left, readout) {
			last.right = readout
		} else {
			rows = append(rows, captionRow{right: readout})
		}
	}
	return rows
}

// cursorReadout says where the cursors are and Δt between them.
// laneAxis is where a lane lies on the picture and its voltage axis.
type laneAxis struct {
	top, bottom int     // the lane's edges
	ytop, ybot  int     // the pixels of hi and lo
	lo, hi      float64 // the voltages at ybot and ytop
	ticks       []float64
	labelled    []bool // which ticks carry a label
	step        float64
}

func (a laneAxis) toY(val float64) int {
	return a.ybot - int(math.Round((val-a.lo)/(a.hi-a.lo)*float64(a.ybot-a.ytop)))
}

// laneAxes splits the picture's rows from top to bottom into the three
// lanes and gives each its voltage axis (laneTicks).
func (p *tracePainter) laneAxes(v *traceView, top, bottom int) [3]laneAxis {
	var axes [3]laneAxis
	laneH := float64(bottom-top) / 3
	laneTop := func(i int) int { return top + int(math.Round(float64(i)*laneH)) }
	for i := range axes {
		a := &axes[i]
		a.top, a.bottom = laneTop(i), laneTop(i+1)
		a.ytop, a.ybot = a.top+p.px(6), a.bottom-p.px(4)
		a.lo, a.hi = v.laneRange(i)
		least := float64(p.px(traceTickGap)) * (a.hi - a.lo) / float64(max(1, a.ybot-a.ytop))
		a.ticks, a.labelled, a.step = laneTicks(a.lo, a.hi, least)
	}
	return axes
}

// noCursors says neither cursor is set.
func (v *traceView) noCursors() bool { return math.IsNaN(v.cursors[0]) && math.IsNaN(v.cursors[1]) }

func cursorReadout(v *traceView) string {
	a, b := !math.IsNaN(v.cursors[0]), !math.IsNaN(v.cursors[1])
	rd := v.reading()
	switch {
	case a && b:
		return fmt.Sprintf("A %.3f ms · B %.3f ms · Δt %.3f ms", rd.AtMS[0], rd.AtMS[1], rd.DtMS)
	case a:
		return fmt.Sprintf("A %.3f ms · right-click for B", rd.AtMS[0])
	case b:
		return fmt.Sprintf("B %.3f ms · click for A", rd.AtMS[1])
	}
	if v.rec == nil {
		return ""
	}
	return "click: cursor A · right-click: B · wheel: zoom"
}

// laneReadout is a lane's values at the cursors and ΔV, or "".
func laneReadout(rd traceReading, lane int, unit string) string {
	switch {
	case rd.HasDV[lane]:
		return fmt.Sprintf("A %.4g · B %.4g · ΔV %.4g %s", rd.Value[lane][0], rd.Value[lane][1], rd.DV[lane], unit)
	case rd.Has[lane][0]:
		return fmt.Sprintf("A %.4g %s", rd.Value[lane][0], unit)
	case rd.Has[lane][1]:
		return fmt.Sprintf("B %.4g %s", rd.Value[lane][1], unit)
	}
	return ""
}

// truncateText shortens s with an ellipsis to fit width pixels.
func truncateText(face font.Face, s string, width int) string {
	if face == nil || textWidth(face, s) <= width {
		return s
	}
	r := []rune(s)
	for len(r) > 0 && textWidth(face, string(r)+"…") > width {
		r = r[:len(r)-1]
	}
	if len(r) == 0 {
		return ""
	}
	return string(r) + "…"
}

func rect(img *image.NRGBA, x0, y0, x1, y1 int, c color.NRGBA) {
	hline(img, x0, x1, y0, c)
	hline(img, x0, x1, y1-1, c)
	vline(img, x0, y0, y1, c)
	vline(img, x1-1, y0, y1, c)
}
