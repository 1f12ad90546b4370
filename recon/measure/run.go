package measure

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"spotloom/recon"
)

// Request says what to measure: the geometry of each measurement, in
// the frame's mm. Its JSON is the "request" of the measure command's
// output, from which the report sheet measures a frame again.
type Request struct {
	Edge      *Rect   `json:"edge,omitempty"`
	ROI       *Rect   `json:"roi,omitempty"`
	ROI2      *Rect   `json:"roi2,omitempty"`
	Profile   *Line   `json:"profile,omitempty"`
	BandMM    float64 `json:"band_mm,omitempty"`
	DotsMM    float64 `json:"dots_spacing_mm,omitempty"`
	NPS       *Rect   `json:"nps,omitempty"`
	FramePage int     `json:"page,omitempty"`
}

// Empty says nothing is asked for.
func (s Request) Empty() bool {
	return s.Edge == nil && s.ROI == nil && s.ROI2 == nil && s.Profile == nil && s.DotsMM == 0 && s.NPS == nil
}

// Results are the measurements of one frame, with the JSON keys of the
// measure command ("edge", "roi", "cnr", "profile", "dots", "nps").
type Results struct {
	File       string         `json:"file,omitempty"`
	Request    Request        `json:"request"`
	PitchXMM   float64        `json:"pitch_x_mm"`
	PitchYMM   float64        `json:"pitch_y_mm"`
	OriginXMM  float64        `json:"origin_x_mm"`
	OriginYMM  float64        `json:"origin_y_mm"`
	Edge       *EdgeSummary   `json:"edge,omitempty"`
	ROI        *RegionSummary `json:"roi,omitempty"`
	ROI2       *RegionSummary `json:"roi2,omitempty"`
	CNR        *float64       `json:"cnr,omitempty"`
	Profile    [][2]float64   `json:"profile,omitempty"`
	DistanceMM *float64       `json:"distance_mm,omitempty"`
	Dots       *GridSummary   `json:"dots,omitempty"`
	NPS        [][2]float64   `json:"nps,omitempty"`
	NPSAxes    *NPSAxes       `json:"nps_axes,omitempty"`
	Notes      []string       `json:"notes,omitempty"`
	// EdgeResult is the whole edge measurement, for plots.
	EdgeResult *EdgeResult `json:"-"`
}

// EdgeSummary is an edge measurement as the measure command reports it.
type EdgeSummary struct {
	MTF50  *float64     `json:"mtf50_lp_mm"` // null when the curve stays above 0.5
	MTF10  *float64     `json:"mtf10_lp_mm"`
	Angle  float64      `json:"angle_deg"`
	Across string       `json:"resolves"` // "x" or "y"
	MTF    [][2]float64 `json:"mtf"`
}

// RegionSummary is a region's statistics as the measure command reports them.
type RegionSummary struct {
	Mean   float64 `json:"mean"`
	SD     float64 `json:"sd"`
	SNR    float64 `json:"snr"`
	Pixels int     `json:"pixels"`
}

// GridSummary is a dot-grid fit as the measure command reports it.
type GridSummary struct {
	Found       int                `json:"found"`
	ScaleX      float64            `json:"scale_x"`
	ScaleY      float64            `json:"scale_y"`
	RotationDeg float64            `json:"rotation_deg"`
	ShearDeg    float64            `json:"shear_deg"`
	RMSMM       float64            `json:"rms_mm"`
	MaxMM       float64            `json:"max_mm"`
	WorstMM     [2]float64         `json:"worst_dot_mm"`
	Correction  *CorrectionSummary `json:"correction,omitempty"`
}

// CorrectionSummary is a grid fit's recipe correction (GridCorrection).
type CorrectionSummary struct {
	DistanceMM  float64      `json:"distance_mm,omitempty"`
	FieldDeg    float64      `json:"field_deg,omitempty"`
	Calibration [][2]float64 `json:"calibration,omitempty"`
	Steps       []string     `json:"steps"`
}

// NPSAxes are the noise power spectrum's cuts along x and y.
type NPSAxes struct {
	X [][2]float64 `json:"x"`
	Y [][2]float64 `json:"y"`
}

