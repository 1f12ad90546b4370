package ui

import (
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon"
	"spotloom/recon/measure"
)

// Tools of the image, in the tool menu: what a drag on the image does.
var measureToolNames = []struct {
	kind measure.Kind
	name string
}{
	{"", "Move the image"},
	{measure.KindEdge, "Draw an edge (MTF)"},
	{measure.KindRegion, "Draw a region"},
	{measure.KindNPS, "Draw a noise area"},
	{measure.KindProfile, "Draw a profile line"},
	{measure.KindDistance, "Draw a distance"},
}

func toolName(k measure.Kind) string {
	for _, t := range measureToolNames {
		if t.kind == k {
			return t.name
		}
	}
	return measureToolNames[0].name
}

// markTools is the measuring state of the window that undo does not
// keep: the tool menu, the dot spacing typed and the selected mark.
type markTools struct {
	bar      fyne.CanvasObject
	tool     *widget.Select
	spacing  *widget.Entry
	selected string
}

// measureTools makes the tool bar under the image's toolbar: the tool a
// drag uses, and the dot-grid check with its spacing.
func (ws *Workstation) measureTools() fyne.CanvasObject {
	mt := &markTools{}
	ws.marking = mt
	var names []string
	for _, t := range measureToolNames {
		names = append(names, t.name)
	}
	mt.tool = widget.NewSelect(names, func(name string) {
		for _, t := range measureToolNames {
			if t.name == name {
				ws.view.SetTool(t.kind)
			}
		}
	})
	mt.tool.SetSelected(names[0])
	ws.view.OnTool = func(k measure.Kind) {
		if name := toolName(k); mt.tool.Selected != name {
			mt.tool.SetSelected(name)
		}
	}
	ws.view.OnDrawn = ws.drawnShape
	ws.view.OnMark = ws.selectMeasurement
	mt.spacing = widget.NewEntry()
	mt.spacing.SetPlaceHolder("spacing mm")
	mt.spacing.OnSubmitted = func(string) { ws.CheckDotGrid() }
	dots := widget.NewButton("Check dot grid", ws.CheckDotGrid)
	mt.bar = container.NewHBox(
		container.NewGridWrap(fyne.NewSize(190, mt.tool.MinSize().Height), mt.tool),
		widget.NewSeparator(),
		container.NewGridWrap(fyne.NewSize(96, mt.spacing.MinSize().Height), mt.spacing),
		dots,
	)
	return mt.bar
}

// dropTool goes back to moving the image when a drawing tool is chosen
// (Escape), and reports whether one was.
func (ws *Workstation) dropTool() bool {
	if ws.marking == nil || ws.view.Tool() == "" {
		return false
	}
	ws.view.SetTool("")
	ws.marking.tool.SetSelected(toolName(""))
	return true
}

// drawnShape adds the rectangle or line just drawn on the image.
func (ws *Workstation) drawnShape(kind measure.Kind, at [4]float64) {
	s := measure.Shape{Kind: kind}
	if kind.TakesRect() {
		s.Rect = &measure.Rect{X0: at[0], Y0: at[1], X1: at[2], Y1: at[3]}
	} else {
		s.Line = &measure.Line{X0: at[0], Y0: at[1], X1: at[2], Y1: at[3]}
	}
	ws.addMeasurement(s)
}

// CheckDotGrid adds a dot-grid check at the spacing typed.
func (ws *Workstation) CheckDotGrid() {
	text := strings.TrimSpace(ws.marking.spacing.Text)
	v, err := parseNumber(text)
	if err != nil || !(v > 0) {
		ws.showProblem("Cannot check the dot grid", fmt.Sprintf("the spacing %q is not a length in mm.", text),
			"type the grid's nominal spacing, the distance between neighbouring dot centres, such as 25.")
		return
	}
	ws.addMeasurement(measure.Shape{Kind: measure.KindDots, SpacingMM: v})
}

// addMeasurement adds s to the list under the next free label of its kind
// and selects it; one undo step.
func (ws *Workstation) addMeasurement(s measure.Shape) {
	s.Label = measure.NextLabel(ws.cur.Measurements, s.Kind)
	ws.marking.selected = s.Label
	ws.editMeasurements("add "+s.Label, func(list []measure.Shape) []measure.Shape { return append(list, s) })
}

// removeMeasurement takes the labelled measurement off the list, and any
// region's CNR that was taken against it.
func (ws *Workstation) removeMeasurement(label string) {
	ws.editMeasurements("remove "+label, func(list []measure.Shape) []measure.Shape {
		var out []measure.Shape
		for _, s := range list {
			if s.Label == label {
				continue
			}
			if s.CNRWith == label {
				s.CNRWith = ""
			}
			out = append(out, s)
		}
		return out
	})
	if ws.marking.selected == label {
		ws.marking.selected = ""
		ws.showMeasurements()
	}
}

// RemoveSelectedMeasurement removes the measurement selected on the image
// or in the list (the Delete key).
func (ws *Workstation) RemoveSelectedMeasurement() {
	if l := ws.marking.selected; l != "" {
		ws.removeMeasurement(l)
	}
}

// pairMeasurement takes region label's CNR against region with ("" for
// none).
func (ws *Workstation) pairMeasurement(label, with string) {
	ws.editMeasurements("cnr "+label, func(list []measure.Shape) []measure.Shape {
		for i := range list {
			if list[i].Label == label {
				list[i].CNRWith = with
			}
		}
		return list
	})
}

// selectMeasurement highlights the labelled measurement on the image and
// in the list ("" for none).
func (ws *Workstation) selectMeasurement(label string) {
	if ws.marking.selected == label {
		return
	}
	ws.marking.selected = label
	ws.showMeasurements()
}

// editMeasurements changes the list as f says, as one undo step; a list
// that could not be taken is refused (the list stays as it was).
func (ws *Workstation) editMeasurements(control string, f func([]measure.Shape) []measure.Shape) {
	ws.edit(control, func(s *settings) bool {
		next := f(measure.CloneList(s.Measurements))
		if measure.CheckList(next) != nil {
			return false
		}
		s.Measurements = next
		return true
	})
}

// showMeasurements puts the list of the settings shown on the image and
// into the panel.
func (ws *Workstation) showMeasurements() {
	if ws.marking == nil {
		return
	}
	found := false
	for _, s := range ws.cur.Measurements {
		found = found || s.Label == ws.marking.selected
	}
	if !found {
		ws.marking.selected = ""
	}
	ws.view.SetMarks(ws.cur.Measurements, ws.marking.selected)
	ws.measures.setShapes(ws.cur.Measurements, ws.marking.selected)
}

// measuresSaved notes that an export's sidecar now holds the list.
func (ws *Workstation) measuresSaved(list []measure.Shape) {
	ws.clean.Measurements = measure.CloneList(list)
	ws.setTitle()
	ws.saveSession()
}

// AddMeasurement adds s to the list of the frame shown, as drawing it on
// the image does (under the next free label of its kind).
func (ws *Workstation) AddMeasurement(s measure.Shape) { ws.addMeasurement(s) }

// Measured returns the measurements of the frame shown, as the list
// beside the image shows them.
func (ws *Workstation) Measured() []measure.Taken {
	return append([]measure.Taken(nil), ws.measures.taken...)
}

// ShownFrame returns the frame the image and the measurements are of, or
// nil.
func (ws *Workstation) ShownFrame() *recon.Frame { return ws.view.Frame() }
