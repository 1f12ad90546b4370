package recipe

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"testing"
)

func TestDefaultIsValidAndRoundTrips(t *testing.T) {
	d := Default()
	if err := d.Validate(); err != nil {
		t.Fatalf("Default does not validate: %v", err)
	}
	b := d.JSON()
	if !bytes.HasSuffix(b, []byte("}\n")) {
		t.Errorf("JSON does not end in a newline")
	}
	p, err := Parse(b)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(p.JSON(), b) {
		t.Errorf("round trip changed the recipe:\n%s\n%s", b, p.JSON())
	}
	// The keys of docs/pipeline.md, checked with the standard library's decoder.
	var m map[string]map[string]any
	_ = json.Unmarshal(b, &m)
	for _, k := range []string{"timing.threshold", "sweep.delay_deg", "sweep.aperture_offsets_deg", "rows.calibration", "image.fill_gaps_px", "signal.baseline"} {
		sec, key, _ := strings.Cut(k, ".")
		if _, ok := m[sec][key]; !ok {
			t.Errorf("key %s missing from %s", k, b)
		}
	}
}

func TestParseDesignExample(t *testing.T) {
	src := `{
  "format": "spotloom-recipe/1",
  "channels": {"detector": 0, "index": 1, "position": 2},
  "timing":   {"edge": "rising", "threshold": null, "hysteresis": null, "pulses_per_rev": 4},
  "sweep":    {"apertures": 4, "law": "uniform", "field_deg": 30.0, "delay_deg": null,
               "aperture_offsets_deg": [], "projection": "flat", "distance_mm": 500.0,
               "sine_period_s": null, "sine_keep": 0.9, "table": [], "reverse": false},
  "rows":     {"source": "position", "calibration": [[0.5, 0.0], [4.5, 400.0]],
               "carrier_hz": null, "mm_per_step": null, "speed_mm_s": null,
               "strokes": "merge"},
  "signal":   {"baseline": "beam-off", "invert": false},
  "image":    {"pitch_mm": 1.0, "fill_gaps_px": 2}
}`
	r, err := Parse([]byte(src))
	if err != nil {
		t.Fatal(err)
	}
	if err := r.Validate(); err != nil {
		t.Fatal(err)
	}
	if r.Channels.Position != "2" || r.Sweep.DelayDeg != nil || r.Rows.Calibration[1] != [2]float64{4.5, 400} {
		t.Errorf("parsed %+v", r)
	}
}

func TestParseErrors(t *testing.T) {
	for _, c := range []struct{ src, want string }{
		{`{"format": "spotloom-recipe/1", "sweep": {"fov": 3}}`, `unknown key "sweep.fov" at line 1, column 43 in "sweep": allowed keys are apertures, law, field_deg`},
		{`{"format": "spotloom-recipe/1", "colour": 1}`, `unknown key "colour" at line 1, column 33 in the recipe`},
		{"{\"format\": \"spotloom-recipe/1\",\n \"sweep\": {\"field_deg\": \"wide\"}}", `key "sweep.field_deg" at line 2`},
		{"{\"format\": \"spotloom-recipe/1\",\n  \"image\": {\"pitch_mm\": 1,}}", "line 2, column"},
		{`{"sweep": {}}`, `key "format" is missing`},
		{`{"format": "spotloom-recipe/9"}`, `this version reads "spotloom-recipe/1"`},
		{``, "empty"},
	} {
		_, err := Parse([]byte(c.src))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Parse(%q): %v, want it to say %q", c.src, err, c.want)
		}
	}
}

func TestValidateNamesKeyAndAllowedValues(t *testing.T) {
	for _, c := range []struct {
		edit func(r *Recipe)
		want string
	}{
		{func(r *Recipe) { r.Sweep.Law = "spiral" }, `recipe key "sweep.law" is "spiral": allowed values are uniform, sine, table`},
		{func(r *Recipe) { r.Timing.Edge = "up" }, `"timing.edge" is "up": allowed values are rising, falling`},
		{func(r *Recipe) { r.Rows.Strokes = "all" }, "allowed values are merge, split, first"},
		{func(r *Recipe) { r.Sweep.FieldDeg = 100 }, `"sweep.field_deg" is 100° but 4 apertures are 90° apart`},
		{func(r *Recipe) { r.Timing.PulsesPerRev = 3 }, `"timing.pulses_per_rev" is 3: allowed values are 4`},
		{func(r *Recipe) { r.Rows.Calibration = nil }, `"rows.calibration" has 0 points`},
		{func(r *Recipe) { r.Rows.Source = "even"; r.Rows.SpeedMMS = Float(0) }, `"rows.speed_mm_s" is 0`},
		{func(r *Recipe) { r.Sweep.Law = "table" }, `"sweep.table" has 0 points`},
		{func(r *Recipe) { r.Sweep.ApertureOffsetsDeg = []float64{1} }, `"sweep.aperture_offsets_deg" has 1 values`},
		{func(r *Recipe) { r.Image.PitchMM = -1 }, `"image.pitch_mm" is -1`},
		{func(r *Recipe) { r.Image.MaxGapMM = Float(-1) }, `"image.max_gap_mm" is -1`},
		{func(r *Recipe) { r.Signal.AfterglowUS = Float(-3) }, `"signal.afterglow_us" is -3`},
	} {
		r := Default()
		c.edit(&r)
		err := r.Validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Validate: %v, want %q", err, c.want)
		}
		var ke *KeyError
		if err != nil && !errors.As(err, &ke) {
			t.Errorf("%v is not a *KeyError", err)
		}
	}
}

