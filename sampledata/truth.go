package sampledata

import (
	"bytes"
	"encoding/json"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
)

// TruthFormat is the value of the "format" key of every truth file.
const TruthFormat = "spotloom-truth/1"

// Truth is the ground truth of a simulated capture, in the terms of the
// recipe (docs/pipeline.md) so that a reconstruction can be checked against it.
//
// Coordinates: x in mm on the target plane from the field axis (the sweep
// runs from −half_width_mm to +half_width_mm, so image column 0 is the most
// negative x); y in mm is the head's true position (the same axis the
// position sensor measures; row 0 of an image is the largest y).
//
// Lines are numbered from the first index edge in the capture: with one
// pulse per aperture, line 0 is the line announced by the first rising index
// edge; with one pulse per revolution, lines 0 … apertures−1 are the lines
// of the revolution that begins with the first pulse. A line's recipe
// aperture is its number modulo the aperture count.
//
// DelayDeg is the wheel rotation from the index edge (the middle of the
// rising ramp, without jitter) to the start of the field of line 0;
// ApertureOffsetsDeg[k] is how much later than that the field of recipe
// aperture k starts after its own edge (or, with one pulse per revolution,
// after delay_deg + k·360°/apertures), so ApertureOffsetsDeg[0] is 0. They
// come from the wheel's physical aperture errors: if wheel aperture j0
// makes line 0, delay = lead_deg + error[j0] and offset[k] =
// error[(j0+k) mod N] − error[j0].
type Truth struct {
	Format           string  `json:"format"`
	Scene            string  `json:"scene"`
	SceneDescription string  `json:"scene_description"`
	Seed             uint64  `json:"seed"`
	Noiseless        bool    `json:"noiseless"`
	Rig              Rig     `json:"rig"`
	SampleRateHz     float64 `json:"sample_rate_hz"`
	Samples          int     `json:"samples"`
	DurationS        float64 `json:"duration_s"`
	// Channels gives the channel number of each role.
	Channels map[string]int `json:"channels"`
	// SceneCentreMM is where the scene's own (0,0) lies.
	SceneCentreMM [2]float64 `json:"scene_centre_mm"`
	HalfWidthMM   float64    `json:"half_width_mm"`
	YRangeMM      [2]float64 `json:"y_range_mm"`
	LineRateHz    float64    `json:"line_rate_hz"` // nominal
	SweepMS       float64    `json:"sweep_ms"`     // nominal time to cross the field

	DelayDeg           float64   `json:"delay_deg"`
	ApertureOffsetsDeg []float64 `json:"aperture_offsets_deg"`
	// DelayMeanDeg is lead_deg plus the mean aperture error: the delay that
	// fits all lines best when the aperture offsets are left at zero.
	DelayMeanDeg float64 `json:"delay_mean_deg"`
	// ApertureErrorsDeg are the physical errors of the wheel's apertures;
	// FirstWheelAperture is the wheel aperture that makes line 0.
	ApertureErrorsDeg  []float64 `json:"aperture_errors_deg"`
	FirstWheelAperture int       `json:"first_wheel_aperture"`
	RevPerMinMean      float64   `json:"rev_per_min_mean"`
	// RevPerMin is the true wheel speed every 50 ms.
	RevPerMin []TimeValue `json:"rev_per_min"`
	// IndexEdgesS are the true times (with jitter) of every rising index
	// edge in the capture.
	IndexEdgesS []float64   `json:"index_edges_s"`
	Lines       []TruthLine `json:"lines"`
	// ReversalsS are the times the head starts moving the other way.
	ReversalsS []float64 `json:"reversals_s"`
	// StepsS are the start times of the stepper's steps (stepper only).
	StepsS []float64 `json:"steps_s,omitempty"`

	// Dots are the dot-grid's dot centres (x, y mm) that lie wholly inside
	// the scanned area; DotDiameterMM is their size.
	Dots          [][2]float64 `json:"dots_mm,omitempty"`
	DotDiameterMM float64      `json:"dot_diameter_mm,omitempty"`
	// Features are the scene's edges and bar groups, in capture mm.
	Features []Feature `json:"features,omitempty"`

	Image *TruthImage `json:"image,omitempty"`
	img   *Raster
}

// TimeValue is one value of a quantity over time.
type TimeValue struct {
	TS    float64 `json:"t_s"`
	Value float64 `json:"value"`
}

