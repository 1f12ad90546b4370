package ui

import (
	"math"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// The window's keys (+ − 0 to zoom, arrows for the trace strip's line,
// Page Up/Down for frames, Esc to stop) are the canvas's key handlers. A
// focused widget gets the keys first, and Fyne's lists, checks and sliders
// keep every key they get; the widgets below hand on the keys they do not
// use, so the window's keys work whatever was used last.

// keyModifiers reports the modifier keys held down; tests replace it.
var keyModifiers = func() fyne.KeyModifier {
	if a := fyne.CurrentApp(); a != nil {
		if d, ok := a.Driver().(desktop.Driver); ok {
			return d.CurrentKeyModifiers()
		}
	}
	return 0
}

// handOnKey gives ev to the key handler of the canvas o is on.
func handOnKey(o fyne.CanvasObject, ev *fyne.KeyEvent) {
	if c := fyne.CurrentApp().Driver().CanvasForObject(o); c != nil && c.OnTypedKey() != nil {
		c.OnTypedKey()(ev)
	}
}

// handOnRune gives r to the rune handler of the canvas o is on.
func handOnRune(o fyne.CanvasObject, r rune) {
	if c := fyne.CurrentApp().Driver().CanvasForObject(o); c != nil && c.OnTypedRune() != nil {
		c.OnTypedRune()(r)
	}
}

// choice is a drop-down list that opens with Space or Enter and hands
// every other key to the window. Show sets the choice without calling
// OnChanged, so showing a recipe never edits it.
type choice struct{ widget.Select }

func newChoice(options []string, changed func(string)) *choice {
	c := &choice{}
	c.Options, c.OnChanged, c.PlaceHolder = options, changed, "(choose)"
	c.ExtendBaseWidget(c)
	return c
}

func (c *choice) TypedKey(ev *fyne.KeyEvent) {
	switch ev.Name {
	case fyne.KeySpace, fyne.KeyReturn, fyne.KeyEnter:
		c.Select.TypedKey(&fyne.KeyEvent{Name: fyne.KeySpace})
	default:
		handOnKey(c, ev)
	}
}

func (c *choice) TypedRune(r rune) { handOnRune(c, r) }

// show selects option without calling OnChanged.
func (c *choice) show(option string) {
	if c.Selected != option {
		c.Selected = option
		c.Refresh()
	}
}

// toggle is a check box that takes Space and hands every other key to the
// window.
type toggle struct{ widget.Check }

func newToggle(label string, changed func(bool)) *toggle {
	t := &toggle{}
	t.Text, t.OnChanged = label, changed
	t.ExtendBaseWidget(t)
	return t
}

func (t *toggle) TypedRune(r rune) {
	if r == ' ' {
		t.Check.TypedRune(r)
		return
	}
	handOnRune(t, r)
}

func (t *toggle) TypedKey(ev *fyne.KeyEvent) { handOnKey(t, ev) }

// show sets the box without calling OnChanged.
func (t *toggle) show(on bool) {
	if t.Checked != on {
		t.Checked = on
		t.Refresh()
	}
}

// fineSlider is a slider whose arrow keys nudge by a fixed step (ten times
// that with Shift) and which moves a tenth as fast while dragged with
// Ctrl held. Runes and the keys it does not use go to the window.
type fineSlider struct {
	widget.Slider
	// nudge returns the step of one arrow key press.
	nudge func() float64
	// moved is called with the new value when the user moves it.
	moved func(v float64)
	// gesture is called with true when a drag starts and false when it
	// ends (one undo step per drag).
	gesture  func(start bool)
	dragging bool
	fineBase float64 // value when the fine drag started
	fineSum  float64 // change summed over the fine drag
	fine     bool
}

// fineDragDivisor is how many times slower a drag with Ctrl moves.
const fineDragDivisor = 10

func newFineSlider(lo, hi float64) *fineSlider {
	s := &fineSlider{}
	s.Min, s.Max, s.Step = lo, hi, 1
	s.OnChanged = func(v float64) {
		if s.moved != nil {
			s.moved(v)
		}
	}
	s.ExtendBaseWidget(s)
	return s
}

// show moves the knob to v without calling moved.
func (s *fineSlider) show(v float64) {
	if s.Value != v {
		s.Value = v
		s.Refresh()
	}
}

func (s *fineSlider) TypedKey(ev *fyne.KeyEvent) {
	sign := 0.0
	switch ev.Name {
	case fyne.KeyRight, fyne.KeyUp:
		sign = 1
	case fyne.KeyLeft, fyne.KeyDown:
		sign = -1
	default:
		handOnKey(s, ev)
		return
	}
	if s.Disabled() {
		return
	}
	step := s.Step
	if s.nudge != nil {
		step = s.nudge()
	}
	base := step
	if keyModifiers()&fyne.KeyModifierShift != 0 {
		step *= 10
	}
	// Round to the step so repeated nudges land on round values.
	v := s.Value + sign*step
	if base > 0 {
		v = math.Round(v/base) * base
	}
	if s.gesture != nil {
		s.gesture(false) // each press is a step of its own
	}
	s.Value = v
	s.Refresh()
	if s.moved != nil {
		s.moved(v)
	}
}

func (s *fineSlider) TypedRune(r rune) { handOnRune(s, r) }

func (s *fineSlider) Dragged(ev *fyne.DragEvent) {
	if s.Disabled() {
		return
	}
	if !s.dragging {
		s.dragging = true
		s.fine = false
		if s.gesture != nil {
			s.gesture(true)
		}
	}
	if keyModifiers()&fyne.KeyModifierControl == 0 {
		s.fine = false
		s.Slider.Dragged(ev)
		return
	}
	if !s.fine {
		s.fine, s.fineBase, s.fineSum = true, s.Value, 0
	}
	usable := s.Size().Width - 2*theme.Size(theme.SizeNameInlineIcon)
	if usable <= 0 {
		return
	}
	s.fineSum += float64(ev.Dragged.DX) / float64(usable) * (s.Max - s.Min) / fineDragDivisor
	v := math.Min(math.Max(s.fineBase+s.fineSum, s.Min), s.Max)
	if s.Step > 0 {
		v = math.Round(v/s.Step) * s.Step
	}
	if v != s.Value {
		s.Value = v
		s.Refresh()
		if s.moved != nil {
			s.moved(v)
		}
	}
}

func (s *fineSlider) DragEnd() {
	s.Slider.DragEnd()
	if s.dragging {
		s.dragging = false
		if s.gesture != nil {
			s.gesture(false)
		}
	}
}