func TestClone(t *testing.T) {
	r := Default()
	r.Sweep.DelayDeg = Float(3)
	r.Sweep.ApertureOffsetsDeg = []float64{0, 1, 2, 3}
	c := r.Clone()
	*c.Sweep.DelayDeg = 5
	c.Sweep.ApertureOffsetsDeg[1] = 9
	c.Rows.Calibration[0][1] = 7
	if *r.Sweep.DelayDeg != 3 || r.Sweep.ApertureOffsetsDeg[1] != 1 || r.Rows.Calibration[0][1] != 0 {
		t.Errorf("Clone shares memory with the original")
	}
}

// sweep.aperture_offsets_deg null (estimate them) and [] (all zero) are
// different recipes: both survive a round trip.
func TestOffsetsNullAndEmptyDiffer(t *testing.T) {
	base := `{"format": "spotloom-recipe/1", "sweep": {"aperture_offsets_deg": %s}}`
	for _, c := range []struct {
		src  string
		null bool
	}{{"null", true}, {"[]", false}} {
		r, err := Parse([]byte(strings.Replace(base, "%s", c.src, 1)))
		if err != nil {
			t.Fatal(err)
		}
		if (r.Sweep.ApertureOffsetsDeg == nil) != c.null {
			t.Errorf("%s parsed to %#v", c.src, r.Sweep.ApertureOffsetsDeg)
		}
		if !bytes.Contains(r.JSON(), []byte(`"aperture_offsets_deg": `+c.src)) {
			t.Errorf("%s written as\n%s", c.src, r.JSON())
		}
		if err := r.Validate(); err != nil {
			t.Error(err)
		}
	}
	if d := Default(); d.Signal.AfterglowUS == nil || *d.Signal.AfterglowUS != 0 || d.Image.MaxGapMM != nil {
		t.Errorf("defaults: afterglow %v, max gap %v; want 0 and null", d.Signal.AfterglowUS, d.Image.MaxGapMM)
	}
}

// The strict parser keeps its promises on the cases encoding/json lets
// through: a pair of three numbers, a pair of one, a key given twice; and
// a UTF-8 byte-order mark (RFC 8259 §8.1 lets a parser ignore it) is
// accepted.
func TestParseStrictPairsDuplicatesAndBOM(t *testing.T) {
	for _, c := range []struct{ src, want string }{
		{"{\"format\": \"spotloom-recipe/1\",\n \"rows\": {\"calibration\": [[0.5, 0], [4.5, 400, 9]]}}",
			`key "rows.calibration[1]" at line 2, column 37 has more than 2 values: expected exactly 2`},
		{`{"format": "spotloom-recipe/1", "sweep": {"law": "table", "table": [[0], [1, 5]]}}`,
			`key "sweep.table[0]" at line 1, column 69 has 1 values: expected exactly 2`},
		{`{"format": "spotloom-recipe/1", "sweep": {"law": "sine", "law": "table"}}`,
			`key "sweep.law" at line 1, column 58 is given twice (first at line 1, column 43)`},
	} {
		_, err := Parse([]byte(c.src))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Parse(%q): %v\nwant %q", c.src, err, c.want)
		}
	}
	bom := append([]byte("\xEF\xBB\xBF"), Default().JSON()...)
	r, err := Parse(bom)
	if err != nil {
		t.Fatalf("a recipe with a byte-order mark: %v", err)
	}
	if !bytes.Equal(r.JSON(), Default().JSON()) {
		t.Errorf("BOM recipe parsed to\n%s", r.JSON())
	}
}

// A huge broken recipe gives a short error: a megabyte key or value is
// quoted to 60 characters.
func TestParseErrorStaysShort(t *testing.T) {
	huge := strings.Repeat("w", 1<<20)
	for _, src := range []string{
		`{"format": "spotloom-recipe/1", "sweep": {"` + huge + `": 1}}`,
		`{"format": "` + huge + `"}`,
		`{"format": "spotloom-recipe/1", "image": {"fill_gaps_px": 1` + strings.Repeat("0", 1<<20) + `}}`,
		`{"format": "spotloom-recipe/1", "channels": {"index": "` + huge + `", "detector": 1.5}}`,
	} {
		_, err := Parse([]byte(src))
		if err == nil || len(err.Error()) > 400 {
			t.Errorf("error of %d bytes: %.200v", len(fmt.Sprint(err)), err)
		}
	}
}
