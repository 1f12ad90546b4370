package ui

import (
	"fmt"
	"image/color"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
)

// Kinds of measurement the panel's typed entry offers, in its menu.
const (
	measureEdge     = "Slanted edge (MTF)"
	measureRegion   = "Region statistics"
	measureProfile  = "Line profile"
	measureDistance = "Distance"
	measureDots     = "Dot grid"
	measureNoise    = "Noise spectrum"
)

// kindNames are the window's words for each kind of measurement.
var kindNames = map[measure.Kind]string{
	measure.KindEdge: measureEdge, measure.KindRegion: measureRegion, measure.KindNPS: measureNoise,
	measure.KindProfile: measureProfile, measure.KindDistance: measureDistance, measure.KindDots: measureDots,
}

// kindNamed is the kind a menu word names.
func kindNamed(name string) measure.Kind {
	for k, n := range kindNames {
		if n == name {
			return k
		}
	}
	return ""
}

// measureActions are what the panel asks the workstation to do; every
// change goes through the workstation so it can be undone.
type measureActions struct {
	add    func(measure.Shape)
	remove func(label string)
	choose func(label string)
	pair   func(label, with string)
}

// measurePanel lists the measurements of the frame shown, several at once:
// each with its label, its numbers and its plot (MTF curve, profile,
// spectrum). The list is taken again on every new frame, so the numbers
// follow the delay and alignment while they are tuned. Shapes are drawn on
// the image (imagemarks.go) or typed here in the frame's mm. It uses
// measure.RunList, as the report sheet does, on the requests the measure
// command's flags make.
type measurePanel struct {
	act    measureActions
	kind   *widget.Select
	where  *widget.Entry
	band   *widget.Entry
	result *widget.Label // what the typed entry said last
	list   *fyne.Container
	box    *fyne.Container
	scroll *container.Scroll

	frame    *recon.Frame
	shapes   []measure.Shape
	selected string
	taken    []measure.Taken
	cards    []*measureCard
}

const measureHint = "Draw on the image with a tool above it, or type a rectangle or line in mm and press Add."

func newMeasurePanel(act measureActions) *measurePanel {
	p := &measurePanel{act: act}
	p.where = widget.NewEntry()
	p.where.SetPlaceHolder("X0,Y0,X1,Y1 mm")
	p.band = widget.NewEntry()
	p.band.SetPlaceHolder("band mm (profile)")
	p.kind = widget.NewSelect([]string{measureEdge, measureRegion, measureNoise, measureProfile, measureDistance, measureDots}, func(k string) {
		if k == measureDots {
			p.where.SetPlaceHolder("spacing mm")
		} else {
			p.where.SetPlaceHolder("X0,Y0,X1,Y1 mm")
		}
	})
	p.kind.SetSelected(measureEdge)
	p.result = widget.NewLabel(measureHint)
	p.result.Wrapping = fyne.TextWrapWord
	p.list = container.NewVBox(noMeasurements())
	p.box = container.NewVBox(
		widget.NewLabelWithStyle("Measurements", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		p.list,
		widget.NewSeparator(),
		p.kind, p.where, p.band,
		widget.NewButtonWithIcon("Add", theme.ContentAddIcon(), func() { p.measure() }),
		p.result,
	)
	p.scroll = container.NewVScroll(p.box)
	return p
}

// object is the panel, scrolling on its own.
func (p *measurePanel) object() fyne.CanvasObject { return p.scroll }

// request turns the typed fields into a shape (without its label).
func (p *measurePanel) request() (measure.Shape, error) {
	k := kindNamed(p.kind.Selected)
	s := measure.Shape{Kind: k}
	text := strings.TrimSpace(p.where.Text)
	if k == measure.KindDots {
		v, err := strconv.ParseFloat(text, 64)
		if err != nil || !(v > 0) {
			return s, fmt.Errorf("give the dot spacing in mm, not %q", text)
		}
		s.SpacingMM = v
		return s, nil
	}
	v, err := measure.ParseFour(text)
	if err != nil {
		return s, err
	}
	if k.TakesRect() {
		s.Rect = &measure.Rect{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]}
		return s, nil
	}
	s.Line = &measure.Line{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]}
	if b := strings.TrimSpace(p.band.Text); b != "" && k == measure.KindProfile {
		band, err := strconv.ParseFloat(b, 64)
		if err != nil || band < 0 {
			return s, fmt.Errorf("give the band width in mm, not %q", b)
		}
		s.BandMM = band
	}
	return s, nil
}

// measure reads the typed fields and adds the shape to the list.
func (p *measurePanel) measure() {
	s, err := p.request()
	if err != nil {
		p.result.SetText(err.Error())
		return
	}
	p.result.SetText(measureHint)
	p.act.add(s)
}

// show keeps f as the frame shown and measures it again.
func (p *measurePanel) show(f *recon.Frame) {
	p.frame = f
	p.run()
}

