package export

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"
	"slices"
	"strings"
	"time"

	"github.com/go-pdf/fpdf"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"spotloom/recon"
	"spotloom/recon/measure"
)

// Sheet is what a report sheet shows: one frame with its facts and
// recipe, and optionally its measurements.
type Sheet struct {
	Frame *recon.Frame
	// Source names the capture (or frame file) the sheet is about.
	Source string
	// Measurements are the frame's measurements (measure.RunList), drawn
	// on the frame with their labels and listed with their plots; one
	// that could not be taken is listed with the reason.
	Measurements []measure.Taken
	// Date is printed on the sheet and stamped into the PDF.
	Date time.Time
}

// MeasuredSheet is the sheet of frame f made from source, with every
// shape of the list measured on it (measure.RunList). The report command
// and the window both make their sheets with it.
func MeasuredSheet(f *recon.Frame, source string, shapes []measure.Shape, date time.Time) Sheet {
	s := Sheet{Frame: f, Source: source, Date: date}
	if len(shapes) > 0 {
		s.Measurements = measure.RunList(f, shapes)
	}
	return s
}

// SheetLayout says where WriteSheet put things, in mm from the top left
// of page 1 (A4 portrait, 210 × 297 mm).
type SheetLayout struct {
	// FrameXMM, FrameYMM, FrameWMM, FrameHMM are the frame's rectangle.
	FrameXMM, FrameYMM, FrameWMM, FrameHMM float64
	// PrintScale is the frame's mm per printed mm (2 = 1:2).
	PrintScale float64
	Pages      int
}

// Page geometry of the sheet (A4 portrait, ISO 216), mm.
const (
	sheetPageW  = 210.0
	sheetPageH  = 297.0
	sheetMargin = 15.0
	sheetFrameW = sheetPageW - 2*sheetMargin
	sheetFrameH = 150.0
	sheetTop    = 30.0
)

// printScales are the scales a sheet may print at, frame mm per printed
// mm, from 4:1 enlargement to 1:100.
var printScales = []float64{0.25, 0.5, 1, 2, 2.5, 4, 5, 10, 20, 25, 40, 50, 100}

// printScale is the smallest scale at which a frame of w × h mm fits the
// sheet's frame box.
func printScale(w, h float64) (float64, error) {
	for _, s := range printScales {
		if w/s <= sheetFrameW && h/s <= sheetFrameH {
			return s, nil
		}
	}
	return 0, fmt.Errorf("a %.0f × %.0f mm frame does not fit a sheet even at 1:%g", w, h, printScales[len(printScales)-1])
}

// PrintScaleText writes a print scale as a ratio: "1:2", or "4:1" for
// an enlargement.
func PrintScaleText(s float64) string {
	if s < 1 {
		return fmt.Sprintf("%g:1", 1/s)
	}
	return fmt.Sprintf("1:%g", s)
}

// WriteSheet writes the report sheet for s to path as a PDF, safely like
// every export (SaveFile: never replacing a file without force).
func WriteSheet(path string, s Sheet, force bool) (SheetLayout, error) {
	data, layout, err := RenderSheet(s)
	if err != nil {
		return layout, fmt.Errorf("%s: %w", path, err)
	}
	return layout, SaveFile(path, data, force)
}

