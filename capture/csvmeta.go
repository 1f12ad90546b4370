package capture

import (
	"bytes"
	"fmt"
	"math"
	"strings"
	"unicode"
)

// Text captures often state their sample spacing as a key and a value:
// in preamble lines before the header ("Sample interval,1e-05",
// "Sampling period;2,0E-06", "dt = 1e-5", "# Sample rate: 96000"), in the
// leading columns of the first rows beside the samples, or in header cells
// after the data columns whose values stand in the units row below
// ("X,CH1,Start,Increment" over "Sequence,Volt,-0.01,1e-05").
//
// The keys recognised are compared case-insensitively with everything but
// letters and digits removed, and a unit in brackets taken off first
// ("Sample Rate (Hz)" is "samplerate" in Hz):
//
//	interval (seconds): sample interval, sampling interval, sample period,
//	  sampling period, interval, increment, x increment, time increment,
//	  time step, dt, delta t, Δt
//	rate (hertz):       sample rate, sampling rate, sample frequency,
//	  sampling frequency ("fs" is left out: it also names full scale)
//
// An interval may carry s, ms, us, µs, ns or min; a rate Hz, kHz, MHz, GHz
// or S/s, kS/s, MS/s, GS/s (also written Sa/s or sps); either in brackets
// after the key, after the number in the same cell, or in the next cell.

// csvMetaKind says what a recognised key states.
type csvMetaKind int

const (
	metaInterval csvMetaKind = iota + 1 // seconds between samples
	metaRate                            // samples per second
)

// metaKeys maps normalised keys (see normalizeMetaKey) to what they state.
var metaKeys = map[string]csvMetaKind{
	"sampleinterval": metaInterval, "samplinginterval": metaInterval, "sampleperiod": metaInterval, "samplingperiod": metaInterval,
	"interval": metaInterval, "increment": metaInterval, "xincrement": metaInterval, "timeincrement": metaInterval,
	"timestep": metaInterval, "dt": metaInterval, "deltat": metaInterval, "δt": metaInterval,
	"samplerate": metaRate, "samplingrate": metaRate, "samplefrequency": metaRate, "samplingfrequency": metaRate,
}

// csvMeta is one recognised key and its value.
type csvMeta struct {
	kind csvMetaKind
	key  string // as written
	raw  string // the value as written
	// hz is the sample rate the value gives; 0 when the value is not a
	// positive finite number in a known unit.
	hz        float64
	line, col int // of the value
}

// place is where the value stands.
func (m csvMeta) place() Place { return AtLine(m.line, m.col) }

// describe names the entry for messages: `"Increment" = "0" (line 2:5)`.
func (m csvMeta) describe() string {
	return fmt.Sprintf("%q = %q (%s)", m.key, m.raw, m.place())
}

// expected says what a usable value of this kind looks like.
func (m csvMeta) expected() string {
	if m.kind == metaRate {
		return "a sample rate above 0 in Hz, kHz, MHz or S/s (e.g. 96000), or the rate given with the command (--rate HZ)"
	}
	return "a sample interval above 0 in s, ms, us or ns (e.g. 1e-05), or the rate given with the command (--rate HZ)"
}

// normalizeMetaKey lower-cases a key cell, takes a bracketed unit off its
// end and keeps only letters and digits: "Sample Rate (Hz):" gives
// "samplerate" and "Hz".
func normalizeMetaKey(cell string) (key, unit string) {
	s := strings.TrimSpace(cell)
	s = strings.TrimRight(s, ":= \t")
	for _, p := range [][2]string{{"(", ")"}, {"[", "]"}} {
		if strings.HasSuffix(s, p[1]) {
			if i := strings.LastIndex(s, p[0]); i >= 0 {
				unit = strings.TrimSpace(s[i+1 : len(s)-1])
				s = s[:i]
				break
			}
		}
	}
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		if unicode.IsLetter(r) || unicode.IsDigit(r) {
			b.WriteRune(r)
		}
	}
	return b.String(), unit
}

