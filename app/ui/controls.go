package ui

import (
	"fmt"
	"math"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/recipe"
)

// shown is what the controls show: the settings being edited, the build
// shown (its recipe has every automatic value filled in, its report what
// was found), the capture and the frame on screen.
type shown struct {
	s     settings
	res   *Result
	rec   *capture.Recording
	frame *recon.Frame
	// frameRange is the lowest and highest covered value of frame.
	frameRange [2]float64
	// indexSpan is the index channel's lowest and highest level (equal
	// when unknown).
	indexSpan [2]float64
}

func (v shown) r() recipe.Recipe        { return v.s.Recipe }
func (v shown) resolved() recipe.Recipe { return v.res.Recipe }

// controlKind is the widget a control is shown with.
type controlKind int

const (
	kindNumber controlKind = iota // slider with a typed entry
	kindChoice                    // drop-down list
	kindToggle                    // check box
)

// control is one row of the controls table: how it looks, how its value is
// read from what is shown and how the user's value is written back. Both
// directions come from here; nothing else in the panel knows a recipe key.
type control struct {
	name  string // the label, also the name of its undo step
	group string
	kind  controlKind

	// kindNumber: slider span and step, entry format, arrow-key nudge
	// (0: a round fraction of the span).
	lo, hi, step, nudge float64
	format              string
	// span, when set, gives the slider's span for what is shown.
	span func(v shown) (lo, hi float64, ok bool)
	get  func(v shown) float64
	// set writes x; false refuses it (the control shows the old value).
	set func(s *settings, x float64) bool

	// kindChoice: the names shown and their recipe values.
	names, keys []string
	getKey      func(v shown) string
	setKey      func(s *settings, key string)

	// kindToggle.
	getOn func(v shown) bool
	setOn func(s *settings, on bool)

	// auto, when set, makes a "Find automatically" button: isAuto says the
	// value shown was found automatically, toAuto asks for that again.
	isAuto func(v shown) bool
	toAuto func(s *settings)

	// enabled says when the control applies (nil: always).
	enabled func(v shown) bool
}

// Names shown for recipe values, and back.
var (
	projectionNames = []string{"flat plane (D·tan θ)", "angular (D·θ)"}
	projectionKeys  = []string{"flat", "angular"}
	strokeNames     = []string{"merge all passes", "one frame per pass", "first pass only"}
	strokeKeys      = []string{"merge", "split", "first"}
	pulseNames      = []string{"one per aperture", "one per revolution"}
	pulseKeys       = []string{"aperture", "revolution"}
	// lawNames and rowsSourceNames follow the order of the recipe's own
	// lists of allowed values (recipe.Laws, recipe.RowSources).
	lawNames        = []string{"spinning wheel or polygon (uniform)", "resonant mirror (sine)", "measured table"}
	lawKeys         = recipe.Laws
	rowsSourceNames = []string{"position level (DC)", "carrier tone amplitude", "step pulses", "even speed (no sensor)"}
	rowsSourceKeys  = recipe.RowSources
	baselineNames   = []string{"from the beam-off interval", "none (keep the raw level)"}
	baselineKeys    = []string{"beam-off", "none"}
	edgeNames       = []string{"rising", "falling"}
)

func modeKeys[T ~string](modes []T) []string {
	out := make([]string, len(modes))
	for i, m := range modes {
		out[i] = string(m)
	}
	return out
}

// The groups of the left column, nearest the image first.
const (
	groupAlign  = "Line alignment"
	groupTone   = "Tone"
	groupSweep  = "Sweep geometry"
	groupRows   = "Cross-scan"
	groupSignal = "Detector signal"
)