// RenderSheet makes the report sheet's PDF bytes.
func RenderSheet(s Sheet) ([]byte, SheetLayout, error) {
	var layout SheetLayout
	f := s.Frame
	if err := checkFrame(f); err != nil {
		return nil, layout, err
	}
	widthMM, heightMM := float64(f.Width)*f.PitchXMM, float64(f.Height)*f.PitchYMM
	scale, err := printScale(widthMM, heightMM)
	if err != nil {
		return nil, layout, err
	}
	pdf := fpdf.New("P", "mm", "A4", "")
	pdf.SetCreationDate(s.Date)
	pdf.SetModificationDate(s.Date)
	pdf.SetCatalogSort(true)
	pdf.SetCreator(Software, true)
	pdf.SetTitle("Report sheet: "+s.Source, true)
	pdf.SetMargins(sheetMargin, sheetMargin, sheetMargin)
	pdf.SetAutoPageBreak(true, sheetMargin)
	tr := pdf.UnicodeTranslatorFromDescriptor("") // cp1252 for the core fonts
	text := func(style string, size float64, h float64, s string) {
		pdf.SetFont("Helvetica", style, size)
		pdf.MultiCell(0, h, tr(s), "", "L", false)
	}
	pdf.AddPage()
	text("B", 15, 7, "Spotloom report sheet")
	text("", 9, 4.5, fmt.Sprintf("%s  ·  %s UTC", s.Source, s.Date.UTC().Format("2006-01-02 15:04")))

	// The frame at its print scale, centred in the frame box.
	tone := recon.AutoTone(f)
	tone.Gamma = 1
	var img bytes.Buffer
	if err := png.Encode(&img, toneImage(f, tone, 8, 1)); err != nil {
		return nil, layout, err
	}
	layout = SheetLayout{FrameWMM: widthMM / scale, FrameHMM: heightMM / scale, PrintScale: scale}
	layout.FrameXMM = sheetMargin + (sheetFrameW-layout.FrameWMM)/2
	layout.FrameYMM = sheetTop
	pdf.RegisterImageOptionsReader("frame", fpdf.ImageOptions{ImageType: "PNG"}, &img)
	pdf.ImageOptions("frame", layout.FrameXMM, layout.FrameYMM, layout.FrameWMM, layout.FrameHMM, false, fpdf.ImageOptions{ImageType: "PNG"}, 0, "")
	pdf.SetDrawColor(0, 0, 0)
	pdf.SetLineWidth(0.2)
	pdf.Rect(layout.FrameXMM, layout.FrameYMM, layout.FrameWMM, layout.FrameHMM, "D")
	drawMarks(pdf, tr, f, layout, s.Measurements)
	// Scale bar under the frame: a round length, drawn at the print scale.
	barMM := roundScaleBarMM(widthMM)
	y := layout.FrameYMM + layout.FrameHMM + 5
	pdf.SetFillColor(0, 0, 0)
	pdf.Rect(layout.FrameXMM, y, barMM/scale, 1.5, "F")
	pdf.SetXY(layout.FrameXMM+barMM/scale+3, y-1.5)
	pdf.SetFont("Helvetica", "", 9)
	pdf.CellFormat(0, 4.5, tr(fmt.Sprintf("%g mm    print scale %s at 100 %% (frame %.4g × %.4g mm, %d × %d px)",
		barMM, PrintScaleText(scale), widthMM, heightMM, f.Width, f.Height)), "", 1, "L", false, 0, "")
	pdf.SetY(y + 7)

	rep := f.Report
	text("B", 11, 6, "Capture and rig")
	facts := []string{
		fmt.Sprintf("Lines %d (%d repaired), strokes %d, revolutions %d", rep.Lines, rep.LinesRepaired, rep.Strokes, rep.Revolutions),
		fmt.Sprintf("Wheel %.4g rev/min (spread %.2g %%), line rate %.4g Hz, sweep time %.4g ms", rep.RPMMean, rep.RPMSpreadPct, rep.LineRateHz, rep.SweepMS),
		fmt.Sprintf("Pitch %g × %g mm, coverage %.1f %%, origin %.4g, %.4g mm (centre of column 0 / row 0)", f.PitchXMM, f.PitchYMM, 100*rep.Coverage, f.OriginXMM, f.OriginYMM),
		fmt.Sprintf("Delay %.4g°, index threshold %.4g", rep.DelayDeg, rep.Threshold),
	}
	text("", 9, 4.5, strings.Join(facts, "\n"))
	pdf.Ln(2)
	text("B", 11, 6, "Recipe in short")
	r := f.Recipe
	short := []string{
		fmt.Sprintf("Sweep: %s law, %d apertures, field %g°, %s projection at %g mm, %d pulses per revolution", r.Sweep.Law, r.Sweep.Apertures, r.Sweep.FieldDeg, r.Sweep.Projection, r.Sweep.DistanceMM, r.Timing.PulsesPerRev),
		fmt.Sprintf("Rows: %s, calibration %v, strokes %s", r.Rows.Source, r.Rows.Calibration, r.Rows.Strokes),
		fmt.Sprintf("Signal: baseline %s, invert %v, AC corner %g Hz; image pitch %g mm, gaps filled up to %d px", r.Signal.Baseline, r.Signal.Invert, r.Signal.ACCornerHz, r.Image.PitchMM, r.Image.FillGapsPx),
	}
	text("", 9, 4.5, strings.Join(short, "\n"))
	pdf.Ln(2)
	text("B", 11, 6, "Warnings")
	if len(rep.Warnings) == 0 {
		text("", 9, 4.5, "None.")
	}
	for _, w := range rep.Warnings {
		text("", 9, 4.5, "- "+w)
	}
	if len(s.Measurements) > 0 {
		if err := measurementPage(pdf, tr, s.Measurements); err != nil {
			return nil, layout, err
		}
	}
	layout.Pages = pdf.PageNo()
	var out bytes.Buffer
	if err := pdf.Output(&out); err != nil {
		return nil, layout, fmt.Errorf("writing the PDF: %w", err)
	}
	return out.Bytes(), layout, nil
}

