package ui

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"
)

// numberControl is a labelled slider with an entry beside it for typing an
// exact value. Showing a value (set) never calls onChange; the user's
// moves, nudges and typed values do.
type numberControl struct {
	label  *widget.Label
	slider *fineSlider
	entry  *widget.Entry
	format string
	value  float64
	// nudgeStep is the step of one arrow key (0: a round fraction of the
	// slider's span, never below its step).
	nudgeStep float64
	// onChange is called with the new value as the user moves or types.
	onChange func(v float64)
	box      fyne.CanvasObject
}

// newNumberControl makes a control for values from lo to hi in steps of
// step, shown with format (e.g. "%.2f").
func newNumberControl(name string, lo, hi, step float64, format string, onChange func(float64)) *numberControl {
	c := &numberControl{format: format, onChange: onChange}
	c.label = widget.NewLabel(name)
	c.label.Wrapping = fyne.TextWrapWord // a long name never widens its column
	c.slider = newFineSlider(lo, hi)
	c.slider.Step = step
	c.entry = widget.NewEntry()
	c.slider.nudge = c.nudge
	c.slider.moved = func(v float64) {
		c.value = v
		c.showEntry()
		if c.onChange != nil {
			c.onChange(v)
		}
	}
	c.entry.OnSubmitted = func(text string) { c.typed(text) }
	c.entry.Validator = func(text string) error {
		if _, err := parseNumber(text); err != nil {
			return err
		}
		return nil
	}
	entryBox := container.NewGridWrap(fyne.NewSize(100, c.entry.MinSize().Height), c.entry)
	c.box = container.NewBorder(c.label, nil, nil, entryBox, c.slider)
	return c
}

// nudge is the step of one arrow key press.
func (c *numberControl) nudge() float64 {
	if c.nudgeStep > 0 {
		return c.nudgeStep
	}
	return math.Max(c.slider.Step, niceLength((c.slider.Max-c.slider.Min)/200))
}

func parseNumber(text string) (float64, error) {
	text = strings.TrimSpace(strings.TrimRight(strings.TrimSpace(text), "°m"))
	v, err := strconv.ParseFloat(strings.ReplaceAll(text, ",", "."), 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("type a number, e.g. 12.5")
	}
	return v, nil
}

// typed applies a value typed into the entry; values beyond the slider's
// range widen it, since the range is only a convenience.
func (c *numberControl) typed(text string) {
	v, err := parseNumber(text)
	if err != nil {
		c.showEntry()
		return
	}
	c.set(v)
	if c.onChange != nil {
		c.onChange(v)
	}
}

// set shows v without calling onChange.
func (c *numberControl) set(v float64) {
	c.value = v
	if v < c.slider.Min {
		c.slider.Min = v
	}
	if v > c.slider.Max {
		c.slider.Max = v
	}
	c.slider.show(v)
	c.showEntry()
}

// setRange changes the slider's span without changing the value.
func (c *numberControl) setRange(lo, hi float64) {
	if !(hi > lo) {
		return
	}
	lo, hi = math.Min(lo, c.value), math.Max(hi, c.value)
	if c.slider.Min == lo && c.slider.Max == hi {
		return
	}
	c.slider.Min, c.slider.Max = lo, hi
	c.slider.Refresh()
}

// showEntry writes the value into the entry; the same text is not set
// again (an entry lays its text out anew at every SetText).
func (c *numberControl) showEntry() {
	if text := fmt.Sprintf(c.format, c.value); c.entry.Text != text {
		c.entry.SetText(text)
	}
}

func (c *numberControl) enable(on bool) {
	if on {
		c.slider.Enable()
		c.entry.Enable()
	} else {
		c.slider.Disable()
		c.entry.Disable()
	}
}
