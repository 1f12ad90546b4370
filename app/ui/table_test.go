package ui

import (
	"fmt"
	"math"
	"testing"
)

// TestEveryNumberControlGoesBothWays: every number control of the table
// is written and read through its own row: a value typed into its box
// reaches the settings (read back with the row's get), and undoing it
// puts the old value back into the box (render reads the settings through
// the same row). A value the build refuses leaves the settings and the box
// as they were.
func TestEveryNumberControlGoesBothWays(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	ws.controls.groups.OpenAll()
	tried := 0
	for _, b := range ws.controls.ctls {
		if b.kind != kindNumber || (b.enabled != nil && !b.enabled(ws.shown())) {
			continue
		}
		n := b.number
		lo, hi := n.slider.Min, n.slider.Max
		old := b.get(ws.shown())
		oldText := n.entry.Text
		// A value a fifth of the span away from the old one, on the
		// control's step, inside the span.
		x := old + 0.2*(hi-lo)
		if x > hi {
			x = old - 0.2*(hi-lo)
		}
		if b.step > 0 {
			x = math.Round(x/b.step) * b.step
		}
		n.typed(fmt.Sprintf(b.format, x))
		ws.Wait()
		typedX, _ := parseNumber(fmt.Sprintf(b.format, x))
		if p := ws.Problem(); p != "" {
			// Refused: nothing changed.
			if got := b.get(ws.shown()); got != old || n.entry.Text != oldText {
				t.Errorf("%s: refused %g (%s) but now reads %g, box %q (was %g, %q)", b.name, x, p, got, n.entry.Text, old, oldText)
			}
			ws.problem = ""
			for len(ws.dialogs) > 0 {
				ws.dialogs[len(ws.dialogs)-1].Hide()
			}
			continue
		}
		tried++
		if got := b.get(ws.shown()); math.Abs(got-typedX) > 1e-9*math.Max(1, math.Abs(typedX)) {
			t.Errorf("%s: typed %g, the settings read %g", b.name, typedX, got)
		}
		ws.Undo()
		ws.Wait()
		if got := b.get(ws.shown()); math.Abs(got-old) > 1e-9*math.Max(1, math.Abs(old)) || n.entry.Text != oldText {
			t.Errorf("%s: after Undo the settings read %g and the box %q, want %g and %q", b.name, got, n.entry.Text, old, oldText)
		}
	}
	t.Logf("%d number controls went both ways", tried)
	if tried < 8 {
		t.Errorf("only %d number controls took a value, want most of the table", tried)
	}
}