// markColours are the print colours of the measurement marks and their
// plots, by kind: strong enough to read over a grey frame on white paper.
var markColours = map[measure.Kind][3]int{
	measure.KindEdge: {220, 40, 40}, measure.KindRegion: {30, 120, 220}, measure.KindNPS: {160, 60, 200},
	measure.KindProfile: {20, 160, 60}, measure.KindDistance: {200, 110, 0}, measure.KindDots: {90, 90, 90},
}

// drawMarks outlines each measured rectangle and line on the frame with
// its label.
func drawMarks(pdf *fpdf.Fpdf, tr func(string) string, f *recon.Frame, l SheetLayout, taken []measure.Taken) {
	left := f.OriginXMM - f.PitchXMM/2
	top := f.OriginYMM + f.PitchYMM/2
	px := func(x float64) float64 { return l.FrameXMM + (x-left)/l.PrintScale }
	py := func(y float64) float64 { return l.FrameYMM + (top-y)/l.PrintScale }
	pdf.SetLineWidth(0.4)
	pdf.SetFont("Helvetica", "B", 7)
	for _, t := range taken {
		s := t.Shape
		c := markColours[s.Kind]
		pdf.SetDrawColor(c[0], c[1], c[2])
		pdf.SetTextColor(c[0], c[1], c[2])
		var x0, y0, x1, y1 float64
		switch {
		case s.Rect != nil:
			x0, y0, x1, y1 = s.Rect.X0, s.Rect.Y0, s.Rect.X1, s.Rect.Y1
			pdf.Rect(math.Min(px(x0), px(x1)), math.Min(py(y0), py(y1)), math.Abs(px(x1)-px(x0)), math.Abs(py(y1)-py(y0)), "D")
		case s.Line != nil:
			x0, y0, x1, y1 = s.Line.X0, s.Line.Y0, s.Line.X1, s.Line.Y1
			pdf.Line(px(x0), py(y0), px(x1), py(y1))
		default:
			continue
		}
		pdf.Text(math.Min(px(x0), px(x1)), math.Min(py(y0), py(y1))-0.8, tr(s.Label))
	}
	pdf.SetDrawColor(0, 0, 0)
	pdf.SetTextColor(0, 0, 0)
	pdf.SetLineWidth(0.2)
}

// kindTitles head each measurement's section on the sheet.
var kindTitles = map[measure.Kind]string{
	measure.KindEdge: "Slanted edge", measure.KindRegion: "Region statistics", measure.KindNPS: "Noise power spectrum",
	measure.KindProfile: "Line profile", measure.KindDistance: "Distance", measure.KindDots: "Dot grid geometry",
}

// sheetPlots places the measurements' plots on the sheet's pages.
type sheetPlots struct {
	pdf  *fpdf.Fpdf
	next int
}