// setShapes shows the list shapes, the one labelled selected highlighted;
// a list that changed is measured again.
func (p *measurePanel) setShapes(shapes []measure.Shape, selected string) {
	if !measure.SameList(shapes, p.shapes) || len(p.cards) != len(shapes) {
		p.shapes = measure.CloneList(shapes)
		p.cards = p.cards[:0]
		var objects []fyne.CanvasObject
		for _, s := range p.shapes {
			c := p.newCard(s)
			p.cards = append(p.cards, c)
			objects = append(objects, c.box)
		}
		if len(objects) == 0 {
			objects = append(objects, noMeasurements())
		}
		p.list.Objects = objects
		p.list.Refresh()
		p.run()
	}
	changed := p.selected != selected
	p.selected = selected
	for _, c := range p.cards {
		on := c.shape.Label == selected
		c.highlight(on)
		if on && changed {
			p.scrollTo(c)
		}
	}
}

// scrollTo brings card c into sight (a mark was clicked on the image).
func (p *measurePanel) scrollTo(c *measureCard) {
	top := p.list.Position().Y + c.box.Position().Y
	bottom := top + c.box.Size().Height
	view := p.scroll.Size().Height
	if top >= p.scroll.Offset.Y && bottom <= p.scroll.Offset.Y+view {
		return
	}
	p.scroll.Offset.Y = max(0, min(top, p.box.MinSize().Height-view))
	p.scroll.Refresh()
}

func noMeasurements() fyne.CanvasObject {
	empty := widget.NewLabel("None yet.")
	empty.Importance = widget.LowImportance
	return empty
}

// run measures every shape on the frame shown and shows the results.
func (p *measurePanel) run() {
	if p.frame == nil {
		p.taken = nil
		return
	}
	p.taken = measure.RunList(p.frame, p.shapes)
	for i, t := range p.taken {
		if i < len(p.cards) {
			p.cards[i].show(t)
		}
	}
}

// measureCard is one measurement in the list.
type measureCard struct {
	shape  measure.Shape
	head   *widget.Button
	pair   *widget.Select // the region a region's CNR is taken against
	text   *widget.Label
	plot   *canvas.Image
	ground *canvas.Rectangle
	box    fyne.CanvasObject
}

func (p *measurePanel) newCard(s measure.Shape) *measureCard {
	c := &measureCard{shape: s}
	label := s.Label
	c.head = widget.NewButton(label+"  "+kindNames[s.Kind], func() { p.act.choose(label) })
	c.head.Alignment = widget.ButtonAlignLeading
	c.head.Importance = widget.LowImportance
	remove := widget.NewButtonWithIcon("", theme.DeleteIcon(), func() { p.act.remove(label) })
	c.text = widget.NewLabel("")
	c.text.Wrapping = fyne.TextWrapWord
	c.plot = canvas.NewImageFromImage(nil)
	c.plot.FillMode = canvas.ImageFillContain
	c.plot.SetMinSize(fyne.NewSize(220, 106))
	c.plot.Hide()
	rows := []fyne.CanvasObject{container.NewBorder(nil, nil, swatch(markColour(s.Kind)), remove, c.head)}
	if where := shapeWhere(s); where != "" {
		w := widget.NewLabelWithStyle(where, fyne.TextAlignLeading, fyne.TextStyle{Monospace: true})
		w.Truncation = fyne.TextTruncateEllipsis
		rows = append(rows, w)
	}
	if s.Kind == measure.KindRegion {
		options := []string{"none"}
		for _, o := range p.shapes {
			if o.Kind == measure.KindRegion && o.Label != s.Label {
				options = append(options, o.Label)
			}
		}
		c.pair = widget.NewSelect(options, nil)
		c.pair.SetSelected("none")
		if s.CNRWith != "" {
			c.pair.SetSelected(s.CNRWith)
		}
		c.pair.OnChanged = func(with string) {
			if with == "none" {
				with = ""
			}
			p.act.pair(label, with)
		}
		if len(options) > 1 {
			rows = append(rows, container.NewBorder(nil, nil, widget.NewLabel("CNR with"), nil, c.pair))
		}
	}
	rows = append(rows, c.text, c.plot)
	c.ground = canvas.NewRectangle(color.Transparent)
	c.ground.CornerRadius = 4
	c.box = container.NewStack(c.ground, container.NewVBox(rows...))
	return c
}

// highlight marks the card of the selected measurement.
func (c *measureCard) highlight(on bool) {
	if on {
		m := markColour(c.shape.Kind)
		c.ground.FillColor = color.NRGBA{R: m.R, G: m.G, B: m.B, A: 0x28}
		c.head.Importance = widget.MediumImportance
	} else {
		c.ground.FillColor = color.Transparent
		c.head.Importance = widget.LowImportance
	}
	c.ground.Refresh()
	c.head.Refresh()
}

// shapeWhere writes where a shape is taken, in mm.
func shapeWhere(s measure.Shape) string {
	switch {
	case s.Rect != nil:
		return fmt.Sprintf("%.1f,%.1f – %.1f,%.1f mm", s.Rect.X0, s.Rect.Y0, s.Rect.X1, s.Rect.Y1)
	case s.Line != nil:
		return fmt.Sprintf("%.1f,%.1f → %.1f,%.1f mm", s.Line.X0, s.Line.Y0, s.Line.X1, s.Line.Y1)
	case s.Kind == measure.KindDots:
		return fmt.Sprintf("spacing %g mm, whole frame", s.SpacingMM)
	}
	return ""
}

