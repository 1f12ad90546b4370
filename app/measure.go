package main

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
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

const measureSynopsis = "measure FRAME.tiff|FRAME.png [--edge X0,Y0,X1,Y1] [--roi X0,Y0,X1,Y1] [--roi2 X0,Y0,X1,Y1] [--profile X0,Y0,X1,Y1 [--band MM]] [--dots SPACING_MM] [--nps X0,Y0,X1,Y1] [--page N] [--json]"

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

Pixels without data are never used; a rectangle outside the frame, or with no
data, is an error. Measure a 32-bit float TIFF for frame values: 8/16-bit
files hold tone-mapped values.`

// measureSpec says what to measure; its JSON is the "request" of the
// measure command's output and what the report command re-measures.
type measureSpec struct {
	Edge      *measure.Rect `json:"edge,omitempty"`
	ROI       *measure.Rect `json:"roi,omitempty"`
	ROI2      *measure.Rect `json:"roi2,omitempty"`
	Profile   *measure.Line `json:"profile,omitempty"`
	BandMM    float64       `json:"band_mm,omitempty"`
	DotsMM    float64       `json:"dots_spacing_mm,omitempty"`
	NPS       *measure.Rect `json:"nps,omitempty"`
	FramePage int           `json:"page,omitempty"`
}

func (s measureSpec) empty() bool {
	return s.Edge == nil && s.ROI == nil && s.ROI2 == nil && s.Profile == nil && s.DotsMM == 0 && s.NPS == nil
}

// measureOutput is the measure command's JSON; the keys of the issue's
// list ("edge", "roi", "cnr", "profile", "dots", "nps") keep their names.
type measureOutput struct {
	File       string         `json:"file,omitempty"`
	Request    measureSpec    `json:"request"`
	PitchXMM   float64        `json:"pitch_x_mm"`
	PitchYMM   float64        `json:"pitch_y_mm"`
	OriginXMM  float64        `json:"origin_x_mm"`
	OriginYMM  float64        `json:"origin_y_mm"`
	Edge       *edgeOutput    `json:"edge,omitempty"`
	ROI        *roiOutput     `json:"roi,omitempty"`
	ROI2       *roiOutput     `json:"roi2,omitempty"`
	CNR        *float64       `json:"cnr,omitempty"`
	Profile    [][2]float64   `json:"profile,omitempty"`
	DistanceMM *float64       `json:"distance_mm,omitempty"`
	Dots       *dotsOutput    `json:"dots,omitempty"`
	NPS        [][2]float64   `json:"nps,omitempty"`
	NPSAxes    *npsAxesOutput `json:"nps_axes,omitempty"`
	Notes      []string       `json:"notes,omitempty"`
	edgeResult *measure.EdgeResult
}

type edgeOutput struct {
	MTF50  *float64     `json:"mtf50_lp_mm"` // null when the curve stays above 0.5
	MTF10  *float64     `json:"mtf10_lp_mm"`
	Angle  float64      `json:"angle_deg"`
	Across string       `json:"resolves"` // "x" or "y"
	MTF    [][2]float64 `json:"mtf"`
}

type roiOutput struct {
	Mean   float64 `json:"mean"`
	SD     float64 `json:"sd"`
	SNR    float64 `json:"snr"`
	Pixels int     `json:"pixels"`
}

type dotsOutput struct {
	Found       int               `json:"found"`
	ScaleX      float64           `json:"scale_x"`
	ScaleY      float64           `json:"scale_y"`
	RotationDeg float64           `json:"rotation_deg"`
	ShearDeg    float64           `json:"shear_deg"`
	RMSMM       float64           `json:"rms_mm"`
	MaxMM       float64           `json:"max_mm"`
	WorstMM     [2]float64        `json:"worst_dot_mm"`
	Correction  *correctionOutput `json:"correction,omitempty"`
}

type correctionOutput struct {
	DistanceMM  float64      `json:"distance_mm,omitempty"`
	FieldDeg    float64      `json:"field_deg,omitempty"`
	Calibration [][2]float64 `json:"calibration,omitempty"`
	Steps       []string     `json:"steps"`
}

type npsAxesOutput struct {
	X [][2]float64 `json:"x"`
	Y [][2]float64 `json:"y"`
}

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
	var v [4]float64
	parts := strings.Split(s, ",")
	if len(parts) != 4 {
		return fmt.Errorf("expected X0,Y0,X1,Y1 in mm, got %q", s)
	}
	for i, p := range parts {
		x, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return fmt.Errorf("expected X0,Y0,X1,Y1 in mm, and %q is not a number", p)
		}
		v[i] = x
	}
	f.set(v)
	return nil
}

func runMeasure(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("measure", measureSynopsis, measureDescription, stderr)
	var spec measureSpec
	var asJSON bool
	fs.Var(rectFlag(&spec.Edge), "edge", "slanted-edge `rectangle` X0,Y0,X1,Y1 in mm")
	fs.Var(rectFlag(&spec.ROI), "roi", "statistics `rectangle` X0,Y0,X1,Y1 in mm")
	fs.Var(rectFlag(&spec.ROI2), "roi2", "second `rectangle` for the contrast-to-noise ratio with --roi")
	fs.Var(lineFlag(&spec.Profile), "profile", "profile `line` X0,Y0,X1,Y1 in mm")
	fs.Float64Var(&spec.BandMM, "band", 0, "width in `mm` of the band a profile averages across")
	fs.Float64Var(&spec.DotsMM, "dots", 0, "find a dot grid of this `spacing` in mm")
	fs.Var(rectFlag(&spec.NPS), "nps", "noise power spectrum `rectangle` X0,Y0,X1,Y1 in mm (a uniform area)")
	fs.IntVar(&spec.FramePage, "page", 1, "`page` of a multi-page TIFF (one per stroke)")
	fs.BoolVar(&asJSON, "json", false, "print JSON")
	positional, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	switch {
	case len(positional) != 1:
		return usagef("expected one FRAME.tiff or FRAME.png, got %d arguments", len(positional))
	case spec.empty():
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
	out, err := measureFrame(f, spec)
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
	printMeasurements(stdout, out)
	for _, n := range out.Notes {
		fmt.Fprintf(stderr, "note: %s\n", n)
	}
	return nil
}

// measureFrame runs every measurement spec asks for on f. The window and
// the report sheet call it too, so all three give the same numbers.
func measureFrame(f *recon.Frame, spec measureSpec) (measureOutput, error) {
	out := measureOutput{Request: spec, PitchXMM: f.PitchXMM, PitchYMM: f.PitchYMM, OriginXMM: f.OriginXMM, OriginYMM: f.OriginYMM}
	if spec.Edge != nil {
		e, err := measure.Edge(f, *spec.Edge)
		if err != nil {
			return out, fmt.Errorf("--edge: %w", err)
		}
		eo := &edgeOutput{MTF50: finite(e.MTF50LPMM), MTF10: finite(e.MTF10LPMM), Angle: e.AngleDeg, Across: "x"}
		if e.Orientation == measure.EdgeAlongX {
			eo.Across = "y"
		}
		for i := range e.MTF {
			eo.MTF = append(eo.MTF, [2]float64{e.FrequencyLPMM[i], e.MTF[i]})
		}
		if eo.MTF50 == nil || eo.MTF10 == nil {
			out.Notes = append(out.Notes, "the edge's MTF stays above 50 % or 10 % up to one cycle per pitch: the frame's pitch limits what this edge can show")
		}
		out.Edge, out.edgeResult = eo, &e
	}
	var a, b measure.RegionStats
	var err error
	if spec.ROI != nil {
		if a, err = measure.Region(f, *spec.ROI); err != nil {
			return out, fmt.Errorf("--roi: %w", err)
		}
		out.ROI = &roiOutput{a.Mean, a.SD, a.SNR, a.Pixels}
	}
	if spec.ROI2 != nil {
		if b, err = measure.Region(f, *spec.ROI2); err != nil {
			return out, fmt.Errorf("--roi2: %w", err)
		}
		out.ROI2 = &roiOutput{b.Mean, b.SD, b.SNR, b.Pixels}
		out.CNR = finite(measure.CNR(a, b))
		if out.CNR == nil {
			out.Notes = append(out.Notes, "both regions are noiseless: the contrast-to-noise ratio is unbounded")
		}
	}
	if spec.Profile != nil {
		p, err := measure.Profile(f, *spec.Profile, spec.BandMM)
		if err != nil {
			return out, fmt.Errorf("--profile: %w", err)
		}
		for _, pt := range p {
			out.Profile = append(out.Profile, [2]float64{pt.DistanceMM, pt.Value})
		}
		d := measure.Distance(*spec.Profile)
		out.DistanceMM = &d
	}
	if spec.DotsMM > 0 {
		g, err := measure.Grid(f, spec.DotsMM)
		if err != nil {
			return out, fmt.Errorf("--dots: %w", err)
		}
		out.Dots = &dotsOutput{Found: g.Found, ScaleX: g.ScaleX, ScaleY: g.ScaleY, RotationDeg: g.RotationDeg,
			ShearDeg: g.ShearDeg, RMSMM: g.RMSMM, MaxMM: g.MaxMM, WorstMM: [2]float64{g.Worst.XMM, g.Worst.YMM}}
		if c, err := measure.GridCorrection(f.Recipe, g); err == nil {
			out.Dots.Correction = &correctionOutput{DistanceMM: c.DistanceMM, FieldDeg: c.FieldDeg, Calibration: c.Calibration, Steps: c.Steps}
		}
	}
	if spec.NPS != nil {
		n, err := measure.NPS(f, *spec.NPS)
		if err != nil {
			return out, fmt.Errorf("--nps: %w", err)
		}
		for i := range n.Radial {
			out.NPS = append(out.NPS, [2]float64{n.FrequencyLPMM[i], n.Radial[i]})
		}
		axes := &npsAxesOutput{}
		for i := range n.AlongX {
			axes.X = append(axes.X, [2]float64{n.FrequencyXLPMM[i], n.AlongX[i]})
		}
		for i := range n.AlongY {
			axes.Y = append(axes.Y, [2]float64{n.FrequencyYLPMM[i], n.AlongY[i]})
		}
		out.NPSAxes = axes
	}
	return out, nil
}

func finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

func fmtOpt(v *float64, format string) string {
	if v == nil {
		return "not reached"
	}
	return fmt.Sprintf(format, *v)
}

// printMeasurements writes the results for a reader.
func printMeasurements(w io.Writer, m measureOutput) {
	if e := m.Edge; e != nil {
		fmt.Fprintf(w, "edge: MTF50 %s, MTF10 %s, angle %.2f° (resolution along %s)\n",
			fmtOpt(e.MTF50, "%.4g lp/mm"), fmtOpt(e.MTF10, "%.4g lp/mm"), e.Angle, e.Across)
	}
	if r := m.ROI; r != nil {
		fmt.Fprintf(w, "roi: mean %.6g, SD %.4g, SNR %.4g, %d pixels\n", r.Mean, r.SD, r.SNR, r.Pixels)
	}
	if r := m.ROI2; r != nil {
		fmt.Fprintf(w, "roi2: mean %.6g, SD %.4g, SNR %.4g, %d pixels\n", r.Mean, r.SD, r.SNR, r.Pixels)
		fmt.Fprintf(w, "cnr: %s\n", fmtOpt(m.CNR, "%.4g"))
	}
	if m.DistanceMM != nil {
		fmt.Fprintf(w, "distance: %.4g mm\n", *m.DistanceMM)
		fmt.Fprintf(w, "profile (%d points, mm and value):", len(m.Profile))
		for _, p := range m.Profile {
			fmt.Fprintf(w, " %.4g:%.5g", p[0], p[1])
		}
		fmt.Fprintln(w)
	}
	if d := m.Dots; d != nil {
		fmt.Fprintf(w, "dots: %d found, scale x %.5f y %.5f, rotation %.3f°, shear %.3f°, residual RMS %.3g mm, worst %.3g mm at %.1f, %.1f mm\n",
			d.Found, d.ScaleX, d.ScaleY, d.RotationDeg, d.ShearDeg, d.RMSMM, d.MaxMM, d.WorstMM[0], d.WorstMM[1])
		if d.Correction != nil {
			for _, s := range d.Correction.Steps {
				fmt.Fprintf(w, "  to make it true: %s\n", s)
			}
		}
	}
	if len(m.NPS) > 0 {
		fmt.Fprintf(w, "nps (radial, lp/mm and mm²):")
		for _, p := range m.NPS {
			fmt.Fprintf(w, " %.3g:%.4g", p[0], p[1])
		}
		fmt.Fprintln(w)
	}
}
