package recipe

import (
	"bytes"
	"encoding/json"
	"fmt"
	"strconv"
)

// RecipeFormat is the value of the "format" key of every recipe file.
const RecipeFormat = "spotloom-recipe/1"

// SidecarFormat is the value of the "format" key of the sidecar written
// beside every export (F.recipe.json): the recipe under "recipe", the build
// report under "report", and what the export did.
const SidecarFormat = "spotloom-export/1"

// ChannelRef names a channel of a capture: a channel number or a channel
// name. In JSON it is a number, a string, or null (not used / automatic).
type ChannelRef string

// IsSet reports whether the reference names a channel.
func (c ChannelRef) IsSet() bool { return c != "" }

// MarshalJSON writes a number when the reference is numeric.
func (c ChannelRef) MarshalJSON() ([]byte, error) {
	if c == "" {
		return []byte("null"), nil
	}
	if n, err := strconv.Atoi(string(c)); err == nil {
		return []byte(strconv.Itoa(n)), nil
	}
	return json.Marshal(string(c))
}

// UnmarshalJSON accepts a whole number, a string or null.
func (c *ChannelRef) UnmarshalJSON(b []byte) error {
	b = bytes.TrimSpace(b)
	if bytes.Equal(b, []byte("null")) {
		*c = ""
		return nil
	}
	if len(b) > 0 && b[0] == '"' {
		var s string
		if err := json.Unmarshal(b, &s); err != nil {
			return err
		}
		*c = ChannelRef(s)
		return nil
	}
	var n json.Number
	if err := json.Unmarshal(b, &n); err != nil {
		return fmt.Errorf("a channel is a number or a name, got %s", b)
	}
	i, err := strconv.Atoi(n.String())
	if err != nil || i < 0 {
		return fmt.Errorf("a channel number is a whole number from 0, got %s", b)
	}
	*c = ChannelRef(strconv.Itoa(i))
	return nil
}

// Channels says which capture channel plays which role.
type Channels struct {
	Detector ChannelRef `json:"detector"`
	Index    ChannelRef `json:"index"`
	Position ChannelRef `json:"position,omitempty"`
	Steps    ChannelRef `json:"steps,omitempty"`
}

// Timing controls how index edges are found.
type Timing struct {
	Edge         string   `json:"edge"` // "rising" or "falling"
	Threshold    *float64 `json:"threshold"`
	Hysteresis   *float64 `json:"hysteresis"`
	PulsesPerRev int      `json:"pulses_per_rev"`
}

// Sweep describes how time within a line maps to x in millimetres.
type Sweep struct {
	Apertures          int          `json:"apertures"`
	Law                Law          `json:"law"`
	FieldDeg           float64      `json:"field_deg"`
	DelayDeg           *float64     `json:"delay_deg"`
	ApertureOffsetsDeg []float64    `json:"aperture_offsets_deg"`
	Projection         string       `json:"projection"` // "flat" or "angular"
	DistanceMM         float64      `json:"distance_mm"`
	SinePeriodS        *float64     `json:"sine_period_s"`
	SineKeep           float64      `json:"sine_keep"`
	Table              [][2]float64 `json:"table"`
	Reverse            bool         `json:"reverse"`
}

// Rows describes how the cross-scan position of every sample is found.
type Rows struct {
	Source      RowSource    `json:"source"`
	Calibration [][2]float64 `json:"calibration"`
	CarrierHz   *float64     `json:"carrier_hz"`
	MMPerStep   *float64     `json:"mm_per_step"`
	SpeedMMS    *float64     `json:"speed_mm_s"`
	Strokes     string       `json:"strokes"` // "merge", "split", "first"
	// StrokesHysteresisMM is how far the head must come back, mm, before a
	// reversal counts and a new stroke (pass of the head) begins, with
	// rows.strokes split or first and a position read from a sensor
	// (rows.source position or tone). Left out (null): 2 % of the whole
	// travel or six times the position's noise, whichever is larger; a
	// build's resolved recipe gives it.
	StrokesHysteresisMM *float64 `json:"strokes_hysteresis_mm,omitempty"`
	// StepsThreshold and StepsHysteresis are the level at which step
	// pulses are timed on the steps channel and the hysteresis of that
	// trigger, in the channel's unit (source steps). Left out (null): Otsu's
	// split of the whole channel and a fifth of the step between its two
	// levels; a build's resolved recipe gives them.
	StepsThreshold  *float64 `json:"steps_threshold,omitempty"`
	StepsHysteresis *float64 `json:"steps_hysteresis,omitempty"`
	// PulseRest and PulseAway tell the index pulses from the rest on an
	// index channel that carries the position tone too (rows.source tone
	// with channels.position naming channels.index), once the tone is
	// notched out: a sample more than PulseAway from the resting level
	// PulseRest (the channel's unit) is part of a pulse, and the tone is
	// measured around such samples. Left out (null): the level most of
	// the notched channel sits at, of Otsu's two, and a quarter of the
	// step between them; a build's resolved recipe gives them (a live
	// build from its first seconds).
	PulseRest *float64 `json:"pulse_rest,omitempty"`
	PulseAway *float64 `json:"pulse_away,omitempty"`
}

// Signal controls detector clean-up.
type Signal struct {
	Baseline string `json:"baseline"` // "beam-off" or "none"
	Invert   bool   `json:"invert"`
	// ACCornerHz is the corner of the single-pole high-pass the detector
	// went through on its way to the recorder (a sound card's input, an
	// AC-coupled scope channel); the engine undoes it. 0 = DC coupled.
	ACCornerHz float64 `json:"ac_corner_hz"`
	// AfterglowUS is the time constant of the detector's single-exponential
	// afterglow (a phosphor screen's decay), in microseconds; the engine
	// undoes it. 0 = none; nil = estimated from the detector's decay where
	// the beam leaves the field.
	AfterglowUS *float64 `json:"afterglow_us"`
}

// Image controls the output grid.
type Image struct {
	PitchMM    float64 `json:"pitch_mm"`
	FillGapsPx int     `json:"fill_gaps_px"`
	// MaxGapMM is the widest cross-scan gap between two neighbouring
	// lines that is filled by interpolating down the columns between
	// them; a wider one stays no data and is warned about. nil =
	// automatic: four times the typical spacing of the lines while the
	// head moves.
	MaxGapMM *float64 `json:"max_gap_mm"`
}

// Recipe holds every reconstruction parameter; a frame can be rebuilt
// exactly from its capture and its recipe. Nil pointers mean "find it
// automatically". The keys are listed in docs/pipeline.md: extend, do not rename.
type Recipe struct {
	Format   string   `json:"format"`
	Channels Channels `json:"channels"`
	Timing   Timing   `json:"timing"`
	Sweep    Sweep    `json:"sweep"`
	Rows     Rows     `json:"rows"`
	Signal   Signal   `json:"signal"`
	Image    Image    `json:"image"`
}