// Run takes every measurement spec asks for on f. The measure command,
// the window and the report sheet all call it, so they give the same
// numbers.
func Run(f *recon.Frame, spec Request) (Results, error) {
	out := Results{Request: spec, PitchXMM: f.PitchXMM, PitchYMM: f.PitchYMM, OriginXMM: f.OriginXMM, OriginYMM: f.OriginYMM}
	if spec.Edge != nil {
		e, err := Edge(f, *spec.Edge)
		if err != nil {
			return out, fmt.Errorf("edge: %w", err)
		}
		eo := &EdgeSummary{MTF50: finite(e.MTF50LPMM), MTF10: finite(e.MTF10LPMM), Angle: e.AngleDeg, Across: "x"}
		if e.Orientation == EdgeAlongX {
			eo.Across = "y"
		}
		for i := range e.MTF {
			eo.MTF = append(eo.MTF, [2]float64{e.FrequencyLPMM[i], e.MTF[i]})
		}
		if eo.MTF50 == nil || eo.MTF10 == nil {
			out.Notes = append(out.Notes, "the edge's MTF stays above 50 % or 10 % up to one cycle per pitch: the frame's pitch limits what this edge can show")
		}
		out.Edge, out.EdgeResult = eo, &e
	}
	var a, b RegionStats
	var err error
	if spec.ROI != nil {
		if a, err = Region(f, *spec.ROI); err != nil {
			return out, fmt.Errorf("roi: %w", err)
		}
		out.ROI = &RegionSummary{a.Mean, a.SD, a.SNR, a.Pixels}
	}
	if spec.ROI2 != nil {
		if b, err = Region(f, *spec.ROI2); err != nil {
			return out, fmt.Errorf("roi2: %w", err)
		}
		out.ROI2 = &RegionSummary{b.Mean, b.SD, b.SNR, b.Pixels}
		out.CNR = finite(CNR(a, b))
		if out.CNR == nil {
			out.Notes = append(out.Notes, "both regions are noiseless: the contrast-to-noise ratio is unbounded")
		}
	}
	if spec.Profile != nil {
		p, err := Profile(f, *spec.Profile, spec.BandMM)
		if err != nil {
			return out, fmt.Errorf("profile: %w", err)
		}
		for _, pt := range p {
			out.Profile = append(out.Profile, [2]float64{pt.DistanceMM, pt.Value})
		}
		d := Distance(*spec.Profile)
		out.DistanceMM = &d
	}
	if spec.DotsMM > 0 {
		g, err := Grid(f, spec.DotsMM)
		if err != nil {
			return out, fmt.Errorf("dots: %w", err)
		}
		out.Dots = &GridSummary{Found: g.Found, ScaleX: g.ScaleX, ScaleY: g.ScaleY, RotationDeg: g.RotationDeg,
			ShearDeg: g.ShearDeg, RMSMM: g.RMSMM, MaxMM: g.MaxMM, WorstMM: [2]float64{g.Worst.XMM, g.Worst.YMM}}
		if c, err := GridCorrection(f.Recipe, g); err == nil {
			out.Dots.Correction = &CorrectionSummary{DistanceMM: c.DistanceMM, FieldDeg: c.FieldDeg, Calibration: c.Calibration, Steps: c.Steps}
		}
	}
	if spec.NPS != nil {
		n, err := NPS(f, *spec.NPS)
		if err != nil {
			return out, fmt.Errorf("nps: %w", err)
		}
		for i := range n.Radial {
			out.NPS = append(out.NPS, [2]float64{n.FrequencyLPMM[i], n.Radial[i]})
		}
		axes := &NPSAxes{}
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

// WriteText writes the results for a reader, one measurement a line; the
// measure command prints it and the window shows it.
func WriteText(w io.Writer, m Results) {
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
	}
	if len(m.Profile) > 0 {
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

// ParseFour reads "X0,Y0,X1,Y1" (mm) as given to the measure command and
// typed into the window.
func ParseFour(s string) ([4]float64, error) {
	var v [4]float64
	parts := strings.Split(s, ",")
	if len(parts) != 4 {
		return v, fmt.Errorf("expected X0,Y0,X1,Y1 in mm, got %q", s)
	}
	for i, p := range parts {
		x, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return v, fmt.Errorf("expected X0,Y0,X1,Y1 in mm, and %q is not a number", p)
		}
		v[i] = x
	}
	return v, nil
}