// Names of the controls the code refers to.
const (
	ctlThreshold = "Index threshold"
	ctlDelay     = "Delay after the index edge (°)"
	ctlLaw       = "Sweep"
	ctlApertures = "Apertures on the wheel"
	ctlField     = "Field of view (°)"
	ctlDistance  = "Distance to the scene (mm)"
	ctlProject   = "Projection"
	ctlPitch     = "Pitch (mm per pixel)"
	ctlRows      = "Rows from"
	ctlSpeed     = "Head speed (mm/s)"
	ctlStep      = "Travel per step (mm)"
	ctlPolarity  = "Detector polarity: negative-going"
	ctlWindow    = "Window"
	ctlLevel     = "Level"
	ctlGamma     = "Gamma"
	ctlShowNeg   = "Show inverted (negative)"
)

// setApertures sets the wheel's aperture count, keeping one index pulse
// per aperture when that is how the index was read, and dropping aperture
// offsets that no longer fit the count.
func setApertures(r *recipe.Recipe, n int) {
	if r.Timing.PulsesPerRev != 1 {
		r.Timing.PulsesPerRev = n
	}
	if len(r.Sweep.ApertureOffsetsDeg) != 0 && len(r.Sweep.ApertureOffsetsDeg) != n {
		r.Sweep.ApertureOffsetsDeg = []float64{}
	}
	r.Sweep.Apertures = n
}

func nameFor(key string, keys, names []string) string {
	for i, k := range keys {
		if k == key {
			return names[i]
		}
	}
	return key
}

func keyFor(name string, keys, names []string) string {
	for i, n := range names {
		if n == name {
			return keys[i]
		}
	}
	return name
}

// orFound is the value set by hand, else the value the build found.
func orFound(set, resolved *float64, found float64) float64 {
	switch {
	case set != nil:
		return *set
	case resolved != nil:
		return *resolved
	}
	return found
}

func isSine(v shown) bool { return v.r().Sweep.Law == recipe.LawSine }