// TruthLine is one line of the capture.
type TruthLine struct {
	Number        int `json:"number"`
	Aperture      int `json:"aperture"`       // recipe aperture: number mod apertures
	WheelAperture int `json:"wheel_aperture"` // physical aperture of the wheel
	// Stroke is the pass of the head at mid-field: the number of times the
	// head reversed before then (so a back-step starts two new passes).
	Stroke int `json:"stroke"`
	// EdgeS is the time of the rising index edge that announces the line
	// (with one pulse per revolution, the revolution's pulse).
	EdgeS float64 `json:"edge_s"`
	// FieldStartS and FieldEndS are when the beam enters and leaves the
	// field (FieldEndS may lie beyond the end of the capture).
	FieldStartS float64 `json:"field_start_s"`
	FieldEndS   float64 `json:"field_end_s"`
	YMM         float64 `json:"y_mm"` // head position at mid-field
	YStartMM    float64 `json:"y_start_mm"`
	YEndMM      float64 `json:"y_end_mm"`
	RevPerMin   float64 `json:"rev_per_min"` // wheel speed at mid-field
}

// TruthImage describes the truth image: the scene's scatter yield over the
// scanned area, area-averaged into each pixel, with each shape's own depth
// factor but without the rig's cos²θ fall-off, spot or detector chain. Pixel (col,row) has
// its centre at x = OriginXMM + col·PitchMM, y = OriginYMM − row·PitchMM;
// a 16-bit value v means yield v/65535.
type TruthImage struct {
	Path      string  `json:"path,omitempty"` // the PNG, relative to the truth file
	Width     int     `json:"width"`
	Height    int     `json:"height"`
	PitchMM   float64 `json:"pitch_mm"`
	OriginXMM float64 `json:"origin_x_mm"`
	OriginYMM float64 `json:"origin_y_mm"`
	MaxValue  int     `json:"max_value"` // 65535 = yield 1
}

