package ui

import (
	"testing"

	"fyne.io/fyne/v2"
)

// isUnder says whether o lies in the tree under root.
func isUnder(root, o fyne.CanvasObject) bool {
	if root == o {
		return true
	}
	switch v := root.(type) {
	case *fyne.Container:
		for _, c := range v.Objects {
			if isUnder(c, o) {
				return true
			}
		}
	}
	return false
}

// TestControlGroupsFoldWithAlignmentFirst: the left column is groups the
// user can fold, the line-alignment group first (at the top, beside the
// image) and open at the start with the threshold, the delay and the
// aperture offsets; folding a group hides its controls, opening shows them.
func TestControlGroupsFoldWithAlignmentFirst(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	g := ws.controls.groups
	want := []string{groupAlign, groupTone, groupSweep, groupRows, groupSignal, "Source and channel roles"}
	if len(g.Items) != len(want) {
		t.Fatalf("%d groups, want %d (%v)", len(g.Items), len(want), want)
	}
	for i, it := range g.Items {
		if it.Title != want[i] {
			t.Errorf("group %d is %q, want %q", i, it.Title, want[i])
		}
	}
	align := g.Items[0]
	if !align.Open {
		t.Error("the line-alignment group is folded at the start")
	}
	for _, name := range []string{ctlThreshold, ctlDelay} {
		if !isUnder(align.Detail, ws.controls.number(name).box) {
			t.Errorf("%s is not in the line-alignment group", name)
		}
	}
	if !isUnder(align.Detail, ws.controls.offsetsBox) || !isUnder(align.Detail, ws.controls.estimate) {
		t.Error("the aperture offsets are not in the line-alignment group")
	}
	// The two "invert" ideas stand apart, each named for what it inverts:
	// the signal's polarity among the detector's settings, the display's
	// tone among the tone's.
	for _, c := range []struct{ name, group string }{{ctlPolarity, groupSignal}, {ctlShowNeg, groupTone}} {
		for _, it := range g.Items {
			if in := isUnder(it.Detail, ws.controls.byName[c.name].box); in != (it.Title == c.group) {
				t.Errorf("%q in group %q: %v, want it only in %q", c.name, it.Title, in, c.group)
			}
		}
	}
	delay := ws.controls.number(ctlDelay).box
	g.Close(0)
	if align.Detail.Visible() {
		t.Error("folding the line-alignment group left its controls shown")
	}
	g.Open(0)
	if !align.Detail.Visible() || !delay.Visible() {
		t.Error("opening the line-alignment group did not show its controls")
	}
}