// controlTable lists every plain control of the panel, group by group.
func controlTable() []control {
	positive := func(x float64) bool { return x > 0 }
	rebuilt := func(f func(r *recipe.Recipe, x float64)) func(s *settings, x float64) bool {
		return func(s *settings, x float64) bool { f(&s.Recipe, x); return true }
	}
	return []control{
		{name: ctlThreshold, group: groupAlign, kind: kindNumber, lo: 0, hi: 1, format: "%.4g",
			span: func(v shown) (float64, float64, bool) {
				return v.indexSpan[0], v.indexSpan[1], v.indexSpan[1] > v.indexSpan[0]
			},
			get: func(v shown) float64 {
				return orFound(v.r().Timing.Threshold, v.resolved().Timing.Threshold, v.res.Report.Threshold)
			},
			set:    rebuilt(func(r *recipe.Recipe, x float64) { r.Timing.Threshold = recipe.Float(x) }),
			isAuto: func(v shown) bool { return v.r().Timing.Threshold == nil },
			toAuto: func(s *settings) { s.Recipe.Timing.Threshold = nil }},
		{name: "Index edge", group: groupAlign, kind: kindChoice, names: edgeNames, keys: edgeNames,
			getKey: func(v shown) string {
				if e := v.r().Timing.Edge; e != "" {
					return e
				}
				return v.resolved().Timing.Edge
			},
			setKey: func(s *settings, k string) { s.Recipe.Timing.Edge = k }},
		{name: ctlDelay, group: groupAlign, kind: kindNumber, lo: 0, hi: 90, step: 0.001, nudge: 0.01, format: "%.3f",
			span: func(v shown) (float64, float64, bool) {
				if r := v.r(); !isSine(v) && r.Timing.PulsesPerRev > 1 {
					return 0, 360 / float64(r.Timing.PulsesPerRev), true
				}
				return 0, 360, true
			},
			get: func(v shown) float64 {
				return orFound(v.r().Sweep.DelayDeg, v.resolved().Sweep.DelayDeg, v.res.Report.DelayDeg)
			},
			set:    rebuilt(func(r *recipe.Recipe, x float64) { r.Sweep.DelayDeg = recipe.Float(x) }),
			isAuto: func(v shown) bool { return v.r().Sweep.DelayDeg == nil },
			toAuto: func(s *settings) { s.Recipe.Sweep.DelayDeg = nil }},

		{name: ctlWindow, group: groupTone, kind: kindNumber, lo: 0, hi: 1, format: "%.4g",
			span: frameSpan(func(lo, hi, span float64) (float64, float64) { return span / 1000, 2 * span }),
			get:  func(v shown) float64 { return v.s.Tone.Window },
			set:  func(s *settings, x float64) bool { s.Tone.Window = math.Max(x, 0); return true }},
		{name: ctlLevel, group: groupTone, kind: kindNumber, lo: 0, hi: 1, format: "%.4g",
			span: frameSpan(func(lo, hi, span float64) (float64, float64) { return lo - 0.25*span, hi + 0.25*span }),
			get:  func(v shown) float64 { return v.s.Tone.Level },
			set:  func(s *settings, x float64) bool { s.Tone.Level = x; return true }},
		{name: ctlGamma, group: groupTone, kind: kindNumber, lo: 0.2, hi: 4, step: 0.01, format: "%.2f",
			get: func(v shown) float64 {
				if v.s.Tone.Gamma == 0 {
					return 1
				}
				return v.s.Tone.Gamma
			},
			set: func(s *settings, x float64) bool { s.Tone.Gamma = x; return positive(x) }},
		{name: ctlShowNeg, group: groupTone, kind: kindToggle,
			getOn: func(v shown) bool { return v.s.Tone.Invert },
			setOn: func(s *settings, on bool) { s.Tone.Invert = on }},

		{name: ctlLaw, group: groupSweep, kind: kindChoice, names: lawNames, keys: modeKeys(lawKeys),
			getKey: func(v shown) string { return string(v.r().Sweep.Law) },
			setKey: func(s *settings, k string) { s.Recipe.Sweep.Law = recipe.Law(k) }},
		{name: ctlApertures, group: groupSweep, kind: kindNumber, lo: 1, hi: 24, step: 1, format: "%.0f",
			get: func(v shown) float64 { return float64(v.r().Sweep.Apertures) },
			set: func(s *settings, x float64) bool {
				n := int(math.Round(x))
				if n < 1 {
					return false
				}
				setApertures(&s.Recipe, n)
				return true
			},
			enabled: func(v shown) bool { return !isSine(v) }},
		{name: "Index pulses", group: groupSweep, kind: kindChoice, names: pulseNames, keys: pulseKeys,
			getKey: func(v shown) string {
				if r := v.r(); r.Timing.PulsesPerRev == 1 && r.Sweep.Apertures > 1 {
					return "revolution"
				}
				return "aperture"
			},
			setKey: func(s *settings, k string) {
				if k == "revolution" {
					s.Recipe.Timing.PulsesPerRev = 1
				} else {
					s.Recipe.Timing.PulsesPerRev = s.Recipe.Sweep.Apertures
				}
			},
			enabled: func(v shown) bool { return !isSine(v) }},
		{name: ctlField, group: groupSweep, kind: kindNumber, lo: 1, hi: 120, step: 0.1, format: "%.2f",
			get: func(v shown) float64 { return v.r().Sweep.FieldDeg },
			set: func(s *settings, x float64) bool { s.Recipe.Sweep.FieldDeg = x; return positive(x) }},
		{name: ctlDistance, group: groupSweep, kind: kindNumber, lo: 10, hi: 3000, step: 1, format: "%.0f",
			get: func(v shown) float64 { return v.r().Sweep.DistanceMM },
			set: func(s *settings, x float64) bool { s.Recipe.Sweep.DistanceMM = x; return positive(x) }},
		{name: ctlProject, group: groupSweep, kind: kindChoice, names: projectionNames, keys: projectionKeys,
			getKey: func(v shown) string { return v.r().Sweep.Projection },
			setKey: func(s *settings, k string) { s.Recipe.Sweep.Projection = k }},
		{name: ctlPitch, group: groupSweep, kind: kindNumber, lo: 0.1, hi: 10, step: 0.01, format: "%.2f",
			get: func(v shown) float64 { return v.r().Image.PitchMM },
			set: func(s *settings, x float64) bool { s.Recipe.Image.PitchMM = x; return positive(x) }},

		{name: ctlRows, group: groupRows, kind: kindChoice, names: rowsSourceNames, keys: modeKeys(rowsSourceKeys),
			getKey: func(v shown) string { return string(v.r().Rows.Source) },
			setKey: func(s *settings, k string) { s.Recipe.Rows.Source = recipe.RowSource(k) }},
		{name: ctlSpeed, group: groupRows, kind: kindNumber, lo: 1, hi: 500, step: 0.5, format: "%.1f",
			get: func(v shown) float64 { return orFound(v.r().Rows.SpeedMMS, v.resolved().Rows.SpeedMMS, 0) },
			set: func(s *settings, x float64) bool {
				s.Recipe.Rows.SpeedMMS = recipe.Float(x)
				return x != 0
			},
			enabled: func(v shown) bool { return v.r().Rows.Source == recipe.SourceEven }},
		{name: ctlStep, group: groupRows, kind: kindNumber, lo: 0.001, hi: 5, step: 0.001, format: "%.4g",
			get: func(v shown) float64 { return orFound(v.r().Rows.MMPerStep, v.resolved().Rows.MMPerStep, 0) },
			set: func(s *settings, x float64) bool {
				s.Recipe.Rows.MMPerStep = recipe.Float(x)
				return x != 0
			},
			enabled: func(v shown) bool { return v.r().Rows.Source == recipe.SourceSteps }},
		{name: "Passes of the head", group: groupRows, kind: kindChoice, names: strokeNames, keys: strokeKeys,
			getKey: func(v shown) string { return v.r().Rows.Strokes },
			setKey: func(s *settings, k string) { s.Recipe.Rows.Strokes = k }},

		{name: ctlPolarity, group: groupSignal, kind: kindToggle,
			getOn: func(v shown) bool { return v.r().Signal.Invert },
			setOn: func(s *settings, on bool) { s.Recipe.Signal.Invert = on }},
		{name: "AC coupling to undo (Hz, 0 = DC coupled)", group: groupSignal, kind: kindNumber, lo: 0, hi: 100, step: 0.5, format: "%.1f",
			get: func(v shown) float64 { return v.r().Signal.ACCornerHz },
			set: func(s *settings, x float64) bool { s.Recipe.Signal.ACCornerHz = x; return x >= 0 }},
		{name: "Baseline", group: groupSignal, kind: kindChoice, names: baselineNames, keys: baselineKeys,
			getKey: func(v shown) string { return v.r().Signal.Baseline },
			setKey: func(s *settings, k string) { s.Recipe.Signal.Baseline = k }},
	}
}

