package recipe

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"

	"spotloom/internal/strictjson"
)

// Allowed values of the recipe's text keys, in the order they are listed in
// error messages.
var (
	Edges       = []string{"rising", "falling"}
	Projections = []string{"flat", "angular"}
	StrokeModes = []string{"merge", "split", "first"}
	Baselines   = []string{"beam-off", "none"}
)

// Default returns sensible starting values for a four-aperture wheel read by
// a potentiometer. Every automatic value (threshold, hysteresis, delay,
// channels, sine period, carrier) is left nil or empty, to be found from the
// capture.
func Default() Recipe {
	return Recipe{
		Format: RecipeFormat,
		Timing: Timing{Edge: "rising", PulsesPerRev: 4},
		Sweep: Sweep{
			Apertures:          4,
			Law:                LawUniform,
			FieldDeg:           30,
			ApertureOffsetsDeg: []float64{},
			Projection:         "flat",
			DistanceMM:         500,
			SineKeep:           0.9,
			Table:              [][2]float64{},
		},
		Rows: Rows{
			Source:      SourcePosition,
			Calibration: [][2]float64{{0.5, 0}, {4.5, 400}},
			Strokes:     "merge",
		},
		Signal: Signal{Baseline: "beam-off", AfterglowUS: Float(0)},
		Image:  Image{PitchMM: 1, FillGapsPx: 2},
	}
}

// Parse reads a recipe from JSON. It is strict (strictjson.Decode): an
// unknown or repeated key is an error naming the key, the keys allowed
// beside it and its line:column, as is a wrong type, a null where the value
// cannot be found automatically, or a [level, mm] pair of three numbers. A
// UTF-8 byte-order mark is skipped. Keys that are absent keep their
// Default value. Parse does not call Validate.
//
// The sidecar an export writes beside its image (format SidecarFormat)
// holds the recipe under its "recipe" key; Parse reads that recipe, so an
// export's sidecar rebuilds its frame directly.
func Parse(data []byte) (Recipe, error) {
	data = strictjson.TrimBOM(data)
	r := Default()
	r.Format = "" // must come from the file
	if _, err := strictjson.Decode(data, &r, "recipe"); err != nil {
		// A sidecar's extra keys fail the strict read; only then is it
		// worth reading the file a second time to see whether it is one.
		if inner, ok := sidecarRecipe(data); ok {
			return parseSidecar(inner)
		}
		return Recipe{}, err
	}
	if r.Format == "" {
		return Recipe{}, fmt.Errorf("recipe: key \"format\" is missing: expected %q", RecipeFormat)
	}
	if r.Format == SidecarFormat {
		return parseSidecar(nil)
	}
	if r.Format != RecipeFormat {
		return Recipe{}, fmt.Errorf("recipe: key \"format\" is %s: this version reads %q", strictjson.Quote(r.Format), RecipeFormat)
	}
	return r, nil
}

// sidecarRecipe returns the "recipe" of an export sidecar, and whether
// data is one.
func sidecarRecipe(data []byte) (json.RawMessage, bool) {
	var outer struct {
		Format string          `json:"format"`
		Recipe json.RawMessage `json:"recipe"`
	}
	if json.Unmarshal(data, &outer) != nil || outer.Format != SidecarFormat {
		return nil, false
	}
	return outer.Recipe, true
}

func parseSidecar(inner json.RawMessage) (Recipe, error) {
	if len(inner) == 0 || bytes.Equal(bytes.TrimSpace(inner), []byte("null")) {
		return Recipe{}, fmt.Errorf("recipe: export sidecar (%q) has no \"recipe\" key", SidecarFormat)
	}
	r, err := Parse(inner)
	if err != nil {
		return Recipe{}, fmt.Errorf("in the \"recipe\" of an export sidecar: %w", err)
	}
	return r, nil
}

// Load reads and parses a recipe file; errors start with the path.
func Load(path string) (Recipe, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return Recipe{}, err
	}
	r, err := Parse(data)
	if err != nil {
		return Recipe{}, fmt.Errorf("%s: %w", path, err)
	}
	return r, nil
}

