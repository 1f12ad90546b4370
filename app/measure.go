package main

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strings"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
)

func init() {
	register(command{
		name:    "measure",
		summary: "measure an exported frame: edge MTF, dot grid, regions, profile, noise spectrum",
		run:     runMeasure,
	})
}

const measureSynopsis = "measure FRAME.tiff|FRAME.png [--edge X0,Y0,X1,Y1] [--roi X0,Y0,X1,Y1] [--roi2 X0,Y0,X1,Y1] [--profile X0,Y0,X1,Y1 [--band MM]] [--dots SPACING_MM] [--nps X0,Y0,X1,Y1] [--measure LIST.json] [--page N] [--json]"

const measureDescription = `
Measures a frame exported by "spotloom build" (or the window). Rectangles and
lines are given in millimetres in the frame's own coordinates, as the window's
pointer read-out shows them: x across the sweep, y cross-scan (row 0 is the
largest y). The pitch comes from the file; the origin from the file or its
sidecar F.recipe.json (without one, positions count from pixel 0, with a note).
Several measurements can be asked for at once:

  --edge     slanted-edge MTF after ISO 12233 (e-SFR): MTF50, MTF10, angle,
             the curve in line pairs per mm. The rectangle holds one straight
             edge turned a few degrees from the x or y axis.
  --roi      mean, standard deviation, SNR and pixel count of a rectangle;
  --roi2     with --roi, the contrast-to-noise ratio between the two.
  --profile  values along a line (averaged across --band mm) and its length.
  --dots     find a dot or hole grid of this spacing (mm) and fit scale x/y,
             rotation and shear; prints the recipe values that make it true.
  --nps      noise power spectrum of a uniform rectangle after IEC 62220-1,
             in mm² against line pairs per mm.

  --measure  every shape of a measurement list instead: an export's sidecar
             F.recipe.json with the "measurements" the window drew, or a
             file holding such a list (docs/pipeline.md). Each is reported
             under its label; with --json as {"measurements": [{"shape",
             "results"} or {"shape", "error"}, ...]}.

Pixels without data are never used; a rectangle outside the frame, or with no
data, is an error. Measure a 32-bit float TIFF for frame values: 8/16-bit
files hold tone-mapped values.`

// fourFlag parses "X0,Y0,X1,Y1" in mm into a rectangle or a line.
type fourFlag struct {
	set func(v [4]float64)
	get func() (v [4]float64, ok bool)
}

func rectFlag(r **measure.Rect) fourFlag {
	return fourFlag{
		set: func(v [4]float64) { *r = &measure.Rect{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]} },
		get: func() ([4]float64, bool) {
			if r == nil || *r == nil {
				return [4]float64{}, false
			}
			return [4]float64{(*r).X0, (*r).Y0, (*r).X1, (*r).Y1}, true
		},
	}
}

func lineFlag(l **measure.Line) fourFlag {
	return fourFlag{
		set: func(v [4]float64) { *l = &measure.Line{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]} },
		get: func() ([4]float64, bool) {
			if l == nil || *l == nil {
				return [4]float64{}, false
			}
			return [4]float64{(*l).X0, (*l).Y0, (*l).X1, (*l).Y1}, true
		},
	}
}

func (f fourFlag) String() string {
	if f.get == nil {
		return ""
	}
	v, ok := f.get()
	if !ok {
		return ""
	}
	return fmt.Sprintf("%g,%g,%g,%g", v[0], v[1], v[2], v[3])
}

func (f fourFlag) Set(s string) error {
	v, err := measure.ParseFour(s)
	if err != nil {
		return err
	}
	f.set(v)
	return nil
}