// frameSpan makes a slider span from the values of the frame shown: f
// gets their lowest, highest and the distance between (1 when flat).
func frameSpan(f func(lo, hi, span float64) (float64, float64)) func(v shown) (float64, float64, bool) {
	return func(v shown) (float64, float64, bool) {
		if v.frame == nil {
			return 0, 0, false
		}
		lo, hi := v.frameRange[0], v.frameRange[1]
		span := hi - lo
		if !(span > 0) {
			span = 1
		}
		a, b := f(lo, hi, span)
		return a, b, true
	}
}

// panelActions are what the control panel may ask of the window.
type panelActions struct {
	// edit changes the settings as the control name says; the window
	// rebuilds or re-tones as the change needs and records an undo step.
	edit func(name string, f func(*settings) bool)
	// gesture opens (start) or closes one undo step over a drag.
	gesture  func(name string, start bool)
	problem  func(title, what, try string)
	estimate func()
	autoTone func()
	table    func() // opens the measured sweep table's editor
	// loadPairs asks for a file of calibration pairs and hands its text
	// back; showList shows a long calibration in a dialog.
	loadPairs func(done func(text, name string))
	showList  func(title string, body fyne.CanvasObject)
}

// bound is one control of the table with its widgets.
type bound struct {
	control
	number *numberControl
	choice *choice
	toggle *toggle
	auto   *widget.Button
	box    fyne.CanvasObject
}

