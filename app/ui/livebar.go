package ui

import (
	"fmt"
	"image/color"
	"math"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// liveBar is the strip under the toolbar while a live view runs: what is
// captured, the time so far, a level meter per channel, how much is safe on
// disk, the overruns, and Stop.
type liveBar struct {
	box      *fyne.Container
	what     *widget.Label
	elapsed  *widget.Label
	disk     *widget.Label
	overruns *widget.Label
	note     *widget.Label
	meters   *fyne.Container
	readings *fyne.Container
	stop     *widget.Button
}

func newLiveBar(stop func()) *liveBar {
	// The readings start with their widest text, so the row is laid out
	// for it.
	b := &liveBar{what: widget.NewLabel(""), elapsed: widget.NewLabel("00:00.0"), disk: widget.NewLabel("on disk 00:00.0"),
		overruns: widget.NewLabel("overruns 0"), note: widget.NewLabel(""), meters: container.NewHBox()}
	b.what.TextStyle.Bold = true
	b.what.Truncation = fyne.TextTruncateEllipsis
	b.elapsed.TextStyle.Monospace = true
	b.note.Truncation = fyne.TextTruncateEllipsis
	b.note.Importance = widget.WarningImportance
	b.stop = widget.NewButtonWithIcon("Stop", theme.MediaStopIcon(), stop)
	b.stop.Importance = widget.DangerImportance
	// The readings scroll sideways rather than widen a small window.
	b.readings = container.NewHBox(b.elapsed, b.meters, b.disk, b.overruns)
	readings := container.NewHScroll(b.readings)
	left := container.NewGridWrap(fyne.NewSize(230, b.what.MinSize().Height), b.what)
	b.box = container.NewVBox(container.NewBorder(nil, nil, left, b.stop, readings), b.note)
	b.box.Hide()
	return b
}

func (b *liveBar) object() fyne.CanvasObject { return b.box }

// start shows the bar for a new live view of channels channels.
func (b *liveBar) start(what string, channels int) {
	b.what.SetText(what)
	b.elapsed.SetText("00:00.0 of 00:00.0")
	b.meters.RemoveAll()
	for c := 0; c < channels; c++ {
		b.meters.Add(newLevelMeter(c + 1))
	}
	b.note.SetText("")
	b.note.Hide()
	b.disk.Show()
	b.overruns.Show()
	b.stop.Enable()
	b.readings.Refresh()
	b.box.Show()
	b.box.Refresh()
}

// show puts a status into the bar; a text is set only when it changed.
func (b *liveBar) show(s liveStatus) {
	secs := float64(s.frames) / float64(s.rateHz)
	if s.total > 0 {
		setLabel(b.elapsed, clock(secs)+" of "+clock(float64(s.total)/float64(s.rateHz)))
	} else {
		setLabel(b.elapsed, clock(secs))
	}
	for c, o := range b.meters.Objects {
		if c < len(s.peak) {
			o.(*levelMeter).set(s.peak[c])
		}
	}
	if s.writing {
		setLabel(b.disk, fmt.Sprintf("on disk %s", clock(float64(s.committed)/float64(s.rateHz))))
		if s.overruns > 0 {
			if text := fmt.Sprintf("overruns %d (%d frames marked as zeros)", s.overruns, s.overrunFrames); text != b.overruns.Text {
				b.overruns.SetText(text)
				b.overruns.Importance = widget.DangerImportance
				b.readings.Refresh() // a longer text
			}
		} else {
			setLabel(b.overruns, fmt.Sprintf("overruns %d", s.overruns))
		}
	} else if b.disk.Visible() {
		b.disk.Hide()
		b.overruns.Hide()
		b.readings.Refresh()
	}
	if s.noImage != "" {
		setLabel(b.note, s.noImage)
		b.note.Show()
	} else if b.note.Visible() {
		b.note.Hide()
	}
	if s.done {
		b.stop.Disable()
	}
}

func (b *liveBar) hide() { b.box.Hide() }

// clock writes seconds as mm:ss.s.
func clock(secs float64) string {
	return fmt.Sprintf("%02d:%04.1f", int(secs)/60, math.Mod(secs, 60))
}

// levelMeter shows one channel's peak level: a bar over the 48 dB below
// full scale, green, amber from −6 dB, red at full scale, and the level in
// dBFS.
type levelMeter struct {
	widget.BaseWidget
	channel int
	ground  *canvas.Rectangle
	fill    *canvas.Rectangle
	label   *canvas.Text
	peak    float32
}

const meterDB = 48

func newLevelMeter(channel int) *levelMeter {
	m := &levelMeter{channel: channel,
		ground: canvas.NewRectangle(color.NRGBA{R: 0x30, G: 0x33, B: 0x38, A: 0xff}),
		fill:   canvas.NewRectangle(color.NRGBA{R: 0x3c, G: 0xb3, B: 0x71, A: 0xff}),
		label:  canvas.NewText("", theme.Color(theme.ColorNameForeground))}
	m.label.TextSize = theme.CaptionTextSize()
	m.label.TextStyle.Monospace = true
	m.ExtendBaseWidget(m)
	m.set(0)
	return m
}

// set shows a peak (|sample|, 1 = full scale).
func (m *levelMeter) set(peak float32) {
	m.peak = peak
	db := 20 * math.Log10(float64(peak))
	switch {
	case peak >= 1:
		m.label.Text = "CLIP"
		m.fill.FillColor = color.NRGBA{R: 0xd9, G: 0x3b, B: 0x3b, A: 0xff}
	case peak <= 0:
		m.label.Text = "  - dB"
	default:
		m.label.Text = fmt.Sprintf("%3.0f dB", db)
		m.fill.FillColor = color.NRGBA{R: 0x3c, G: 0xb3, B: 0x71, A: 0xff}
		if db > -6 {
			m.fill.FillColor = color.NRGBA{R: 0xe0, G: 0xa0, B: 0x30, A: 0xff}
		}
	}
	m.Refresh()
}

// fraction is how much of the bar is lit.
func (m *levelMeter) fraction() float32 {
	if m.peak <= 0 {
		return 0
	}
	db := 20 * math.Log10(float64(m.peak))
	return float32(min(max((db+meterDB)/meterDB, 0), 1))
}

func (m *levelMeter) CreateRenderer() fyne.WidgetRenderer {
	num := canvas.NewText(fmt.Sprint(m.channel), theme.Color(theme.ColorNameForeground))
	num.TextSize, num.TextStyle = m.label.TextSize, m.label.TextStyle
	return &meterRenderer{m: m, num: num}
}

// meterRenderer draws "N ▬▬▬▬ -12 dB": the channel number, the bar and
// the level.
type meterRenderer struct {
	m   *levelMeter
	num *canvas.Text
}

const meterBarW, meterBarH, meterGap = 64, 8, 5

func (r *meterRenderer) widths() (num, level float32) {
	st := r.m.label.TextStyle
	return fyne.MeasureText("8", r.m.label.TextSize, st).Width, fyne.MeasureText("-48 dB", r.m.label.TextSize, st).Width
}

func (r *meterRenderer) MinSize() fyne.Size {
	num, level := r.widths()
	h := fyne.MeasureText("8", r.m.label.TextSize, r.m.label.TextStyle).Height
	return fyne.NewSize(num+meterGap+meterBarW+meterGap+level+2*meterGap, max(h, meterBarH)+8)
}

func (r *meterRenderer) Layout(size fyne.Size) {
	num, _ := r.widths()
	x := float32(meterGap)
	r.num.Move(fyne.NewPos(x, (size.Height-r.num.MinSize().Height)/2))
	x += num + meterGap
	y := (size.Height - meterBarH) / 2
	r.m.ground.Move(fyne.NewPos(x, y))
	r.m.ground.Resize(fyne.NewSize(meterBarW, meterBarH))
	r.m.fill.Move(fyne.NewPos(x, y))
	r.m.fill.Resize(fyne.NewSize(meterBarW*r.m.fraction(), meterBarH))
	r.m.label.Move(fyne.NewPos(x+meterBarW+meterGap, (size.Height-r.m.label.MinSize().Height)/2))
}

func (r *meterRenderer) Refresh() {
	r.Layout(r.m.Size())
	r.m.ground.Refresh()
	r.m.fill.Refresh()
	r.m.label.Refresh()
}

func (r *meterRenderer) Objects() []fyne.CanvasObject {
	return []fyne.CanvasObject{r.num, r.m.ground, r.m.fill, r.m.label}
}

func (r *meterRenderer) Destroy() {}