func runMeasure(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("measure", measureSynopsis, measureDescription, stderr)
	var spec measure.Request
	var asJSON bool
	var listPath string
	fs.Var(rectFlag(&spec.Edge), "edge", "slanted-edge `rectangle` X0,Y0,X1,Y1 in mm")
	fs.Var(rectFlag(&spec.ROI), "roi", "statistics `rectangle` X0,Y0,X1,Y1 in mm")
	fs.Var(rectFlag(&spec.ROI2), "roi2", "second `rectangle` for the contrast-to-noise ratio with --roi")
	fs.Var(lineFlag(&spec.Profile), "profile", "profile `line` X0,Y0,X1,Y1 in mm")
	fs.Float64Var(&spec.BandMM, "band", 0, "width in `mm` of the band a profile averages across")
	fs.Float64Var(&spec.DotsMM, "dots", 0, "find a dot grid of this `spacing` in mm")
	fs.Var(rectFlag(&spec.NPS), "nps", "noise power spectrum `rectangle` X0,Y0,X1,Y1 in mm (a uniform area)")
	fs.StringVar(&listPath, "measure", "", "measure the shapes of a list `file` (a sidecar with \"measurements\", or a list)")
	fs.IntVar(&spec.FramePage, "page", 1, "`page` of a multi-page TIFF (one per stroke)")
	fs.BoolVar(&asJSON, "json", false, "print JSON")
	positional, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	switch {
	case len(positional) != 1:
		return usagef("expected one FRAME.tiff or FRAME.png, got %d arguments", len(positional))
	case listPath != "" && !spec.Empty():
		return usagef("--measure takes the shapes of its list: give it without --edge, --roi, --profile, --dots or --nps")
	case listPath == "" && spec.Empty():
		return usagef("nothing to measure: give --edge, --roi, --profile, --dots or --nps")
	case spec.ROI2 != nil && spec.ROI == nil:
		return usagef("--roi2 needs --roi: the contrast-to-noise ratio is between the two")
	case spec.BandMM < 0 || math.IsNaN(spec.BandMM):
		return usagef("--band %g: expected a width of 0 mm or more", spec.BandMM)
	case spec.BandMM > 0 && spec.Profile == nil:
		return usagef("--band goes with --profile")
	case spec.DotsMM < 0 || math.IsNaN(spec.DotsMM):
		return usagef("--dots %g: expected the grid spacing in mm", spec.DotsMM)
	case spec.FramePage < 1:
		return usagef("--page %d: pages count from 1", spec.FramePage)
	}
	path := positional[0]
	l, err := export.Read(path)
	if err != nil {
		return err
	}
	if spec.FramePage > len(l.Frames) {
		return fmt.Errorf("%s has %d page(s), not %d", path, len(l.Frames), spec.FramePage)
	}
	f := l.Frames[spec.FramePage-1]
	if listPath != "" {
		return measureList(f, path, listPath, l.Notes, asJSON, stdout, stderr)
	}
	out, err := measure.Run(f, spec)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	out.File = path
	out.Notes = append(l.Notes, out.Notes...)
	if asJSON {
		data, err := json.MarshalIndent(out, "", "  ")
		if err != nil {
			return err
		}
		_, err = fmt.Fprintf(stdout, "%s\n", data)
		return err
	}
	measure.WriteText(stdout, out)
	for _, n := range out.Notes {
		fmt.Fprintf(stderr, "note: %s\n", n)
	}
	return nil
}

// listed is one shape of a list as "measure --measure --json" prints it.
type listed struct {
	Shape   measure.Shape    `json:"shape"`
	Results *measure.Results `json:"results,omitempty"`
	Error   string           `json:"error,omitempty"`
}

// measureList takes every shape of the list in listPath on f, as the
// window's list and the report sheet do. A shape that cannot be taken is
// reported and makes the command fail once all are reported.
func measureList(f *recon.Frame, path, listPath string, notes []string, asJSON bool, stdout, stderr io.Writer) error {
	shapes, err := measure.LoadList(listPath)
	if err != nil {
		return err
	}
	taken := measure.RunList(f, shapes)
	var failed error
	out := struct {
		File         string   `json:"file"`
		Measurements []listed `json:"measurements"`
		Notes        []string `json:"notes,omitempty"`
	}{File: path, Notes: notes}
	for _, t := range taken {
		item := listed{Shape: t.Shape}
		if t.Err != nil {
			item.Error = t.Err.Error()
			if failed == nil {
				failed = fmt.Errorf("%s: %s: %w", path, t.Shape.Label, t.Err)
			}
		} else {
			res := t.Results
			item.Results = &res
		}
		out.Measurements = append(out.Measurements, item)
	}
	if asJSON {
		data, err := json.MarshalIndent(out, "", "  ")
		if err != nil {
			return err
		}
		if _, err := fmt.Fprintf(stdout, "%s\n", data); err != nil {
			return err
		}
		return failed
	}
	for _, item := range out.Measurements {
		fmt.Fprintf(stdout, "%s (%s):\n", item.Shape.Label, item.Shape.Kind)
		if item.Results == nil {
			fmt.Fprintf(stdout, "  not taken: %s\n", item.Error)
			continue
		}
		var text strings.Builder
		measure.WriteText(&text, *item.Results)
		for _, line := range strings.Split(strings.TrimSpace(text.String()), "\n") {
			fmt.Fprintf(stdout, "  %s\n", line)
		}
	}
	for _, n := range notes {
		fmt.Fprintf(stderr, "note: %s\n", n)
	}
	return failed
}