// controlPanel shows the controls of the table, the aperture offsets and
// the position calibration, in groups the user can fold.
type controlPanel struct {
	act    panelActions
	ctls   []*bound
	byName map[string]*bound

	offsetsBox *fyne.Container
	offsets    []*numberControl
	// autoOffsets are the offsets the build shown found (nil when they
	// are set by hand).
	autoOffsets []float64
	offsetNote  *widget.Label
	estimate    *widget.Button
	rowsNote    *widget.Label
	cal         *calibrationEditor
	autoTone    *widget.Button
	autoEach    *toggle

	groups *widget.Accordion
	box    fyne.CanvasObject
}

func newControlPanel(act panelActions) *controlPanel {
	c := &controlPanel{act: act, byName: map[string]*bound{}}
	for _, ctl := range controlTable() {
		b := c.bind(ctl)
		c.ctls = append(c.ctls, b)
		c.byName[ctl.name] = b
	}

	c.offsetsBox = container.NewVBox()
	c.offsetNote = widget.NewLabel("")
	c.offsetNote.Wrapping = fyne.TextWrapWord
	c.offsetNote.Importance = widget.LowImportance
	c.estimate = widget.NewButton("Estimate offsets from the image", act.estimate)
	c.rowsNote = widget.NewLabel("")
	c.rowsNote.Wrapping = fyne.TextWrapWord
	c.cal = newCalibrationEditor(func(points [][2]float64) {
		act.edit("calibration", func(s *settings) bool { s.Recipe.Rows.Calibration = points; return true })
	}, act.problem)
	c.cal.load, c.cal.list = act.loadPairs, act.showList
	c.autoTone = widget.NewButton("Auto from histogram", act.autoTone)
	c.autoEach = newToggle("Auto after every build", nil)

	groupBoxes := map[string]*fyne.Container{}
	var order []string
	for _, b := range c.ctls {
		g := groupBoxes[b.group]
		if g == nil {
			g = container.NewVBox()
			groupBoxes[b.group] = g
			order = append(order, b.group)
		}
		g.Add(b.box)
	}
	align := groupBoxes[groupAlign]
	align.Add(widget.NewLabel("Aperture offsets (°)"))
	align.Add(c.offsetNote)
	align.Add(c.offsetsBox)
	align.Add(c.estimate)
	groupBoxes[groupTone].Add(c.autoTone)
	groupBoxes[groupTone].Add(c.autoEach)
	groupBoxes[groupSweep].Add(widget.NewButton("Measured table…", act.table))
	rows := groupBoxes[groupRows]
	rows.Objects = append([]fyne.CanvasObject{rows.Objects[0], c.rowsNote}, rows.Objects[1:]...)
	rows.Add(c.cal.box)

	c.groups = widget.NewAccordion()
	c.groups.MultiOpen = true
	for _, g := range order {
		c.groups.Append(widget.NewAccordionItem(g, groupBoxes[g]))
	}
	c.groups.Open(0)
	c.groups.Open(1)
	c.box = c.groups
	return c
}

