package main

import (
	"fmt"
	"io"
	"path/filepath"
	"strings"
	"time"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
)

func init() {
	register(command{
		name:    "report",
		summary: "write a report sheet (PDF): the frame at a print scale, rig facts, recipe, measurements",
		run:     runReport,
	})
}

const reportSynopsis = "report FILE --recipe R.json --out SHEET.pdf [--measure M.json] [--page N] [--force]"

const reportDescription = `
Reconstructs the capture FILE with the recipe R.json and writes a report sheet
SHEET.pdf (A4): the frame at a stated print scale with its scale bar, the
capture and rig facts (lines, rev/min, sweep time, pitch, coverage), the
recipe in short, the warnings and the date.

--measure M.json adds a page of measurements: each rectangle and line is
measured again on the rebuilt frame, drawn on the frame with its label and
listed with its plot (MTF curve, profile, noise power spectrum). M.json is
an export's sidecar F.recipe.json with its "measurements" list (what the
window saves), a file holding such a list, or the output of
"spotloom measure --json".

An existing sheet is never replaced without --force.`

func runReport(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("report", reportSynopsis, reportDescription, stderr)
	cf := addCaptureFlags(fs)
	var recipePath, outPath, measurePath string
	var page int
	var force bool
	fs.StringVar(&recipePath, "recipe", "", "recipe JSON `file` (required)")
	fs.StringVar(&outPath, "out", "", "the sheet, a .pdf `file` (required)")
	fs.StringVar(&measurePath, "measure", "", "measurements to show: a sidecar or list `file`, or the JSON of \"spotloom measure --json\"")
	fs.IntVar(&page, "page", 1, "which frame (stroke) to show when the recipe splits strokes")
	fs.BoolVar(&force, "force", false, "replace the sheet if it exists")
	positional, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	switch {
	case len(positional) != 1:
		return usagef("expected one capture FILE, got %d arguments", len(positional))
	case recipePath == "":
		return usagef("--recipe R.json is required")
	case outPath == "":
		return usagef("--out SHEET.pdf is required")
	case !strings.EqualFold(filepath.Ext(outPath), ".pdf"):
		return usagef("--out %s: the sheet is a PDF; name it .pdf", outPath)
	case page < 1:
		return usagef("--page %d: frames count from 1", page)
	}
	captureOpts, err := cf.options()
	if err != nil {
		return err
	}
	inputs := append(captureInputs(positional[0], cf), export.Role{What: "the recipe", Path: recipePath}, export.Role{What: "--measure", Path: measurePath})
	if err := export.CheckClashes(inputs, []export.Role{{What: "--out", Path: outPath}}); err != nil {
		return err
	}
	if err := export.CheckFile(outPath, force); err != nil {
		return forceHint(err)
	}
	var shapes []measure.Shape
	if measurePath != "" {
		if shapes, err = measure.LoadList(measurePath); err != nil {
			return err
		}
	}
	r, err := loadRecipe(recipePath)
	if err != nil {
		return err
	}
	ctx, stop := interruptContext()
	defer stop()
	progress := newProgress(stderr)
	defer progress.Done()
	captureOpts.Progress = func(fraction float64) { progress.Report("reading", fraction) }
	rec, err := openCapture(ctx, positional[0], captureOpts)
	if err != nil {
		return err
	}
	res, err := recon.NewSession(rec).Build(ctx, r, progress.Report)
	if err != nil {
		return interrupted(ctx, fmt.Errorf("%s: %w", positional[0], err))
	}
	if page > len(res.Frames) {
		return fmt.Errorf("%s: the recipe makes %d frame(s), not %d", positional[0], len(res.Frames), page)
	}
	f := res.Frames[page-1]
	sheet := export.MeasuredSheet(f, filepath.Base(positional[0]), shapes, time.Now())
	for _, m := range sheet.Measurements {
		if m.Err != nil {
			return fmt.Errorf("%s: measuring the rebuilt frame: %s: %w", measurePath, m.Shape.Label, m.Err)
		}
	}
	progress.Report("writing", 0)
	layout, err := export.WriteSheet(outPath, sheet, force)
	if err != nil {
		return forceHint(err)
	}
	progress.Done()
	fmt.Fprintf(stdout, "wrote %s (%d page(s), frame at print scale %s)\n", outPath, layout.Pages, export.PrintScaleText(layout.PrintScale))
	for _, w := range f.Report.Warnings {
		fmt.Fprintf(stderr, "warning: %s\n", w)
	}
	return nil
}