func (p *sheetPlots) add(title, xLabel, yLabel string, colour [3]int, logY bool, series ...[][2]float64) error {
	png, err := PlotPNG(title, xLabel, yLabel, colour, logY, series...)
	if err != nil {
		return fmt.Errorf("the %s plot: %w", title, err)
	}
	name := fmt.Sprintf("plot%d", p.next)
	p.next++
	const w, h = 120.0, 55.0
	if p.pdf.GetY()+h > sheetPageH-sheetMargin {
		p.pdf.AddPage()
	}
	p.pdf.RegisterImageOptionsReader(name, fpdf.ImageOptions{ImageType: "PNG"}, bytes.NewReader(png))
	p.pdf.ImageOptions(name, sheetMargin, p.pdf.GetY(), w, h, true, fpdf.ImageOptions{ImageType: "PNG"}, 0, "")
	p.pdf.Ln(2)
	return nil
}

// measurementPage lists every measurement with its plot on a new page.
func measurementPage(pdf *fpdf.Fpdf, tr func(string) string, taken []measure.Taken) error {
	pdf.AddPage()
	text := func(style string, size, h float64, s string) {
		pdf.SetFont("Helvetica", style, size)
		pdf.MultiCell(0, h, tr(s), "", "L", false)
	}
	text("B", 13, 7, "Measurements")
	text("", 8, 4, "Positions in the frame's mm (x across the sweep, y cross-scan). Edge: ISO 12233 e-SFR. Noise power spectrum: IEC 62220-1-1.")
	pdf.Ln(1)
	plots := &sheetPlots{pdf: pdf}
	var notes []string
	for _, t := range taken {
		text("B", 10, 5, t.Shape.Label+"  "+kindTitles[t.Shape.Kind])
		if t.Err != nil {
			// The heading names the kind already.
			text("", 9, 4.5, "Not taken: "+strings.TrimPrefix(t.Err.Error(), string(t.Shape.Kind)+": "))
			pdf.Ln(2)
			continue
		}
		if err := measurementSection(plots, text, t); err != nil {
			return err
		}
		for _, n := range t.Results.Notes {
			if !slices.Contains(notes, n) {
				notes = append(notes, n)
			}
		}
	}
	for _, n := range notes {
		text("", 8, 4, "Note: "+n)
	}
	return nil
}

// measurementSection writes one measurement's numbers and plot.
func measurementSection(plots *sheetPlots, text func(style string, size, h float64, s string), t measure.Taken) error {
	m, s := t.Results, t.Shape
	opt := func(v *float64, format string) string {
		if v == nil {
			return "not reached"
		}
		return fmt.Sprintf(format, *v)
	}
	colour := markColours[s.Kind]
	where := ""
	switch {
	case s.Rect != nil:
		where = fmt.Sprintf("Rectangle %.4g, %.4g to %.4g, %.4g mm. ", s.Rect.X0, s.Rect.Y0, s.Rect.X1, s.Rect.Y1)
	case s.Line != nil:
		where = fmt.Sprintf("Line %.4g, %.4g to %.4g, %.4g mm. ", s.Line.X0, s.Line.Y0, s.Line.X1, s.Line.Y1)
	}
	switch s.Kind {
	case measure.KindEdge:
		e := m.Edge
		text("", 9, 4.5, where+fmt.Sprintf("MTF50 %s, MTF10 %s, edge at %.2f° (resolution along %s)", opt(e.MTF50, "%.4g lp/mm"), opt(e.MTF10, "%.4g lp/mm"), e.Angle, e.Across))
		return plots.add(s.Label+" MTF", "line pairs per mm", "MTF", colour, false, e.MTF)
	case measure.KindRegion:
		r := m.ROI
		line := where + fmt.Sprintf("Mean %.6g, SD %.4g, SNR %.4g, %d pixels", r.Mean, r.SD, r.SNR, r.Pixels)
		if m.ROI2 != nil {
			line += fmt.Sprintf("\nCNR against %s: %s", s.CNRWith, opt(m.CNR, "%.4g"))
		}
		text("", 9, 4.5, line)
	case measure.KindProfile:
		band := ""
		if s.BandMM > 0 {
			band = fmt.Sprintf(", averaged across %g mm", s.BandMM)
		}
		text("", 9, 4.5, where+fmt.Sprintf("Length %s%s", opt(m.DistanceMM, "%.4g mm"), band))
		return plots.add(s.Label+" profile", "distance (mm)", "value", colour, false, m.Profile)
	case measure.KindDistance:
		text("", 9, 4.5, where+fmt.Sprintf("Length %s", opt(m.DistanceMM, "%.4g mm")))
	case measure.KindDots:
		d := m.Dots
		lines := []string{fmt.Sprintf("%d dots, spacing %g mm: scale x %.5f, y %.5f, rotation %.3f°, shear %.3f°, residual RMS %.3g mm, worst %.3g mm at %.1f, %.1f mm",
			d.Found, s.SpacingMM, d.ScaleX, d.ScaleY, d.RotationDeg, d.ShearDeg, d.RMSMM, d.MaxMM, d.WorstMM[0], d.WorstMM[1])}
		if d.Correction != nil {
			for _, step := range d.Correction.Steps {
				lines = append(lines, "To make it true: "+step)
			}
		}
		text("", 9, 4.5, strings.Join(lines, "\n"))
	case measure.KindNPS:
		text("", 9, 4.5, where+"Radial average, mm² against line pairs per mm.")
		return plots.add(s.Label+" NPS", "line pairs per mm", "NPS (mm²)", colour, true, m.NPS)
	}
	plots.pdf.Ln(2)
	return nil
}

