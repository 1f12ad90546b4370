package recipe

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"reflect"
	"sort"
	"strings"
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
		Signal: Signal{Baseline: "beam-off"},
		Image:  Image{PitchMM: 1, FillGapsPx: 2},
	}
}

// Parse reads a recipe from JSON. It is strict: an unknown key is an error
// naming the key and the keys allowed beside it, a wrong type names the key
// and the line:column. Keys that are absent keep their Default value. Parse
// does not call Validate.
//
// The sidecar an export writes beside its image (format SidecarFormat)
// holds the recipe under its "recipe" key; Parse reads that recipe, so an
// export's sidecar rebuilds its frame directly.
func Parse(data []byte) (Recipe, error) {
	var outer struct {
		Format string          `json:"format"`
		Recipe json.RawMessage `json:"recipe"`
	}
	if json.Unmarshal(data, &outer) == nil && outer.Format == SidecarFormat {
		if len(outer.Recipe) == 0 || bytes.Equal(bytes.TrimSpace(outer.Recipe), []byte("null")) {
			return Recipe{}, fmt.Errorf("recipe: export sidecar (%q) has no \"recipe\" key", SidecarFormat)
		}
		r, err := Parse(outer.Recipe)
		if err != nil {
			return Recipe{}, fmt.Errorf("in the \"recipe\" of an export sidecar: %w", err)
		}
		return r, nil
	}
	if err := checkKeys(data, reflect.TypeOf(Recipe{}), ""); err != nil {
		return Recipe{}, err
	}
	r := Default()
	r.Format = "" // must come from the file
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&r); err != nil {
		return Recipe{}, describeJSONError(data, err)
	}
	if dec.More() {
		return Recipe{}, fmt.Errorf("recipe: unexpected data after the closing brace at %s", lineCol(data, dec.InputOffset()))
	}
	if r.Format == "" {
		return Recipe{}, fmt.Errorf("recipe: key \"format\" is missing: expected %q", RecipeFormat)
	}
	if r.Format != RecipeFormat {
		return Recipe{}, fmt.Errorf("recipe: key \"format\" is %q: this version reads %q", r.Format, RecipeFormat)
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
	c.Rows.SpeedMMS = clonePtr(r.Rows.SpeedMMS)
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

// checkKeys walks the JSON objects of data alongside the struct type t and
// reports the first key that t does not have, with the allowed keys.
func checkKeys(data []byte, t reflect.Type, path string) error {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if t.Kind() != reflect.Struct {
		return nil
	}
	var obj map[string]json.RawMessage
	if err := json.Unmarshal(data, &obj); err != nil {
		// Not an object (or broken): the decoder reports it with a position.
		return nil
	}
	fields := map[string]reflect.Type{}
	var names []string
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		name := strings.Split(f.Tag.Get("json"), ",")[0]
		if name == "" || name == "-" {
			continue
		}
		fields[name] = f.Type
		names = append(names, name)
	}
	keys := make([]string, 0, len(obj))
	for k := range obj {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		ft, ok := fields[k]
		where := "the recipe"
		if path != "" {
			where = fmt.Sprintf("%q", path)
		}
		if !ok {
			return fmt.Errorf("recipe: unknown key %q in %s: allowed keys are %s", join(path, k), where, strings.Join(names, ", "))
		}
		// null means "find it automatically", which only the pointer keys,
		// channel references and sweep.aperture_offsets_deg can be; a null
		// elsewhere would quietly keep the default.
		if bytes.Equal(bytes.TrimSpace(obj[k]), []byte("null")) {
			switch {
			case ft.Kind() == reflect.Pointer, ft.Kind() == reflect.String:
			case join(path, k) == "sweep.aperture_offsets_deg":
			default:
				return fmt.Errorf("recipe: key %q is null, but it cannot be found automatically: give a value", join(path, k))
			}
		}
		if err := checkKeys(obj[k], ft, join(path, k)); err != nil {
			return err
		}
	}
	return nil
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

func describeJSONError(data []byte, err error) error {
	var syn *json.SyntaxError
	var typ *json.UnmarshalTypeError
	switch {
	case errors.As(err, &syn):
		return fmt.Errorf("recipe: broken JSON at %s: %v", lineCol(data, syn.Offset), syn)
	case errors.As(err, &typ):
		return fmt.Errorf("recipe: key %q at %s holds a JSON %s, expected %s", typ.Field, lineCol(data, typ.Offset), typ.Value, typeWord(typ.Type))
	case errors.Is(err, io.EOF), errors.Is(err, io.ErrUnexpectedEOF):
		return fmt.Errorf("recipe: the file is empty or ends before the closing brace")
	}
	return fmt.Errorf("recipe: %w", err)
}

func typeWord(t reflect.Type) string {
	switch t.Kind() {
	case reflect.Float64, reflect.Float32:
		return "a number"
	case reflect.Int:
		return "a whole number"
	case reflect.Bool:
		return "true or false"
	case reflect.String:
		return "a string"
	case reflect.Slice, reflect.Array:
		return "a list"
	case reflect.Struct:
		return "an object"
	}
	return t.String()
}

// lineCol turns a byte offset into "line L, column C" (both from 1).
func lineCol(data []byte, offset int64) string {
	if offset > int64(len(data)) {
		offset = int64(len(data))
	}
	line, col := 1, 1
	for _, b := range data[:offset] {
		if b == '\n' {
			line++
			col = 1
		} else {
			col++
		}
	}
	return fmt.Sprintf("line %d, column %d", line, col)
}
