package ui

import (
	"bytes"
	"fmt"
	"image/png"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
)

// Kinds of measurement the panel takes, in its menu.
const (
	measureEdge    = "Slanted edge (MTF)"
	measureRegion  = "Region statistics"
	measureProfile = "Line profile"
	measureDots    = "Dot grid"
	measureNoise   = "Noise spectrum"
)

// measurePanel takes one measurement on the frame shown: the kind, the
// rectangle or line in the frame's mm (as the pointer read-out shows
// them) or the dot spacing, and its result with a plot. The request is
// kept and taken again on every new frame, so the numbers follow the
// delay and alignment while they are tuned. It uses measure.Run, as the
// measure command and the report sheet do.
type measurePanel struct {
	kind   *widget.Select
	where  *widget.Entry
	band   *widget.Entry
	result *widget.Label
	plot   *canvas.Image
	box    *fyne.Container

	frame *recon.Frame
	req   *measure.Request
	last  measure.Results
}

func newMeasurePanel() *measurePanel {
	p := &measurePanel{}
	p.where = widget.NewEntry()
	p.where.SetPlaceHolder("X0,Y0,X1,Y1 mm")
	p.band = widget.NewEntry()
	p.band.SetPlaceHolder("band mm (profile)")
	p.kind = widget.NewSelect([]string{measureEdge, measureRegion, measureProfile, measureDots, measureNoise}, func(k string) {
		if k == measureDots {
			p.where.SetPlaceHolder("spacing mm")
		} else {
			p.where.SetPlaceHolder("X0,Y0,X1,Y1 mm")
		}
	})
	p.kind.SetSelected(measureEdge)
	p.result = widget.NewLabel("Give a rectangle or line in mm and press Measure.")
	p.result.Wrapping = fyne.TextWrapWord
	p.plot = canvas.NewImageFromImage(nil)
	p.plot.FillMode = canvas.ImageFillContain
	p.plot.SetMinSize(fyne.NewSize(200, 100))
	p.plot.Hide()
	p.box = container.NewVBox(
		widget.NewLabelWithStyle("Measure", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		p.kind, p.where, p.band,
		container.NewGridWithColumns(2,
			widget.NewButton("Measure", func() { p.measure() }),
			widget.NewButton("Clear", func() { p.clear() })),
		p.result, p.plot,
	)
	return p
}

func (p *measurePanel) object() fyne.CanvasObject { return p.box }

// request turns the panel's fields into a measurement request.
func (p *measurePanel) request() (measure.Request, error) {
	var req measure.Request
	text := strings.TrimSpace(p.where.Text)
	if p.kind.Selected == measureDots {
		v, err := strconv.ParseFloat(text, 64)
		if err != nil || !(v > 0) {
			return req, fmt.Errorf("give the dot spacing in mm, not %q", text)
		}
		req.DotsMM = v
		return req, nil
	}
	v, err := measure.ParseFour(text)
	if err != nil {
		return req, err
	}
	r := &measure.Rect{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]}
	switch p.kind.Selected {
	case measureEdge:
		req.Edge = r
	case measureRegion:
		req.ROI = r
	case measureNoise:
		req.NPS = r
	case measureProfile:
		req.Profile = &measure.Line{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]}
		if b := strings.TrimSpace(p.band.Text); b != "" {
			band, err := strconv.ParseFloat(b, 64)
			if err != nil || band < 0 {
				return req, fmt.Errorf("give the band width in mm, not %q", b)
			}
			req.BandMM = band
		}
	}
	return req, nil
}

// measure reads the fields and measures the frame shown.
func (p *measurePanel) measure() {
	req, err := p.request()
	if err != nil {
		p.result.SetText(err.Error())
		return
	}
	p.req = &req
	p.run()
}

func (p *measurePanel) clear() {
	p.req = nil
	p.result.SetText("Give a rectangle or line in mm and press Measure.")
	p.plot.Hide()
}

// show keeps f as the frame shown and measures it again.
func (p *measurePanel) show(f *recon.Frame) {
	p.frame = f
	if p.req != nil {
		p.run()
	}
}

func (p *measurePanel) run() {
	if p.frame == nil {
		p.result.SetText("No frame yet.")
		return
	}
	res, err := measure.Run(p.frame, *p.req)
	if err != nil {
		p.result.SetText(err.Error())
		p.plot.Hide()
		return
	}
	p.last = res
	var text bytes.Buffer
	measure.WriteText(&text, res)
	p.result.SetText(strings.TrimSpace(text.String()))
	var series [][2]float64
	var title, xLabel string
	switch {
	case res.Edge != nil:
		series, title, xLabel = res.Edge.MTF, "MTF", "line pairs per mm"
	case len(res.Profile) > 0:
		series, title, xLabel = res.Profile, "Profile", "distance (mm)"
	case len(res.NPS) > 0:
		series, title, xLabel = res.NPS, "NPS (mm²)", "line pairs per mm"
	}
	if series == nil {
		p.plot.Hide()
		return
	}
	data, err := export.PlotPNG(title, xLabel, "", [3]int{40, 90, 200}, title != "Profile" && title != "MTF", series)
	if err != nil {
		p.plot.Hide()
		return
	}
	img, err := png.Decode(bytes.NewReader(data))
	if err != nil {
		p.plot.Hide()
		return
	}
	p.plot.Image = img
	p.plot.Show()
	p.plot.Refresh()
}