// JSON returns the recipe as indented JSON with the keys in a fixed order,
// ending in a newline. Empty lists are written as [] rather than null,
// except sweep.aperture_offsets_deg, where null (estimate them) and []
// (all zero) differ.
func (r Recipe) JSON() []byte {
	c := r.Clone()
	if c.Sweep.Table == nil {
		c.Sweep.Table = [][2]float64{}
	}
	if c.Rows.Calibration == nil {
		c.Rows.Calibration = [][2]float64{}
	}
	b, err := json.MarshalIndent(c, "", "  ")
	if err != nil {
		// Only NaN or Inf can fail here; write them as null so the file
		// stays readable and Validate reports the key.
		b = []byte(fmt.Sprintf("{\"format\": %q, \"error\": %q}", RecipeFormat, err.Error()))
	}
	return append(b, '\n')
}

// Clone returns a deep copy: no slice or pointer is shared with r.
func (r Recipe) Clone() Recipe {
	c := r
	c.Timing.Threshold = clonePtr(r.Timing.Threshold)
	c.Timing.Hysteresis = clonePtr(r.Timing.Hysteresis)
	c.Sweep.DelayDeg = clonePtr(r.Sweep.DelayDeg)
	c.Sweep.SinePeriodS = clonePtr(r.Sweep.SinePeriodS)
	c.Rows.CarrierHz = clonePtr(r.Rows.CarrierHz)
	c.Rows.MMPerStep = clonePtr(r.Rows.MMPerStep)
	c.Rows.StepsThreshold = clonePtr(r.Rows.StepsThreshold)
	c.Rows.StepsHysteresis = clonePtr(r.Rows.StepsHysteresis)
	c.Rows.StrokesHysteresisMM = clonePtr(r.Rows.StrokesHysteresisMM)
	c.Rows.PulseRest = clonePtr(r.Rows.PulseRest)
	c.Rows.PulseAway = clonePtr(r.Rows.PulseAway)
	c.Rows.SpeedMMS = clonePtr(r.Rows.SpeedMMS)
	c.Image.MaxGapMM = clonePtr(r.Image.MaxGapMM)
	c.Signal.AfterglowUS = clonePtr(r.Signal.AfterglowUS)
	if r.Sweep.ApertureOffsetsDeg != nil {
		c.Sweep.ApertureOffsetsDeg = append([]float64{}, r.Sweep.ApertureOffsetsDeg...)
	}
	if r.Sweep.Table != nil {
		c.Sweep.Table = append([][2]float64{}, r.Sweep.Table...)
	}
	if r.Rows.Calibration != nil {
		c.Rows.Calibration = append([][2]float64{}, r.Rows.Calibration...)
	}
	return c
}

func clonePtr(p *float64) *float64 {
	if p == nil {
		return nil
	}
	v := *p
	return &v
}

// Float returns a pointer to v, for filling the recipe's automatic values.
func Float(v float64) *float64 { return &v }

// GivenKeys returns the dotted keys ("sweep.apertures", "rows.calibration")
// that a recipe file states with a value other than null, and "channels"
// when it names any channel: what the user knows. A sidecar, a whole recipe
// written beside an export, states every key ("*").
func GivenKeys(data []byte) (map[string]bool, error) {
	var top map[string]json.RawMessage
	if err := json.Unmarshal(strictjson.TrimBOM(data), &top); err != nil {
		// Parse names the place; this only says the file is not a recipe.
		return nil, fmt.Errorf("recipe: %w", err)
	}
	given := map[string]bool{}
	var format string
	if json.Unmarshal(top["format"], &format) == nil && format == SidecarFormat {
		given["*"] = true
		return given, nil
	}
	isNull := func(v json.RawMessage) bool { return len(v) == 0 || bytes.Equal(bytes.TrimSpace(v), []byte("null")) }
	for section, raw := range top {
		if section == "format" || isNull(raw) {
			continue
		}
		var keys map[string]json.RawMessage
		if json.Unmarshal(raw, &keys) != nil {
			continue // Parse reports a section that is not an object
		}
		for k, v := range keys {
			if isNull(v) {
				continue
			}
			if section == "channels" {
				given["channels"] = true
			} else {
				given[section+"."+k] = true
			}
		}
	}
	return given, nil
}