// show puts a measurement's numbers and plot on the card.
func (c *measureCard) show(t measure.Taken) {
	if t.Err != nil {
		msg := strings.TrimPrefix(t.Err.Error(), string(t.Shape.Kind)+": ") // the card names the kind
		c.text.SetText("Not taken: " + windowWords(msg) + ".")
		c.plot.Hide()
		return
	}
	c.text.SetText(measurementText(t))
	series, title, xLabel, logY := plotSeries(t)
	if series == nil {
		c.plot.Hide()
		return
	}
	m := markColour(t.Shape.Kind)
	// The print colour of the sheet: the window's light outline would
	// not read on the plot's white ground.
	colour := [3]int{int(m.R) * 3 / 5, int(m.G) * 3 / 5, int(m.B) * 3 / 5}
	img, err := export.PlotImage(export.PlotSize{WidthMM: 60, HeightMM: 29, DPI: 192}, title, xLabel, "", colour, logY, series)
	if err != nil {
		c.plot.Hide()
		return
	}
	c.plot.Image = img
	c.plot.Show()
	c.plot.Refresh()
}

// plotSeries is what a measurement plots, if anything.
func plotSeries(t measure.Taken) (series [][2]float64, title, xLabel string, logY bool) {
	r := t.Results
	switch {
	case t.Shape.Kind == measure.KindEdge && r.Edge != nil:
		return r.Edge.MTF, "MTF", "line pairs per mm", false
	case t.Shape.Kind == measure.KindProfile:
		return r.Profile, "Profile", "distance (mm)", false
	case t.Shape.Kind == measure.KindNPS:
		return r.NPS, "NPS (mm²)", "line pairs per mm", true
	}
	return nil, "", "", false
}

// measurementText writes a measurement's numbers in a few short lines.
func measurementText(t measure.Taken) string {
	r := t.Results
	opt := func(v *float64, format string) string {
		if v == nil {
			return "not reached"
		}
		return fmt.Sprintf(format, *v)
	}
	var lines []string
	switch t.Shape.Kind {
	case measure.KindEdge:
		e := r.Edge
		lines = append(lines, fmt.Sprintf("MTF50 %s · MTF10 %s", opt(e.MTF50, "%.4g lp/mm"), opt(e.MTF10, "%.4g lp/mm")),
			fmt.Sprintf("edge at %.2f°, resolution along %s", e.Angle, e.Across))
	case measure.KindRegion:
		a := r.ROI
		lines = append(lines, fmt.Sprintf("mean %.6g · SD %.4g", a.Mean, a.SD), fmt.Sprintf("SNR %.4g · %d pixels", a.SNR, a.Pixels))
		if r.ROI2 != nil {
			lines = append(lines, fmt.Sprintf("CNR with %s: %s", t.Shape.CNRWith, opt(r.CNR, "%.4g")))
		}
	case measure.KindProfile:
		lo, hi := valueRange(r.Profile)
		lines = append(lines, fmt.Sprintf("length %s · %d points", opt(r.DistanceMM, "%.4g mm"), len(r.Profile)),
			fmt.Sprintf("values %.4g … %.4g", lo, hi))
	case measure.KindDistance:
		l := t.Shape.Line
		lines = append(lines, fmt.Sprintf("%s (Δx %.4g, Δy %.4g mm)", opt(r.DistanceMM, "%.4g mm"), l.X1-l.X0, l.Y1-l.Y0))
	case measure.KindDots:
		d := r.Dots
		lines = append(lines, fmt.Sprintf("%d dots · scale x %.5f y %.5f", d.Found, d.ScaleX, d.ScaleY),
			fmt.Sprintf("rotation %.3f° · shear %.3f°", d.RotationDeg, d.ShearDeg),
			fmt.Sprintf("residual RMS %.3g mm · worst %.3g mm at %.1f, %.1f", d.RMSMM, d.MaxMM, d.WorstMM[0], d.WorstMM[1]))
		if d.Correction != nil {
			for _, s := range d.Correction.Steps {
				lines = append(lines, "to make it true: "+s)
			}
		}
	case measure.KindNPS:
		lo, hi := valueRange(r.NPS)
		top := 0.0
		if n := len(r.NPS); n > 0 {
			top = r.NPS[n-1][0]
		}
		lines = append(lines, fmt.Sprintf("radial NPS %.3g … %.3g mm²", lo, hi), fmt.Sprintf("up to %.3g lp/mm", top))
	}
	return strings.Join(lines, "\n")
}

// valueRange is the least and greatest second value of the pairs.
func valueRange(points [][2]float64) (lo, hi float64) {
	for i, p := range points {
		if i == 0 || p[1] < lo {
			lo = p[1]
		}
		if i == 0 || p[1] > hi {
			hi = p[1]
		}
	}
	return lo, hi
}
