package capture

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"spotloom/internal/strictjson"
)

// RawLayout describes a raw binary capture: bare samples, optionally after a
// header, interleaved frame by frame or planar channel by channel. It is
// stored as JSON in a NAME.layout.json sidecar beside the capture.
type RawLayout struct {
	// SampleType is one of int8, uint8, int16, uint16, int32, uint32,
	// float32, float64.
	SampleType string `json:"sample_type"`
	// ByteOrder is "little" (the default when empty) or "big".
	ByteOrder string `json:"byte_order"`
	// Channels is the number of channels, 1 to MaxRawChannels.
	Channels int `json:"channels"`
	// Interleaved stores frame after frame (ch0 ch1 ch2 ch0 ch1 ...); when
	// false the file is planar: all of ch0, then all of ch1, and so on. The
	// JSON key is required, so a file always says which it is.
	Interleaved bool `json:"interleaved"`
	// HeaderBytes are skipped at the start of the file.
	HeaderBytes int64 `json:"header_bytes"`
	// SampleRateHz is the rate of every channel; 0 means it must be given
	// with Options.SampleRateHz.
	SampleRateHz float64 `json:"sample_rate_hz"`
	// Scale and Offset turn a stored value into volts: v = stored·scale +
	// offset. Each holds one value for all channels or one per channel.
	// Without Scale, integer samples map to ±1.0 full scale (unsigned ones
	// as offset binary) and float samples are taken as they are.
	Scale  []float64 `json:"scale,omitempty"`
	Offset []float64 `json:"offset,omitempty"`
	// Names and Units, when given, hold one entry per channel.
	Names []string `json:"names,omitempty"`
	Units []string `json:"units,omitempty"`
}

// MaxRawChannels is the most channels a raw or CSV capture may have.
const MaxRawChannels = 256

// rawKinds maps RawLayout.SampleType to stored kinds.
var rawKinds = map[string]sampleKind{
	"int8": kindInt8, "uint8": kindUint8, "int16": kindInt16, "uint16": kindUint16,
	"int32": kindInt32, "uint32": kindUint32, "float32": kindFloat32, "float64": kindFloat64,
}

// exampleLayout is shown when a raw file has no layout.
const exampleLayout = `{"sample_type": "int16", "byte_order": "little", "channels": 3, "interleaved": true, ` +
	`"header_bytes": 0, "sample_rate_hz": 100000, "scale": [0.000305], "names": ["detector", "index", "position"]}`

// Validate checks a layout and names the first key that is wrong.
func (l RawLayout) Validate() error {
	if _, ok := rawKinds[l.SampleType]; !ok {
		return fmt.Errorf("sample_type %q: expected int8, uint8, int16, uint16, int32, uint32, float32 or float64", l.SampleType)
	}
	if l.ByteOrder != "" && l.ByteOrder != "little" && l.ByteOrder != "big" {
		return fmt.Errorf("byte_order %q: expected \"little\" or \"big\"", l.ByteOrder)
	}
	if l.Channels < 1 || l.Channels > MaxRawChannels {
		return fmt.Errorf("channels %d: expected 1 to %d", l.Channels, MaxRawChannels)
	}
	if l.HeaderBytes < 0 {
		return fmt.Errorf("header_bytes %d: expected 0 or more", l.HeaderBytes)
	}
	if l.SampleRateHz != 0 && !(l.SampleRateHz >= MinSampleRateHz && l.SampleRateHz <= MaxSampleRateHz) {
		return fmt.Errorf("sample_rate_hz %g: expected %g to %g Hz (or 0 to give it separately)", l.SampleRateHz, float64(MinSampleRateHz), MaxSampleRateHz)
	}
	for _, p := range []struct {
		key  string
		vals []float64
	}{{"scale", l.Scale}, {"offset", l.Offset}} {
		if len(p.vals) > 1 && len(p.vals) != l.Channels {
			return fmt.Errorf("%s has %d values: expected 1 or %d (one per channel)", p.key, len(p.vals), l.Channels)
		}
		for _, v := range p.vals {
			if v-v != 0 {
				return fmt.Errorf("%s holds %g: expected finite numbers", p.key, v)
			}
		}
	}
	for i, v := range l.Scale {
		if v == 0 {
			return fmt.Errorf("scale[%d] is 0: expected a non-zero factor", i)
		}
	}
	if len(l.Names) > 0 && len(l.Names) != l.Channels {
		return fmt.Errorf("names has %d entries: expected %d (one per channel)", len(l.Names), l.Channels)
	}
	if len(l.Units) > 0 && len(l.Units) != l.Channels {
		return fmt.Errorf("units has %d entries: expected %d (one per channel)", len(l.Units), l.Channels)
	}
	return nil
}

