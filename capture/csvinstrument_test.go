package capture

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// TestCSVInstrumentQuirks pins what real bench exports do that plain CSV
// does not, one small case each. Rates are closed forms: (rows-1)/span
// for a time column, or the stated value.
func TestCSVInstrumentQuirks(t *testing.T) {
	for _, tc := range []struct {
		name  string
		text  string
		rate  float64
		names []string
		units []string
		first []float32
		warn  string // part of the one warning, "" for none
	}{
		{"bare CR line ends", "time (s),a (V)\r0,1\r0.5,2\r1.0,3\r", 2, []string{"a"}, []string{"V"}, []float32{1}, ""},
		{"last row of delimiters", "time,a,b\n0,1,2\n1,3,4\n2,5,6\n,,\n", 1, []string{"a", "b"}, []string{"", ""}, []float32{1, 2}, ""},
		{"rows of delimiters and spaces at the end", "time;a\n0;1\n1;3\n2;5\n; \n;\n", 1, []string{"a"}, []string{""}, []float32{1}, ""},
		// `"Sample Interval=",0.5,` states 2 Hz, as the time column does:
		// no warning that a statement was ignored
		{"key with = in a quoted cell", "\"Sample Interval=\",0.5,\ntime,a\n0,1\n0.5,2\n1,3\n", 2, []string{"a"}, []string{""}, []float32{1}, ""},
		{"rate key with = and unit", "\"Sampling Frequency (Hz)=\",4,\na,b\n1,2\n3,4\n", 4, []string{"a", "b"}, []string{"", ""}, []float32{1, 2}, ""},
		// times 0, 0, 1, 1, 2, 2 printed to whole seconds: a ramp of 2/5 s
		// per row... read from the span, 5 rows over 2 s = 2.5 Hz
		{"repeating time, rate from the span", "time,a\n0,1\n0,2\n1,3\n1,4\n2,5\n2,6\n", 2.5, []string{"a"}, []string{""}, []float32{1}, "too few digits"},
		// the same with a stated interval of 0.4 s that fits the ramp
		{"repeating time, stated interval", "Sample interval,0.4\ntime,a\n0,1\n0,2\n1,3\n1,4\n2,5\n2,6\n", 2.5, []string{"a"}, []string{""}, []float32{1}, "from the stated interval"},
		// without a header, a repeating first column is still the time
		{"repeating time, no header", "Sample interval,0.4\n0,1\n0,2\n1,3\n1,4\n2,5\n2,6\n", 2.5, []string{"ch0"}, []string{""}, []float32{1}, "from the stated interval"},
		// a spreadsheet's generic header: the ramp "x" is time, "y" a signal
		{"generic header, time ramp", "x,y\n0.0,5\n0.1,7\n0.2,6\n0.3,8\n", 10, []string{"y"}, []string{""}, []float32{5}, ""},
		{"numeric channel names", "Time,1,2\n0,5,6\n0.5,7,8\n1.0,9,10\n", 2, []string{"1", "2"}, []string{"", ""}, []float32{5, 6}, ""},
		{"unit from the preamble", "Vertical Units,mV\ntime,det\n0,500\n1,250\n2,125\n", 1, []string{"det"}, []string{"V"}, []float32{0.5}, ""},
		{"name from the preamble", "Source,CH3\ntime (s),\n0,500\n1,250\n2,125\n", 1, []string{"CH3"}, []string{""}, []float32{500}, ""},
	} {
		rec, err := readCSVString(t, tc.text, Options{})
		if err != nil {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		if math.Abs(rec.SampleRateHz-tc.rate) > 1e-9*tc.rate {
			t.Errorf("%s: rate %v, want %v", tc.name, rec.SampleRateHz, tc.rate)
		}
		switch {
		case tc.warn == "" && len(rec.Warnings) > 0, tc.warn != "" && (len(rec.Warnings) != 1 || !strings.Contains(rec.Warnings[0], tc.warn)):
			t.Errorf("%s: warnings %q, want %q", tc.name, rec.Warnings, tc.warn)
		}
		if len(rec.Channels) != len(tc.names) {
			t.Errorf("%s: %d channels, want %d", tc.name, len(rec.Channels), len(tc.names))
			continue
		}
		for c, ch := range rec.Channels {
			if ch.Name != tc.names[c] || ch.Unit != tc.units[c] || ch.Samples[0] != tc.first[c] {
				t.Errorf("%s: channel %d %q [%s] first %v, want %q [%s] %v", tc.name, c, ch.Name, ch.Unit, ch.Samples[0], tc.names[c], tc.units[c], tc.first[c])
			}
		}
	}
}

// TestCSVTimeErrors: only time that runs backwards, or never moves, is an
// error, and the error offers --rate; an error in a record that spans
// lines (a quoted cell with a line break) names the line of the bad cell.
func TestCSVTimeErrors(t *testing.T) {
	for _, tc := range []struct {
		name, text, place, words string
	}{
		{"backwards", "time,a\n0,1\n1,2\n0.5,3\n2,4\n", "line 4:1", "does not come after"},
		{"never moves", "time,a\n1,1\n1,2\n1,3\n", "line 2", "holds 1 s in all 3 rows"},
		{"bad cell after a quoted line break", "time,note,a\n0,\"x\ny\",1\n1,\"z\",2\n2,\"p\nq\",oops\n3,\"r\",4\n", "line 6:4", `"oops"`},
	} {
		_, err := readCSVString(t, tc.text, Options{})
		var fe *FormatError
		if !errors.As(err, &fe) || fe.Place.String() != tc.place || !strings.Contains(err.Error(), tc.words) {
			t.Errorf("%s: %v, want %s and %q", tc.name, err, tc.place, tc.words)
			continue
		}
		if tc.name != "bad cell after a quoted line break" && !strings.Contains(err.Error(), "--rate") {
			t.Errorf("%s: %q does not offer --rate", tc.name, err)
		}
	}
}

// TestPrintQuantum: one unit of the last printed digit, worked by hand.
func TestPrintQuantum(t *testing.T) {
	for cell, want := range map[string]float64{
		"1.234": 0.001, "-1.2340e-03": 1e-7, "12": 1, "5e3": 1000, "0,25": 0.01, "1.5E+02": 10, " 0.00000012 ": 1e-8, "1e": 0, "2ex": 0,
	} {
		if got := printQuantum([]byte(cell)); math.Abs(got-want) > 1e-12*want {
			t.Errorf("printQuantum(%q) = %g, want %g", cell, got, want)
		}
	}
}
