package ui

import (
	"fmt"
	"slices"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
	"spotloom/recon"
)

// factsPanel shows what the last build found, from its report.
type factsPanel struct {
	values   map[string]*widget.Label
	order    []string
	warnings *widget.Label
	box      fyne.CanvasObject
}

// factNames are the rows of the panel, in order.
var factNames = []string{
	"Lines", "Repaired pulses", "Revolutions", "Rev/min", "Sweep time", "Line rate",
	"Delay", "Index threshold", "Passes", "Frame size", "Pitch", "Coverage",
	"Sample rate", "Duration",
}

func newFactsPanel() *factsPanel {
	p := &factsPanel{values: map[string]*widget.Label{}, order: factNames}
	form := container.New(layout.NewFormLayout())
	for _, name := range factNames {
		v := widget.NewLabel("–")
		v.TextStyle = fyne.TextStyle{Monospace: true}
		p.values[name] = v
		form.Add(widget.NewLabel(name))
		form.Add(v)
	}
	p.warnings = widget.NewLabel("none")
	p.warnings.Wrapping = fyne.TextWrapWord
	// Warnings first: on a small screen they stay in sight above the facts.
	p.box = container.NewVBox(
		widget.NewLabelWithStyle("Warnings", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		p.warnings,
		widget.NewSeparator(),
		widget.NewLabelWithStyle("Facts", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		form,
	)
	return p
}

func (p *factsPanel) object() fyne.CanvasObject { return p.box }

func (p *factsPanel) show(rep recon.Report, rec *capture.Recording) {
	// A label is set only when its text changes: a live view shows a
	// report at every update, and most of its facts stay as they were.
	set := func(name, text string) {
		if l := p.values[name]; l.Text != text {
			l.SetText(text)
		}
	}
	set("Lines", fmt.Sprint(rep.Lines))
	repaired := fmt.Sprint(rep.LinesRepaired)
	if rep.Lines > 0 && rep.LinesRepaired > 0 {
		repaired = fmt.Sprintf("%d (%.1f %%)", rep.LinesRepaired, 100*float64(rep.LinesRepaired)/float64(rep.Lines))
	}
	set("Repaired pulses", repaired)
	set("Revolutions", fmt.Sprint(rep.Revolutions))
	set("Rev/min", fmt.Sprintf("%.1f ±%.2f%%", rep.RPMMean, rep.RPMSpreadPct))
	set("Sweep time", fmt.Sprintf("%.2f ms", rep.SweepMS))
	set("Line rate", fmt.Sprintf("%.2f /s", rep.LineRateHz))
	set("Delay", fmt.Sprintf("%.2f°", rep.DelayDeg))
	set("Index threshold", fmt.Sprintf("%.4g", rep.Threshold))
	set("Passes", fmt.Sprint(rep.Strokes))
	set("Frame size", fmt.Sprintf("%d × %d px", rep.Columns, rep.Rows))
	set("Pitch", fmt.Sprintf("%.3g mm", rep.PitchMM))
	set("Coverage", fmt.Sprintf("%.1f %%", 100*rep.Coverage))
	if rec != nil {
		set("Sample rate", fmt.Sprintf("%.6g Hz", rec.SampleRateHz))
		set("Duration", fmt.Sprintf("%.3f s", rec.DurationS()))
	}
	// A build's report repeats the reader's warnings; show each once.
	var warn []string
	if rec != nil {
		for _, w := range rec.Warnings {
			if !slices.Contains(rep.Warnings, w) {
				warn = append(warn, w)
			}
		}
	}
	warn = append(warn, rep.Warnings...)
	if len(warn) == 0 {
		p.warnings.SetText("none")
	} else {
		for i, w := range warn {
			warn[i] = windowWords(w)
		}
		p.warnings.SetText("• " + strings.Join(warn, "\n• "))
	}
}