// bind makes the widgets of one control; every user change goes through
// the control's set and the panel's edit.
func (c *controlPanel) bind(ctl control) *bound {
	b := &bound{control: ctl}
	var body fyne.CanvasObject
	switch ctl.kind {
	case kindNumber:
		b.number = newNumberControl(ctl.name, ctl.lo, ctl.hi, ctl.step, ctl.format, func(x float64) {
			c.act.edit(ctl.name, func(s *settings) bool { return ctl.set(s, x) })
		})
		b.number.nudgeStep = ctl.nudge
		b.number.slider.gesture = func(start bool) { c.act.gesture(ctl.name, start) }
		body = b.number.box
	case kindChoice:
		b.choice = newChoice(ctl.names, func(name string) {
			key := keyFor(name, ctl.keys, ctl.names)
			c.act.edit(ctl.name, func(s *settings) bool { ctl.setKey(s, key); return true })
		})
		body = container.NewBorder(nil, nil, widget.NewLabel(ctl.name), nil, b.choice)
	case kindToggle:
		b.toggle = newToggle(ctl.name, func(on bool) {
			c.act.edit(ctl.name, func(s *settings) bool { ctl.setOn(s, on); return true })
		})
		body = b.toggle
	}
	if ctl.toAuto != nil {
		b.auto = widget.NewButton("Find automatically", func() {
			c.act.edit(ctl.name+" automatic", func(s *settings) bool { ctl.toAuto(s); return true })
		})
		body = container.NewVBox(body, container.NewHBox(b.auto))
	}
	b.box = body
	return b
}

func (c *controlPanel) object() fyne.CanvasObject { return c.box }

func (c *controlPanel) autoEachBuild() bool { return c.autoEach.Checked }

// number returns the number control named name (for the window's keys
// and tests).
func (c *controlPanel) number(name string) *numberControl { return c.byName[name].number }
func (c *controlPanel) choice(name string) *choice        { return c.byName[name].choice }
func (c *controlPanel) toggle(name string) *toggle        { return c.byName[name].toggle }

// show puts what is shown into every control, from the table. It returns
// whether the panel may have changed height (a note, the number of
// aperture controls, the calibration), so the column is laid out again.
func (c *controlPanel) show(v shown) (reshaped bool) {
	for _, b := range c.ctls {
		on := b.enabled == nil || b.enabled(v)
		switch b.kind {
		case kindNumber:
			if b.span != nil {
				if lo, hi, ok := b.span(v); ok {
					if b.step == 0 {
						b.number.slider.Step = (hi - lo) / 1000
					}
					b.number.setRange(lo, hi)
				}
			}
			b.number.set(b.get(v))
			b.number.enable(on)
		case kindChoice:
			b.choice.show(nameFor(b.getKey(v), b.keys, b.names))
			enable(b.choice, on)
		case kindToggle:
			b.toggle.show(b.getOn(v))
			enable(b.toggle, on)
		}
		if b.auto != nil {
			// The button says how the value was found; pressed, it finds
			// it again after a change by hand.
			text := "Find automatically"
			if b.isAuto(v) {
				text = "Found automatically"
			}
			if b.auto.Text != text {
				b.auto.SetText(text)
			}
			enable(b.auto, !b.isAuto(v))
		}
	}
	r, resolved := v.r(), v.resolved()
	apertures, values := resolved.Sweep.Apertures, r.Sweep.ApertureOffsetsDeg
	if isSine(v) {
		apertures = 0
	}
	c.autoOffsets = nil
	note := ""
	if values == nil {
		c.autoOffsets = resolved.Sweep.ApertureOffsetsDeg
		values = resolved.Sweep.ApertureOffsetsDeg
		if apertures > 0 {
			note = "Estimated in every build; move one to set them by hand."
		}
	}
	reshaped = showNote(c.offsetNote, note)
	reshaped = c.showOffsets(apertures, values) || reshaped
	if text := rowsDescription(resolved.Rows); c.rowsNote.Text != text {
		c.rowsNote.SetText(text)
		reshaped = true
	}
	return c.cal.show(r.Rows.Calibration, r.Rows.Source.ReadsPosition()) || reshaped
}

