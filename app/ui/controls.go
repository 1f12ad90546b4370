package ui

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

// controlPanel holds the reconstruction and tone controls. Every change
// goes through Workstation.change (a rebuild) or changeTone (a redraw).
type controlPanel struct {
	ws    *Workstation
	quiet bool

	threshold     *numberControl
	thresholdAuto *widget.Button
	edge          *widget.Select
	delay         *numberControl
	delayAuto     *widget.Button
	delayNote     *widget.Label
	offsetsBox    *fyne.Container
	offsets       []*numberControl
	estimate      *widget.Button
	apertures     *numberControl
	pulses        *widget.Select
	law           *widget.Select
	field         *numberControl
	distance      *numberControl
	projection    *widget.Select
	pitch         *numberControl
	calibration   *widget.Entry
	calApply      *widget.Button
	rowsNote      *widget.Label
	rowsSource    *widget.Select
	speed         *numberControl
	mmPerStep     *numberControl
	strokes       *widget.Select
	signalInvert  *widget.Check
	acCorner      *numberControl
	baseline      *widget.Select

	window    *numberControl
	level     *numberControl
	gamma     *numberControl
	invert    *widget.Check
	autoTone  *widget.Button
	autoEach  *widget.Check
	toneFrame *recon.Frame

	box fyne.CanvasObject
}