// kind returns the stored kind and byte order of the layout.
func (l RawLayout) kind() (sampleKind, bool) { return rawKinds[l.SampleType], l.ByteOrder == "big" }

// channelScale returns the scale and offset that turn stored values of
// channel c into the channel's unit, and that unit.
func (l RawLayout) channelScale(c int) (scale, offset float64, unit string) {
	kind, _ := l.kind()
	pick := func(v []float64, def float64) float64 {
		switch len(v) {
		case 0:
			return def
		case 1:
			return v[0]
		}
		return v[c]
	}
	unit = UnitVolt
	if len(l.Scale) == 0 && kind != kindFloat32 && kind != kindFloat64 {
		// Full scale: ±2^(bits-1) → ±1.0; unsigned values are offset binary.
		bits := 8 * kindSize[kind]
		scale = 1 / float64(uint64(1)<<(bits-1))
		if kind == kindUint8 || kind == kindUint16 || kind == kindUint32 {
			offset = -1
		}
		unit = UnitFullScale
		if len(l.Offset) > 0 {
			offset = pick(l.Offset, 0)
		}
	} else {
		scale, offset = pick(l.Scale, 1), pick(l.Offset, 0)
	}
	if len(l.Units) > 0 {
		unit = l.Units[c]
	}
	return scale, offset, unit
}

// MarshalJSON writes the layout with every key, in the documented order.
func (l RawLayout) MarshalJSON() ([]byte, error) {
	type plain RawLayout // no methods: no recursion
	if l.ByteOrder == "" {
		l.ByteOrder = "little"
	}
	return json.Marshal(plain(l))
}

// ParseLayout reads a layout from JSON with the project's strict parser
// (strictjson.Decode): unknown or repeated keys, wrong types and broken
// syntax are errors naming the key and its line:column, as recipe errors
// are. The keys sample_type, channels and interleaved are required.
func ParseLayout(data []byte) (RawLayout, error) {
	type plain RawLayout
	var l plain
	present, err := strictjson.Decode(data, &l, "layout")
	if err != nil {
		return RawLayout{}, err
	}
	for _, key := range []string{"sample_type", "channels", "interleaved"} {
		if !present[key] {
			return RawLayout{}, fmt.Errorf("layout has no %q key; example: %s", key, exampleLayout)
		}
	}
	out := RawLayout(l)
	if err := out.Validate(); err != nil {
		return RawLayout{}, fmt.Errorf("layout: %v", err)
	}
	return out, nil
}

// LoadLayout reads a layout file.
func LoadLayout(path string) (RawLayout, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return RawLayout{}, fmt.Errorf("%s: %w", displayPath(path), unwrapPathError(err))
	}
	l, err := ParseLayout(data)
	if err != nil {
		return RawLayout{}, fmt.Errorf("%s: %v", displayPath(path), err)
	}
	return l, nil
}

// WriteLayoutFile writes l as indented JSON to path.
func WriteLayoutFile(path string, l RawLayout) error {
	if err := l.Validate(); err != nil {
		return fmt.Errorf("%s: layout: %v", displayPath(path), err)
	}
	data, err := json.MarshalIndent(l, "", "  ")
	if err != nil {
		return err
	}
	return os.WriteFile(path, append(data, '\n'), 0o644)
}

// LayoutPaths are the sidecar names Open tries for a raw capture, in order:
// NAME.EXT.layout.json, then NAME.layout.json.
func LayoutPaths(path string) []string {
	paths := []string{path + ".layout.json"}
	if ext := filepath.Ext(path); ext != "" {
		paths = append(paths, strings.TrimSuffix(path, ext)+".layout.json")
	}
	return paths
}

// findLayout returns the layout given in opts or found beside path, or nil
// when there is none.
func findLayout(path string, opts Options) (*RawLayout, error) {
	if opts.Layout != nil {
		if err := opts.Layout.Validate(); err != nil {
			return nil, fmt.Errorf("%s: raw layout: %v", displayPath(path), err)
		}
		return opts.Layout, nil
	}
	for _, p := range LayoutPaths(path) {
		if p == path {
			continue
		}
		if _, err := os.Stat(p); err == nil {
			l, err := LoadLayout(p)
			if err != nil {
				return nil, err
			}
			return &l, nil
		}
	}
	return nil, nil
}

// layoutHint tells where a layout goes and shows one.
func layoutHint(path string) string {
	return fmt.Sprintf("write %s beside it, e.g. %s", displayPath(filepath.Base(LayoutPaths(path)[len(LayoutPaths(path))-1])), exampleLayout)
}

// missingLayout is the error for a raw capture without a layout.
func missingLayout(path string) error {
	return fmt.Errorf("%s: %w: give the layout as flags or %s", displayPath(path), ErrNoLayout, layoutHint(path))
}