// rateUnitHz is the size of a rate unit in hertz, 0 if unknown.
func rateUnitHz(unit string) float64 {
	switch strings.ToLower(strings.TrimSpace(unit)) {
	case "", "hz", "s/s", "sa/s", "sps", "1/s":
		return 1
	case "khz", "ks/s", "ksa/s", "ksps":
		return 1e3
	case "mhz", "ms/s", "msa/s", "msps":
		return 1e6
	case "ghz", "gs/s", "gsa/s", "gsps":
		return 1e9
	}
	return 0
}

// metaUnitScale converts a value of kind in unit to seconds or hertz; 0
// when the unit is not one of that kind.
func metaUnitScale(kind csvMetaKind, unit string) float64 {
	if kind == metaRate {
		return rateUnitHz(unit)
	}
	return timeUnitSeconds(unit)
}

// newMeta builds the entry for a key, its value text and the unit found
// beside it, working out the rate it gives.
func newMeta(kind csvMetaKind, key, raw, unit string, line, col int, decimalComma bool) csvMeta {
	m := csvMeta{kind: kind, key: strings.TrimSpace(key), raw: strings.TrimSpace(raw), line: line, col: col}
	num := m.raw
	v, ok := parseNumber([]byte(num), decimalComma)
	if !ok {
		// "10 us": the unit after the number
		if i := strings.LastIndexAny(num, " \t"); i > 0 {
			if v, ok = parseNumber([]byte(num[:i]), decimalComma); ok {
				unit = num[i+1:]
			}
		}
	}
	if !ok {
		return m
	}
	scale := metaUnitScale(kind, unit)
	if scale == 0 || !(v > 0) || math.IsInf(v, 0) {
		return m
	}
	if kind == metaRate {
		m.hz = v * scale
	} else {
		m.hz = 1 / (v * scale)
	}
	if math.IsInf(m.hz, 0) || math.IsNaN(m.hz) {
		m.hz = 0
	}
	return m
}

// metaInCell reads the one-cell forms "key = value" and "key: value unit".
func metaInCell(cell []byte, line, col int, decimalComma bool) (csvMeta, bool) {
	k := bytes.IndexAny(cell, "=:")
	if k <= 0 {
		return csvMeta{}, false
	}
	key, unit := normalizeMetaKey(strings.TrimLeft(string(cell[:k]), "#%;/ \t"))
	kind, known := metaKeys[key]
	if !known {
		return csvMeta{}, false
	}
	rest := cell[k+1:]
	skip := len(rest) - len(bytes.TrimLeft(rest, " \t=:"))
	if skip == len(rest) {
		// "Sampling Frequency (Hz)=" with its value in the next cell
		return csvMeta{}, false
	}
	return newMeta(kind, string(cell[:k]), string(rest[skip:]), unit, line, col+k+1+skip, decimalComma), true
}

// scanMetaCells finds key/value pairs in a row's cells: a key cell, its
// value in the next non-empty cell and, optionally, a unit in the cell
// after that. cols are the 1-based byte columns of the cells.
func scanMetaCells(cells [][]byte, cols []int, line int, decimalComma bool, out []csvMeta) []csvMeta {
	blank := func(c []byte) bool {
		c = bytes.TrimSpace(c)
		return len(c) == 0 || len(c) == 1 && (c[0] == '=' || c[0] == ':')
	}
	for i := 0; i < len(cells); i++ {
		if blank(cells[i]) {
			continue
		}
		if m, ok := metaInCell(cells[i], line, cols[i], decimalComma); ok {
			out = append(out, m)
			continue
		}
		key, unit := normalizeMetaKey(strings.TrimLeft(string(cells[i]), "#%;/ \t"))
		kind, known := metaKeys[key]
		if !known {
			continue
		}
		j := i + 1
		for j < len(cells) && blank(cells[j]) {
			j++
		}
		if j == len(cells) {
			continue // a key with no value: a column name, not a statement
		}
		next := j
		if unit == "" && j+1 < len(cells) {
			if u := strings.TrimSpace(string(cells[j+1])); u != "" && metaUnitScale(kind, u) != 0 {
				unit, next = u, j+1
			}
		}
		out = append(out, newMeta(kind, string(cells[i]), string(cells[j]), unit, line, cols[j], decimalComma))
		i = next
	}
	return out
}