// Names shown for recipe values, and back.
var (
	projectionNames = []string{"flat plane (D·tan θ)", "angular (D·θ)"}
	projectionKeys  = []string{"flat", "angular"}
	strokeNames     = []string{"merge all passes", "one frame per pass", "first pass only"}
	strokeKeys      = []string{"merge", "split", "first"}
	pulseNames      = []string{"one per aperture", "one per revolution"}
	// lawNames and rowsSourceNames follow the order of the recipe's own
	// lists of allowed values (recipe.Laws, recipe.RowSources).
	lawNames        = []string{"spinning wheel or polygon (uniform)", "resonant mirror (sine)", "measured table"}
	lawKeys         = recipe.Laws
	rowsSourceNames = []string{"position level (DC)", "carrier tone amplitude", "step pulses", "even speed (no sensor)"}
	rowsSourceKeys  = recipe.RowSources
	baselineNames   = []string{"from the beam-off interval", "none (keep the raw level)"}
	baselineKeys    = []string{"beam-off", "none"}
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

func nameFor[T ~string](key T, keys []T, names []string) string {
	for i, k := range keys {
		if k == key {
			return names[i]
		}
	}
	return string(key)
}

func keyFor[T ~string](name string, keys []T, names []string) T {
	for i, n := range names {
		if n == name {
			return keys[i]
		}
	}
	return T(name)
}

func newControlPanel(ws *Workstation) *controlPanel {
	c := &controlPanel{ws: ws}
	c.threshold = newNumberControl("Index threshold", 0, 1, 0, "%.4g", func(v float64) {
		ws.change("threshold", func(r *recipe.Recipe) { r.Timing.Threshold = recipe.Float(v) })
	})
	c.thresholdAuto = widget.NewButton("Find automatically", func() {
		ws.change("threshold auto", func(r *recipe.Recipe) { r.Timing.Threshold = nil })
	})
	c.edge = widget.NewSelect([]string{"rising", "falling"}, func(e string) {
		if c.quiet {
			return
		}
		ws.change("edge", func(r *recipe.Recipe) { r.Timing.Edge = e })
	})
	c.delay = newNumberControl("Delay after the index edge (°)", 0, 90, 0.01, "%.2f", func(v float64) {
		ws.change("delay", func(r *recipe.Recipe) { r.Sweep.DelayDeg = recipe.Float(v) })
	})
	c.delayAuto = widget.NewButton("Find automatically", func() {
		ws.change("delay auto", func(r *recipe.Recipe) { r.Sweep.DelayDeg = nil })
	})
	c.delayNote = widget.NewLabel("")
	c.delayNote.Wrapping = fyne.TextWrapWord
	c.offsetsBox = container.NewVBox()
	c.estimate = widget.NewButton("Estimate offsets from the image", ws.EstimateOffsets)

	c.apertures = newNumberControl("Apertures on the wheel", 1, 24, 1, "%.0f", func(v float64) {
		n := int(math.Round(v))
		if n < 1 {
			return
		}
		ws.change("apertures", func(r *recipe.Recipe) { setApertures(r, n) })
	})
	c.pulses = widget.NewSelect(pulseNames, func(name string) {
		if c.quiet {
			return
		}
		ws.change("index pulses", func(r *recipe.Recipe) {
			if name == pulseNames[1] {
				r.Timing.PulsesPerRev = 1
			} else {
				r.Timing.PulsesPerRev = r.Sweep.Apertures
			}
		})
	})
	c.law = widget.NewSelect(lawNames, func(name string) {
		if c.quiet {
			return
		}
		ws.change("sweep law", func(r *recipe.Recipe) { r.Sweep.Law = keyFor(name, lawKeys, lawNames) })
	})
	c.field = newNumberControl("Field of view (°)", 1, 120, 0.1, "%.2f", func(v float64) {
		if v <= 0 {
			return
		}
		ws.change("field", func(r *recipe.Recipe) { r.Sweep.FieldDeg = v })
	})
	c.distance = newNumberControl("Distance to the scene (mm)", 10, 3000, 1, "%.0f", func(v float64) {
		if v <= 0 {
			return
		}
		ws.change("distance", func(r *recipe.Recipe) { r.Sweep.DistanceMM = v })
	})
	c.projection = widget.NewSelect(projectionNames, func(name string) {
		if c.quiet {
			return
		}
		ws.change("projection", func(r *recipe.Recipe) { r.Sweep.Projection = keyFor(name, projectionKeys, projectionNames) })
	})
	c.pitch = newNumberControl("Pitch (mm per pixel)", 0.1, 10, 0.05, "%.2f", func(v float64) {
		if v <= 0 {
			return
		}
		ws.change("pitch", func(r *recipe.Recipe) { r.Image.PitchMM = v })
	})

	c.calibration = widget.NewMultiLineEntry()
	c.calibration.SetMinRowsVisible(3)
	c.calibration.SetPlaceHolder("level  mm\n0.5  0\n4.5  400")
	c.calApply = widget.NewButton("Apply calibration", c.applyCalibration)
	c.rowsNote = widget.NewLabel("")
	c.rowsNote.Wrapping = fyne.TextWrapWord
	c.rowsSource = widget.NewSelect(rowsSourceNames, func(name string) {
		if c.quiet {
			return
		}
		ws.change("rows source", func(r *recipe.Recipe) { r.Rows.Source = keyFor(name, rowsSourceKeys, rowsSourceNames) })
	})
	c.speed = newNumberControl("Head speed (mm/s)", 1, 500, 0.5, "%.1f", func(v float64) {
		if v == 0 {
			return
		}
		ws.change("head speed", func(r *recipe.Recipe) { r.Rows.SpeedMMS = recipe.Float(v) })
	})
	c.mmPerStep = newNumberControl("Travel per step (mm)", 0.001, 5, 0.001, "%.4g", func(v float64) {
		if v == 0 {
			return
		}
		ws.change("travel per step", func(r *recipe.Recipe) { r.Rows.MMPerStep = recipe.Float(v) })
	})
	c.strokes = widget.NewSelect(strokeNames, func(name string) {
		if c.quiet {
			return
		}
		ws.change("strokes", func(r *recipe.Recipe) { r.Rows.Strokes = keyFor(name, strokeKeys, strokeNames) })
	})

	c.signalInvert = widget.NewCheck("Negative-going detector: invert the signal", func(on bool) {
		if c.quiet {
			return
		}
		ws.change("invert signal", func(r *recipe.Recipe) { r.Signal.Invert = on })
	})
	c.acCorner = newNumberControl("AC coupling to undo (Hz, 0 = DC coupled)", 0, 100, 0.5, "%.1f", func(v float64) {
		if v < 0 {
			return
		}
		ws.change("ac coupling", func(r *recipe.Recipe) { r.Signal.ACCornerHz = v })
	})
	c.baseline = widget.NewSelect(baselineNames, func(name string) {
		if c.quiet {
			return
		}
		ws.change("baseline", func(r *recipe.Recipe) { r.Signal.Baseline = keyFor(name, baselineKeys, baselineNames) })
	})

	c.window = newNumberControl("Window", 0, 1, 0, "%.4g", func(v float64) {
		ws.changeTone("window", func(t *recon.Tone) { t.Window = math.Max(v, 0) })
	})
	c.level = newNumberControl("Level", 0, 1, 0, "%.4g", func(v float64) {
		ws.changeTone("level", func(t *recon.Tone) { t.Level = v })
	})
	c.gamma = newNumberControl("Gamma", 0.2, 4, 0.01, "%.2f", func(v float64) {
		if v <= 0 {
			return
		}
		ws.changeTone("gamma", func(t *recon.Tone) { t.Gamma = v })
	})
	c.invert = widget.NewCheck("Invert", func(on bool) {
		if c.quiet {
			return
		}
		ws.changeTone("invert", func(t *recon.Tone) { t.Invert = on })
	})
	c.autoTone = widget.NewButton("Auto from histogram", ws.AutoTone)
	c.autoEach = widget.NewCheck("Auto after every build", nil)

	heading := func(s string) *widget.Label {
		return widget.NewLabelWithStyle(s, fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	}
	c.box = container.NewVBox(
		widget.NewSeparator(),
		heading("Line alignment"),
		c.threshold.box, container.NewHBox(c.thresholdAuto, widget.NewLabel("edge"), c.edge),
		c.delay.box, container.NewHBox(c.delayAuto), c.delayNote,
		widget.NewLabel("Aperture offsets (°)"),
		c.offsetsBox, c.estimate,
		widget.NewSeparator(),
		heading("Sweep geometry"),
		widget.NewLabel("Sweep"), c.law,
		c.apertures.box,
		widget.NewLabel("Index pulses"), c.pulses,
		c.field.box, c.distance.box,
		widget.NewLabel("Projection"), c.projection,
		c.pitch.box,
		widget.NewSeparator(),
		heading("Cross-scan"),
		widget.NewLabel("Rows from"), c.rowsSource,
		c.rowsNote,
		c.speed.box, c.mmPerStep.box,
		widget.NewLabel("Calibration: position level → mm, one pair a line"),
		c.calibration, c.calApply,
		widget.NewLabel("Passes of the head"), c.strokes,
		widget.NewSeparator(),
		heading("Detector signal"),
		c.signalInvert,
		c.acCorner.box,
		widget.NewLabel("Baseline"), c.baseline,
		widget.NewSeparator(),
		heading("Tone"),
		c.window.box, c.level.box, c.gamma.box,
		container.NewHBox(c.invert, c.autoTone), c.autoEach,
	)
	return c
}

func (c *controlPanel) object() fyne.CanvasObject { return c.box }

func (c *controlPanel) autoEachBuild() bool { return c.autoEach.Checked }

// applyCalibration reads "level mm" pairs, one a line.
func (c *controlPanel) applyCalibration() {
	var points [][2]float64
	for n, line := range strings.Split(c.calibration.Text, "\n") {
		fields := strings.FieldsFunc(line, func(r rune) bool { return r == ' ' || r == '\t' || r == ';' || r == '→' })
		if len(fields) == 0 {
			continue
		}
		if len(fields) != 2 {
			c.ws.showProblem("Cannot read the calibration", fmt.Sprintf("line %d holds %q; each line needs two numbers: a position level and its millimetres.", n+1, line),
				"write one pair a line, e.g. \"0.5 0\" and \"4.5 400\".")
			return
		}
		var p [2]float64
		for k, f := range fields {
			v, err := parseNumber(f)
			if err != nil {
				c.ws.showProblem("Cannot read the calibration", fmt.Sprintf("line %d:%d: %q is not a number.", n+1, k+1, f),
					"write one pair a line, e.g. \"0.5 0\" and \"4.5 400\".")
				return
			}
			p[k] = v
		}
		points = append(points, p)
	}
	if len(points) < 2 {
		c.ws.showProblem("Cannot use the calibration", fmt.Sprintf("it holds %d point(s); at least two are needed.", len(points)),
			"give two or more pairs of level and millimetres.")
		return
	}
	c.ws.change("calibration", func(r *recipe.Recipe) { r.Rows.Calibration = points })
}

// show puts settings s into the controls; res supplies the values found
// automatically and the ranges that make sense for this capture.
func (c *controlPanel) show(s settings, res *Result) {
	c.quiet = true
	defer func() { c.quiet = false }()
	r, resolved := s.Recipe, res.Recipe

	maxDelay := 360.0
	if r.Sweep.Law != recipe.LawSine && r.Timing.PulsesPerRev > 1 {
		maxDelay = 360 / float64(r.Timing.PulsesPerRev)
	}
	c.delay.setRange(0, maxDelay)
	switch {
	case r.Sweep.DelayDeg != nil:
		c.delay.set(*r.Sweep.DelayDeg)
		c.delayNote.SetText("")
		c.delayNote.Hide()
		c.delayAuto.Enable()
	case resolved.Sweep.DelayDeg != nil:
		c.delay.set(*resolved.Sweep.DelayDeg)
		c.delayNote.SetText("Found automatically; move it to set it by hand.")
		c.delayNote.Show()
		c.delayAuto.Disable()
	default:
		c.delay.set(res.Report.DelayDeg)
		c.delayNote.SetText("Found automatically; move it to set it by hand.")
		c.delayNote.Show()
		c.delayAuto.Disable()
	}

	c.showThreshold(r, resolved, res)

	apertures := resolved.Sweep.Apertures
	if r.Sweep.Law == recipe.LawSine {
		apertures = 0
	}
	c.showOffsets(apertures, r.Sweep.ApertureOffsetsDeg)

	c.law.SetSelected(nameFor(r.Sweep.Law, lawKeys, lawNames))
	c.apertures.set(float64(r.Sweep.Apertures))
	if r.Timing.PulsesPerRev == 1 && r.Sweep.Apertures > 1 {
		c.pulses.SetSelected(pulseNames[1])
	} else {
		c.pulses.SetSelected(pulseNames[0])
	}
	// A resonant mirror has one index pulse per period and no apertures.
	c.apertures.enable(r.Sweep.Law != recipe.LawSine)
	if r.Sweep.Law == recipe.LawSine {
		c.pulses.Disable()
	} else {
		c.pulses.Enable()
	}
	c.field.set(r.Sweep.FieldDeg)
	c.distance.set(r.Sweep.DistanceMM)
	c.projection.SetSelected(nameFor(r.Sweep.Projection, projectionKeys, projectionNames))
	c.pitch.set(r.Image.PitchMM)
	var cal []string
	for _, p := range r.Rows.Calibration {
		cal = append(cal, strconv.FormatFloat(p[0], 'g', -1, 64)+"  "+strconv.FormatFloat(p[1], 'g', -1, 64))
	}
	c.calibration.SetText(strings.Join(cal, "\n"))
	usesCal := r.Rows.Source.ReadsPosition()
	if usesCal {
		c.calibration.Enable()
		c.calApply.Enable()
	} else {
		c.calibration.Disable()
		c.calApply.Disable()
	}
	c.rowsNote.SetText(rowsDescription(resolved.Rows))
	c.rowsSource.SetSelected(nameFor(r.Rows.Source, rowsSourceKeys, rowsSourceNames))
	if v := resolved.Rows.SpeedMMS; v != nil {
		c.speed.set(*v)
	}
	if v := resolved.Rows.MMPerStep; v != nil {
		c.mmPerStep.set(*v)
	}
	c.speed.enable(r.Rows.Source == recipe.SourceEven)
	c.mmPerStep.enable(r.Rows.Source == recipe.SourceSteps)
	c.strokes.SetSelected(nameFor(r.Rows.Strokes, strokeKeys, strokeNames))
	c.signalInvert.SetChecked(r.Signal.Invert)
	c.acCorner.set(r.Signal.ACCornerHz)
	c.baseline.SetSelected(nameFor(r.Signal.Baseline, baselineKeys, baselineNames))

	var frame *recon.Frame
	if len(res.Frames) > 0 {
		frame = res.Frames[min(c.ws.frameIndex, len(res.Frames)-1)]
	}
	c.showToneQuiet(s.Tone, frame)
}

// showThreshold shows the index threshold, its range being the index
// channel's span, and the edge polarity.
func (c *controlPanel) showThreshold(r, resolved recipe.Recipe, res *Result) {
	if _, idx, _ := c.ws.roleChannels(resolved); idx >= 0 && c.ws.rec != nil {
		span := channelRange(c.ws.rec, idx)
		if span[1] > span[0] {
			c.threshold.slider.Step = (span[1] - span[0]) / 1000
			c.threshold.setRange(span[0], span[1])
		}
	}
	switch {
	case r.Timing.Threshold != nil:
		c.threshold.set(*r.Timing.Threshold)
		c.thresholdAuto.Enable()
	case resolved.Timing.Threshold != nil:
		c.threshold.set(*resolved.Timing.Threshold)
		c.thresholdAuto.Disable()
	default:
		c.threshold.set(res.Report.Threshold)
		c.thresholdAuto.Disable()
	}
	edge := r.Timing.Edge
	if edge == "" {
		edge = resolved.Timing.Edge
	}
	c.edge.SetSelected(edge)
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

// showOffsets makes one control per aperture when their number changes.
func (c *controlPanel) showOffsets(apertures int, values []float64) {
	if apertures < 0 || apertures > 64 {
		apertures = 0
	}
	if len(c.offsets) != apertures {
		c.offsets = nil
		c.offsetsBox.RemoveAll()
		for k := 0; k < apertures; k++ {
			k := k
			ctl := newNumberControl(fmt.Sprintf("Aperture %d", k), -3, 3, 0.01, "%.2f", func(v float64) {
				c.ws.change(fmt.Sprintf("offset %d", k), func(r *recipe.Recipe) {
					n := max(r.Sweep.Apertures, k+1)
					offs := make([]float64, n)
					copy(offs, r.Sweep.ApertureOffsetsDeg)
					offs[k] = v
					r.Sweep.ApertureOffsetsDeg = offs
				})
			})
			c.offsets = append(c.offsets, ctl)
			c.offsetsBox.Add(ctl.box)
		}
		if apertures == 0 {
			c.offsetsBox.Add(widget.NewLabel("(none: this sweep has no apertures)"))
			c.estimate.Disable()
		} else {
			c.estimate.Enable()
		}
	}
	for k, ctl := range c.offsets {
		v := 0.0
		if k < len(values) {
			v = values[k]
		}
		ctl.set(v)
	}
}

// showTone puts a tone into the tone controls (after Auto).
func (c *controlPanel) showTone(t recon.Tone, f *recon.Frame) {
	c.quiet = true
	defer func() { c.quiet = false }()
	c.showToneQuiet(t, f)
}

func (c *controlPanel) showToneQuiet(t recon.Tone, f *recon.Frame) {
	if f != nil && f != c.toneFrame {
		c.toneFrame = f
		lo, hi := coveredRange(f)
		span := hi - lo
		if !(span > 0) {
			span = 1
		}
		c.level.slider.Step = span / 1000
		c.window.slider.Step = span / 1000
		c.level.setRange(lo-0.25*span, hi+0.25*span)
		c.window.setRange(span/1000, 2*span)
	}
	c.window.set(t.Window)
	c.level.set(t.Level)
	g := t.Gamma
	if g == 0 {
		g = 1
	}
	c.gamma.set(g)
	c.invert.SetChecked(t.Invert)
}

// coveredRange is the smallest and largest value of the covered pixels.
func coveredRange(f *recon.Frame) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for i, v := range f.Pix {
		if i < len(f.Covered) && f.Covered[i] && !math.IsNaN(float64(v)) && !math.IsInf(float64(v), 0) {
			lo, hi = math.Min(lo, float64(v)), math.Max(hi, float64(v))
		}
	}
	if lo > hi {
		return 0, 1
	}
	return lo, hi
}