func newTruth(rig Rig, scene SceneModel, opts SimOptions, wheel *wheelPath, motion *motionPath,
	fields []field, marks []mark, n int, centreX, centreY float64) *Truth {
	fs := rig.SampleRateHz
	durationS := float64(n) / fs
	yLo, yHi := motion.yRange(rig.Motion)
	t := &Truth{
		Format:           TruthFormat,
		Scene:            scene.Name,
		SceneDescription: scene.Description,
		Seed:             opts.Seed,
		Noiseless:        opts.Noiseless,
		Rig:              rig,
		SampleRateHz:     fs,
		Samples:          n,
		DurationS:        durationS,
		Channels:         map[string]int{},
		SceneCentreMM:    [2]float64{centreX, centreY},
		HalfWidthMM:      rig.HalfWidthMM(),
		YRangeMM:         [2]float64{yLo, yHi},
		LineRateHz:       rig.LineRateHz(),
		SweepMS:          rig.SweepS() * 1000,
		StepsS:           motion.stepS,
		ReversalsS:       append([]float64{}, motion.reversalsS...),
	}
	for i, name := range rig.channelNames() {
		t.Channels[name] = i
	}
	if rig.Position.SharesIndexInput {
		t.Channels["position"] = t.Channels["index"]
	}
	apertures := rig.Wheel.ApertureCount
	t.ApertureErrorsDeg = make([]float64, apertures)
	for j := range t.ApertureErrorsDeg {
		t.ApertureErrorsDeg[j] = apertureError(rig, j)
	}
	for _, m := range marks {
		if m.riseS+rig.Index.RiseTimeS/2 <= durationS {
			t.IndexEdgesS = append(t.IndexEdgesS, m.riseS)
		}
	}
	byKey := map[[2]int]field{}
	for _, f := range fields {
		byKey[[2]int{f.rev, f.aperture}] = f
	}
	// Lines in edge order.
	number := 0
	for _, m := range marks {
		if m.riseS+rig.Index.RiseTimeS/2 > durationS {
			break
		}
		announced := []int{m.aperture}
		if rig.Index.PulsesPerRev == 1 {
			announced = announced[:0]
			for j := 0; j < apertures; j++ {
				announced = append(announced, j)
			}
		}
		for _, j := range announced {
			f, ok := byKey[[2]int{m.rev, j}]
			if !ok {
				continue
			}
			ts, ok := wheel.timeOf(f.startDeg)
			if !ok {
				continue
			}
			te, ok := wheel.timeOf(f.startDeg + rig.fieldSpanDeg())
			if !ok {
				// The field ends after the capture: extrapolate at the
				// final speed.
				last := len(wheel.phi) - 1
				rate := (wheel.phi[last] - wheel.phi[last-1]) * fs
				te = durationS + (f.startDeg+rig.fieldSpanDeg()-wheel.phi[last])/rate
			}
			mid := (ts + te) / 2
			if number == 0 {
				t.FirstWheelAperture = j
			}
			t.Lines = append(t.Lines, TruthLine{
				Number: number, Aperture: number % apertures, WheelAperture: j,
				Stroke: motion.stroke(mid),
				EdgeS:  m.riseS, FieldStartS: ts, FieldEndS: te,
				YMM: motion.at(mid), YStartMM: motion.at(ts), YEndMM: motion.at(te),
				RevPerMin: wheel.revPerMin(mid),
			})
			number++
		}
	}
	j0 := t.FirstWheelAperture
	// A wheel's delay runs from the edge to its field's start; the sine
	// law's from the edge to φ = 0 (docs/pipeline.md, "Sine law"), both
	// lead_deg plus the aperture's error (none for a mirror).
	t.DelayDeg = rig.Index.LeadDeg + apertureError(rig, j0)
	t.DelayMeanDeg = rig.Index.LeadDeg
	for j := 0; j < apertures; j++ {
		t.DelayMeanDeg += apertureError(rig, j) / float64(apertures)
	}
	t.ApertureOffsetsDeg = make([]float64, apertures)
	for k := range t.ApertureOffsetsDeg {
		t.ApertureOffsetsDeg[k] = apertureError(rig, (j0+k)%apertures) - apertureError(rig, j0)
	}
	// Speed every 50 ms and its mean over the capture.
	for ts := 0.0; ts < durationS; ts += 0.05 {
		t.RevPerMin = append(t.RevPerMin, TimeValue{TS: ts, Value: wheel.revPerMin(ts)})
	}
	t.RevPerMinMean = (wheel.phi[len(wheel.phi)-1] - wheel.phi[0]) / 360 / (durationS / 60)

	hw := rig.HalfWidthMM()
	r := scene.DotDiameterMM / 2
	for _, d := range scene.Dots {
		x, y := d[0]+centreX, d[1]+centreY
		if math.Abs(x) <= hw-r && y >= yLo+r && y <= yHi-r {
			t.Dots = append(t.Dots, [2]float64{x, y})
		}
	}
	if len(t.Dots) > 0 {
		t.DotDiameterMM = scene.DotDiameterMM
	}
	for _, f := range scene.Features {
		f.XMM += centreX
		f.YMM += centreY
		t.Features = append(t.Features, f)
	}
	return t
}

func (t *Truth) setImage(r *Raster) {
	t.img = r
	t.Image = &TruthImage{Width: r.Width, Height: r.Height, PitchMM: r.PitchMM,
		OriginXMM: r.OriginXMM, OriginYMM: r.OriginYMM, MaxValue: 65535}
}

// ImageRaster returns the truth image (nil unless SimOptions.TruthPitchMM
// was set); its pixels are yields from 0 to 1.
func (t *Truth) ImageRaster() *Raster { return t.img }

// JSON returns the truth as indented JSON ending in a newline.
func (t *Truth) JSON() ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	if err := enc.Encode(t); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// WritePNG writes the truth image as a 16-bit greyscale PNG.
func (t *Truth) WritePNG(w io.Writer) error {
	if t.img == nil {
		return errNoImage
	}
	r := t.img
	g := image.NewGray16(image.Rect(0, 0, r.Width, r.Height))
	for row := 0; row < r.Height; row++ {
		for col := 0; col < r.Width; col++ {
			v := math.Round(float64(r.Pix[row*r.Width+col]) * 65535)
			g.SetGray16(col, row, color.Gray16{Y: uint16(math.Min(math.Max(v, 0), 65535))})
		}
	}
	return png.Encode(w, g)
}

type imageError string

func (e imageError) Error() string { return string(e) }

const errNoImage = imageError("the truth has no image: set SimOptions.TruthPitchMM")