// PlotPNG draws the series as lines with gonum's plot package and returns
// a 120 × 55 mm PNG at 200 dpi.
func PlotPNG(title, xLabel, yLabel string, colour [3]int, logY bool, series ...[][2]float64) ([]byte, error) {
	c, err := plotCanvas(PlotSize{WidthMM: 120, HeightMM: 55, DPI: 200}, title, xLabel, yLabel, colour, logY, series...)
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// PlotSize is the size of a plot image in mm and its resolution.
type PlotSize struct {
	WidthMM, HeightMM, DPI float64
}

// PlotImage draws the series as PlotPNG does, as an image of the size
// given (the window's plots, which need no PNG on the way).
func PlotImage(size PlotSize, title, xLabel, yLabel string, colour [3]int, logY bool, series ...[][2]float64) (image.Image, error) {
	c, err := plotCanvas(size, title, xLabel, yLabel, colour, logY, series...)
	if err != nil {
		return nil, err
	}
	return c.Image(), nil
}

func plotCanvas(size PlotSize, title, xLabel, yLabel string, colour [3]int, logY bool, series ...[][2]float64) (*vgimg.Canvas, error) {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = xLabel
	p.Y.Label.Text = yLabel
	p.Add(plotter.NewGrid())
	for _, s := range series {
		var pts plotter.XYs
		for _, v := range s {
			if logY && !(v[1] > 0) {
				continue
			}
			pts = append(pts, plotter.XY{X: v[0], Y: v[1]})
		}
		if len(pts) < 2 {
			continue
		}
		line, err := plotter.NewLine(pts)
		if err != nil {
			return nil, err
		}
		line.Color = color.RGBA{uint8(colour[0]), uint8(colour[1]), uint8(colour[2]), 255}
		line.Width = vg.Points(1.2)
		p.Add(line)
	}
	// A log axis only where the values span more than a decade; within
	// one it would carry no labelled tick.
	if logY && spansDecade(series) {
		p.Y.Scale = plot.LogScale{}
		p.Y.Tick.Marker = plot.LogTicks{}
	}
	c := vgimg.NewWith(vgimg.UseWH(vg.Length(size.WidthMM)*vg.Millimeter, vg.Length(size.HeightMM)*vg.Millimeter), vgimg.UseDPI(int(size.DPI)))
	p.Draw(draw.New(c))
	return c, nil
}

func spansDecade(series [][][2]float64) bool {
	lo, hi := math.Inf(1), 0.0
	for _, s := range series {
		for _, v := range s {
			if v[1] > 0 {
				lo, hi = math.Min(lo, v[1]), math.Max(hi, v[1])
			}
		}
	}
	return hi > 10*lo
}