// scanMetaLine finds key/value pairs in a preamble line: the whole line as
// "key = value" or "key: value", or else key and value in cells.
func scanMetaLine(text []byte, line int, delim byte, decimalComma bool, out []csvMeta) []csvMeta {
	lead := len(text) - len(bytes.TrimLeft(text, " \t"))
	if delim == whitespaceDelim || bytes.IndexByte(text, delim) < 0 {
		if m, ok := metaInCell(text[lead:], line, lead+1, decimalComma); ok {
			return append(out, m)
		}
	}
	cells, cols, err := splitRecord(text, delim, nil, nil)
	if err != nil {
		return out
	}
	return scanMetaCells(cells, cols, line, decimalComma, out)
}

// resolveMeta picks the sample rate the file states: the first usable
// entry. It returns the first unusable entry too, and sentences about
// entries that disagree by more than 1 %.
func resolveMeta(metas []csvMeta) (chosen, bad *csvMeta, warnings []string) {
	for i := range metas {
		m := &metas[i]
		switch {
		case m.hz == 0:
			if bad == nil {
				bad = m
			}
		case chosen == nil:
			chosen = m
		case math.Abs(m.hz-chosen.hz) > 0.01*chosen.hz:
			warnings = append(warnings, fmt.Sprintf("the file states two sample rates, %.10g Hz by %s and %.10g Hz by %s; the first is used",
				chosen.hz, chosen.describe(), m.hz, m.describe()))
		}
	}
	return chosen, bad, warnings
}

// Metadata may also name the signal of a column or give its unit, in the
// preamble or in metadata columns beside the samples ("Source,CH1",
// "Vertical Units,V"). Keys are normalised as for the rate keys:
//
//	name: source, source channel, channel name, trace name, label
//	unit: vertical units, vertical unit, y units, y unit, units, unit
//
// A statement in metadata columns belongs to the first signal column to
// its right; one in the preamble to the only signal column, if there is
// one. It fills in a name the header does not give (or gives only as a
// generic spreadsheet name) and a unit the header does not give.

// csvLabelKind says what a label statement gives.
type csvLabelKind int

const (
	labelName csvLabelKind = iota + 1
	labelUnit
)

// labelKeys maps normalised keys to what they give.
var labelKeys = map[string]csvLabelKind{
	"source": labelName, "sourcechannel": labelName, "channelname": labelName, "tracename": labelName, "label": labelName,
	"verticalunits": labelUnit, "verticalunit": labelUnit, "yunits": labelUnit, "yunit": labelUnit, "units": labelUnit, "unit": labelUnit,
}

// csvLabel is one name or unit statement.
type csvLabel struct {
	kind  csvLabelKind
	value string
	field int // of the key cell, or -1 in the preamble
}

// scanLabelCells finds name and unit statements among cells: a key cell
// and its value in the next non-empty cell. fields are the cells' field
// numbers, or nil for a preamble line.
func scanLabelCells(cells [][]byte, fields []int, out []csvLabel) []csvLabel {
	for i := 0; i < len(cells); i++ {
		key, _ := normalizeMetaKey(string(cells[i]))
		kind, known := labelKeys[key]
		if !known {
			continue
		}
		j := i + 1
		for j < len(cells) && len(bytes.TrimSpace(cells[j])) == 0 {
			j++
		}
		if j == len(cells) {
			continue
		}
		field := -1
		if fields != nil {
			field = fields[i]
		}
		out = append(out, csvLabel{kind: kind, value: strings.TrimSpace(string(cells[j])), field: field})
		i = j
	}
	return out
}
