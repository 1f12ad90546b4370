package recon

import "spotloom/recon/recipe"

// Frame is one reconstructed image on a uniform millimetre grid.
//
// Pixel (col,row) is Pix[row*Width+col]. Column 0 is the start of the sweep
// (mirrored by sweep.reverse); row 0 is the largest cross-scan position. The
// centre of pixel (col,row) lies at x = OriginXMM + col*PitchXMM and
// y = OriginYMM - row*PitchYMM.
type Frame struct {
	Width, Height int
	Pix           []float32 // detector value, baseline removed; undefined where !Covered
	Covered       []bool    // true where the pixel received data (or was gap-filled)
	PitchXMM      float64
	PitchYMM      float64
	OriginXMM     float64       // x of the centre of column 0
	OriginYMM     float64       // y of the centre of row 0
	Stroke        int           // which pass of the head made this frame (0 for merged)
	Recipe        recipe.Recipe // the recipe with every automatic value resolved
	Report        Report
}

// At returns the value at (col,row) and whether it holds data.
func (f *Frame) At(col, row int) (float32, bool) {
	if col < 0 || row < 0 || col >= f.Width || row >= f.Height {
		return 0, false
	}
	i := row*f.Width + col
	return f.Pix[i], f.Covered[i]
}

// Report is what a build found and resolved; its JSON keys are fixed by
// docs/pipeline.md ("Build report").
type Report struct {
	Lines         int      `json:"lines"`          // lines placed
	LinesRepaired int      `json:"lines_repaired"` // lines whose index edge was filled in
	Revolutions   int      `json:"revolutions"`    // complete revolutions timed
	RPMMean       float64  `json:"rpm_mean"`       // 60 / mean revolution period (0 for the sine law)
	RPMSpreadPct  float64  `json:"rpm_spread_pct"` // standard deviation of the per-revolution rev/min, % of the mean
	SweepMS       float64  `json:"sweep_ms"`       // time the beam spends inside the field per line
	LineRateHz    float64  `json:"line_rate_hz"`   // lines per second
	DelayDeg      float64  `json:"delay_deg"`      // resolved sweep.delay_deg
	Threshold     float64  `json:"threshold"`      // resolved timing.threshold
	Strokes       int      `json:"strokes"`        // passes of the head found
	Columns       int      `json:"columns"`        // of the first frame (a frame's own report: of that frame)
	Rows          int      `json:"rows"`           // of the first frame (a frame's own report: of that frame)
	PitchMM       float64  `json:"pitch_mm"`
	OriginXMM     float64  `json:"origin_x_mm"` // x of the centre of column 0, of the first frame (a frame's own report: of that frame)
	OriginYMM     float64  `json:"origin_y_mm"` // y of the centre of row 0, likewise
	Coverage      float64  `json:"coverage"`    // fraction of pixels with data, all frames (a frame's own report: that frame)
	Warnings      []string `json:"warnings"`    // plain sentences

	PulsesMissing int `json:"pulses_missing"` // index pulses filled in
	PulsesExtra   int `json:"pulses_extra"`   // spurious index pulses ignored
	// AperturesSuggested is the aperture count the detector's beam-on
	// stretch implies, taking sweep.field_deg as right, when it differs
	// from sweep.apertures (found with an automatic delay only), else 0.
	AperturesSuggested int `json:"apertures_suggested,omitempty"`
	// PositionLevels is the range of the smoothed position level (or tone
	// amplitude) seen, in the position channel's unit.
	PositionLevels []float64 `json:"position_levels,omitempty"`
}
