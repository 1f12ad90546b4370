package ui

import (
	"image/color"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/widget"
)

// inksUnder lists, in order, the fill colours of the rectangles under o
// that are one of the strip's role inks, with the text of the label that
// follows each (the swatch's name), walking containers depth first.
func inksUnder(o fyne.CanvasObject) (inks []color.Color, names []string) {
	var walk func(o fyne.CanvasObject)
	walk = func(o fyne.CanvasObject) {
		switch v := o.(type) {
		case *canvas.Rectangle:
			for _, c := range traceColours {
				if v.FillColor == color.Color(c) {
					inks = append(inks, c)
					names = append(names, "")
				}
			}
		case *widget.Label:
			if n := len(names); n > 0 && names[n-1] == "" {
				names[n-1] = v.Text
			}
		case *canvas.Text:
			if n := len(names); n > 0 && names[n-1] == "" {
				names[n-1] = v.Text
			}
		case *fyne.Container:
			for _, c := range v.Objects {
				walk(c)
			}
		}
	}
	walk(o)
	return inks, names
}

// TestRoleInksAgreeEverywhere: the detector, index and position inks of
// the trace strip are the inks of the strip's legend and of the role
// labels in the source panel, in that order and under those names; the
// strip's saved picture uses the same inks (TestTracePictureUsesTheStripsInks).
func TestRoleInksAgreeEverywhere(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	check := func(where string, o []fyne.CanvasObject, want []string) {
		t.Helper()
		var inks []color.Color
		var names []string
		for _, e := range o {
			i, n := inksUnder(e)
			inks, names = append(inks, i...), append(names, n...)
		}
		if len(inks) < len(traceColours) {
			t.Fatalf("%s: found %d role inks (%v), want %d", where, len(inks), names, len(traceColours))
		}
		for i, c := range traceColours {
			if inks[i] != color.Color(c) || names[i] != want[i] {
				t.Errorf("%s: swatch %d is %v named %q, want %v named %q", where, i, inks[i], names[i], c, want[i])
			}
		}
	}
	check("legend", ws.legend, []string{"detector", "index", "position"})
	check("source panel", []fyne.CanvasObject{ws.source.object()}, []string{"Detector", "Index pulse", "Position"})
}