// showNote shows text in label, hiding the label when there is none so
// an empty note leaves no gap; it returns whether the text changed.
func showNote(label *widget.Label, text string) bool {
	if label.Text == text && label.Visible() == (text != "") {
		return false
	}
	label.SetText(text)
	if text == "" {
		label.Hide()
	} else {
		label.Show()
	}
	return true
}

func enable(w fyne.Disableable, on bool) {
	if on {
		w.Enable()
	} else {
		w.Disable()
	}
}

func rowsDescription(rows recipe.Rows) string {
	switch rows.Source {
	case recipe.SourcePosition:
		return "Rows from the level of the position channel."
	case recipe.SourceTone:
		return "Rows from the amplitude of the carrier tone on the position channel."
	case recipe.SourceSteps:
		if rows.MMPerStep != nil {
			return fmt.Sprintf("Rows from step pulses, %g mm a step.", *rows.MMPerStep)
		}
		return "Rows from step pulses."
	case recipe.SourceEven:
		if rows.SpeedMMS != nil {
			return fmt.Sprintf("Rows at a constant %g mm/s.", *rows.SpeedMMS)
		}
		return "Rows at a constant speed."
	}
	return "Rows from " + string(rows.Source) + "."
}

// showOffsets makes one control per aperture when their number changes
// (and then returns true).
func (c *controlPanel) showOffsets(apertures int, values []float64) (remade bool) {
	if apertures < 0 || apertures > 64 {
		apertures = 0
	}
	if len(c.offsets) != apertures || len(c.offsetsBox.Objects) == 0 {
		remade = true
		c.offsets = nil
		c.offsetsBox.RemoveAll()
		for k := 0; k < apertures; k++ {
			name := fmt.Sprintf("Aperture %d", k)
			ctl := newNumberControl(name, -3, 3, 0.001, "%.3f", func(v float64) {
				c.act.edit("offset "+name, func(s *settings) bool {
					r := &s.Recipe
					n := max(r.Sweep.Apertures, k+1)
					offs := make([]float64, n)
					// Automatic offsets become the start of hand-set ones.
					copy(offs, c.autoOffsets)
					copy(offs, r.Sweep.ApertureOffsetsDeg)
					offs[k] = v
					r.Sweep.ApertureOffsetsDeg = offs
					return true
				})
			})
			ctl.nudgeStep = 0.01
			ctl.slider.gesture = func(start bool) { c.act.gesture("offset "+name, start) }
			c.offsets = append(c.offsets, ctl)
			c.offsetsBox.Add(ctl.box)
		}
		if apertures == 0 {
			c.offsetsBox.Add(widget.NewLabel("(none: this sweep has no apertures)"))
		}
	}
	enable(c.estimate, apertures > 0)
	for k, ctl := range c.offsets {
		v := 0.0
		if k < len(values) {
			v = values[k]
		}
		ctl.set(v)
	}
	return remade
}

// coveredRange is the smallest and largest value of the covered pixels.
func coveredRange(f *recon.Frame) (lo, hi float64) {
	// Plain comparisons in float32: a NaN fails both, and the infinities
	// are kept out by the bounds, so no per-pixel NaN or Inf tests.
	const big = math.MaxFloat32
	l, h := float32(big), float32(-big)
	n := min(len(f.Pix), len(f.Covered))
	pix, cov := f.Pix[:n], f.Covered[:n]
	for i, v := range pix {
		if cov[i] && v >= -big && v <= big {
			if v < l {
				l = v
			}
			if v > h {
				h = v
			}
		}
	}
	if l > h {
		return 0, 1
	}
	return float64(l), float64(h)
}

// formatPairs writes calibration points one "level  mm" pair a line.
func formatPairs(points [][2]float64) string {
	var b strings.Builder
	for _, p := range points {
		fmt.Fprintf(&b, "%g  %g\n", p[0], p[1])
	}
	return strings.TrimSuffix(b.String(), "\n")
}
