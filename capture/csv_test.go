package capture

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"
)

// TestSplitRecordRFC4180 checks the record splitter on the examples of RFC
// 4180 ("Common Format and MIME Type for CSV Files", 2005), section 2.
func TestSplitRecordRFC4180(t *testing.T) {
	for _, tc := range []struct {
		rule string
		in   string
		want []string
	}{
		{"2.1", "aaa,bbb,ccc", []string{"aaa", "bbb", "ccc"}},
		{"2.4 (spaces are part of a field)", "aaa , bbb", []string{"aaa ", " bbb"}},
		{"2.5", `"aaa","bbb","ccc"`, []string{"aaa", "bbb", "ccc"}},
		{"2.6", "\"aaa\",\"b\r\nbb\",\"ccc\"", []string{"aaa", "b\r\nbb", "ccc"}},
		{"2.6 (comma inside quotes)", `"a,b",c`, []string{"a,b", "c"}},
		{"2.7", `"aaa","b""bb","ccc"`, []string{"aaa", `b"bb`, "ccc"}},
		{"2.7 (only a quote)", `""""`, []string{`"`}},
		{"empty fields", `,,`, []string{"", "", ""}},
	} {
		fields, _, err := splitRecord([]byte(tc.in), ',', nil, nil)
		if err != nil {
			t.Errorf("RFC 4180 %s: %q: %v", tc.rule, tc.in, err)
			continue
		}
		var got []string
		for _, f := range fields {
			got = append(got, string(f))
		}
		if strings.Join(got, "|") != strings.Join(tc.want, "|") || len(got) != len(tc.want) {
			t.Errorf("RFC 4180 %s: %q split into %q, want %q", tc.rule, tc.in, got, tc.want)
		}
	}
	for _, bad := range []string{`"aaa`, `"aaa"b,c`} {
		if _, _, err := splitRecord([]byte(bad), ',', nil, nil); err == nil {
			t.Errorf("%q: no error, want a quoting error", bad)
		}
	}
}

// TestParseNumberAgainstStrconv compares the fast number parser with the
// standard library's strconv.ParseFloat, an independent implementation.
func TestParseNumberAgainstStrconv(t *testing.T) {
	for _, s := range []string{"0", "-0", "1", "-1.25e-3", "3.14159", "1e22", "1e23", "123456789012345678901234", "0.1", "2.5E+02",
		"  7.5 ", "+4", "1.7976931348623157e308", "4.9e-324", "0.000030517578125", "-32768", "12345678901234567", ".5", "5."} {
		got, ok := parseNumber([]byte(s), false)
		want, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		if !ok || err != nil || got != want {
			t.Errorf("parseNumber(%q) = %v, %v; strconv gives %v, %v", s, got, ok, want, err)
		}
	}
	for _, s := range []string{"", "abc", "1.2.3", "1e", "--1", "0x10", "1_000", "1,5"} {
		if v, ok := parseNumber([]byte(s), false); ok {
			t.Errorf("parseNumber(%q) = %v, want not a number", s, v)
		}
	}
	if v, ok := parseNumber([]byte("-1,25"), true); !ok || v != -1.25 {
		t.Errorf("decimal comma: got %v %v, want -1.25", v, ok)
	}
}

func readCSVString(t *testing.T, text string, opts Options) (*Recording, error) {
	t.Helper()
	return readCSV(strings.NewReader(text), int64(len(text)), opts)
}

func TestCSVShapes(t *testing.T) {
	type want struct {
		rate  float64
		names []string
		units []string
		cols  [][]float32
	}
	for _, tc := range []struct {
		name string
		text string
		opts Options
		want want
	}{
		{"preamble and header with units", "Instrument,bench scope\nSample interval,1e-3\n\ntime (s),detector (V),index (mV)\n0,0.5,100\n0.001,0.25,-200\n0.002,1e-1,0\n",
			Options{}, want{1000, []string{"detector", "index"}, []string{"V", "V"}, [][]float32{{0.5, 0.25, 0.1}, {0.1, -0.2, 0}}}},
		{"semicolon and decimal comma", "Zeit [ms];Kanal A [V];Kanal B [V]\n0,0;1,5;-2,25\n0,5;2,5;3\n1,0;0;1e-2\n",
			Options{}, want{2000, []string{"Kanal A", "Kanal B"}, []string{"V", "V"}, [][]float32{{1.5, 2.5, 0}, {-2.25, 3, 0.01}}}},
		{"tab", "t\tA\tB\n0\t1\t2\n1\t3\t4\n", Options{}, want{1, []string{"A", "B"}, []string{"", ""}, [][]float32{{1, 3}, {2, 4}}}},
		{"whitespace", "   0.0   1.0  -1.0\n   0.5   2.0  -2.0\n   1.0   3.0  -3.0\n", Options{}, want{2, []string{"ch0", "ch1"}, []string{"", ""}, [][]float32{{1, 2, 3}, {-1, -2, -3}}}},
		{"names row then units row", "Time,CH1,CH2\n(s),(V),(V)\n0,1,2\n0.1,3,4\n", Options{}, want{10, []string{"CH1", "CH2"}, []string{"V", "V"}, [][]float32{{1, 3}, {2, 4}}}},
		{"no time column, rate given", "a,b\n1,2\n3,4\n5,6\n", Options{SampleRateHz: 500}, want{500, []string{"a", "b"}, []string{"", ""}, [][]float32{{1, 3, 5}, {2, 4, 6}}}},
		{"single column, rate given", "0.5\n0.25\n", Options{SampleRateHz: 8}, want{8, []string{"ch0"}, []string{""}, [][]float32{{0.5, 0.25}}}},
		{"RFC 4180 quoted header and cells, CRLF", "\"time (s)\",\"det, \"\"main\"\"\"\r\n\"0\",\"1.5\"\r\n\"0.25\",\"2.5\"\r\n", Options{}, want{4, []string{`det, "main"`}, []string{""}, [][]float32{{1.5, 2.5}}}},
		{"trailing delimiter", "time,a,\n0,1,\n1,2,\n", Options{}, want{1, []string{"a"}, []string{""}, [][]float32{{1, 2}}}},
		{"microseconds", "time (us),x\n0,1\n10,2\n20,3\n", Options{}, want{1e5, []string{"x"}, []string{""}, [][]float32{{1, 2, 3}}}},
	} {
		rec, err := readCSVString(t, tc.text, tc.opts)
		if err != nil {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		if math.Abs(rec.SampleRateHz-tc.want.rate) > 1e-9*tc.want.rate {
			t.Errorf("%s: rate %v, want %v", tc.name, rec.SampleRateHz, tc.want.rate)
		}
		if len(rec.Channels) != len(tc.want.names) {
			t.Errorf("%s: %d channels, want %d", tc.name, len(rec.Channels), len(tc.want.names))
			continue
		}
		for c, ch := range rec.Channels {
			if ch.Name != tc.want.names[c] || ch.Unit != tc.want.units[c] {
				t.Errorf("%s: channel %d is %q [%s], want %q [%s]", tc.name, c, ch.Name, ch.Unit, tc.want.names[c], tc.want.units[c])
			}
			if len(ch.Samples) != len(tc.want.cols[c]) {
				t.Errorf("%s: channel %d has %d samples, want %d", tc.name, c, len(ch.Samples), len(tc.want.cols[c]))
				continue
			}
			for i, v := range ch.Samples {
				if math.Abs(float64(v-tc.want.cols[c][i])) > 1e-7 {
					t.Errorf("%s: ch%d[%d] = %v, want %v", tc.name, c, i, v, tc.want.cols[c][i])
				}
			}
		}
		if len(rec.Warnings) > 0 {
			t.Errorf("%s: unexpected warnings %q", tc.name, rec.Warnings)
		}
	}
}

func TestCSVUnevenTimeWarns(t *testing.T) {
	rec, err := readCSVString(t, "time,a\n0.0,1\n1.0,2\n2.5,3\n3.0,4\n", Options{})
	if err != nil {
		t.Fatal(err)
	}
	// mean step (3-0)/3 = 1 s; steps 1, 1.5, 0.5 differ by more than 1 %
	// and more than the 0.1 s printing resolution
	if rec.SampleRateHz != 1 || len(rec.Warnings) != 1 || !strings.Contains(rec.Warnings[0], "uneven") {
		t.Fatalf("rate %v warnings %q", rec.SampleRateHz, rec.Warnings)
	}
}

func TestCSVErrorsNamePlace(t *testing.T) {
	for _, tc := range []struct {
		name, text string
		opts       Options
		place      string
		words      string
	}{
		{"not a number", "time,a,b\n0,1,2\n1,3,4\n2,x5,6\n3,7,8\n", Options{}, "line 4:3", `"x5"`},
		{"bad cell in first data row", "time,a,b\n0,1,oops\n1,3,4\n2,5,6\n3,7,8\n", Options{}, "line 2:5", `"oops"`},
		{"ragged row", "time,a,b\n0,1,2\n1,3\n2,5,6\n3,7,8\n", Options{}, "line 3", "2 fields"},
		{"ragged row right after header", "time,a,b\n0,1\n1,3,4\n2,5,6\n3,7,8\n", Options{}, "line 2", "2 fields"},
		{"time going back", "time,a\n0,1\n1,2\n0.5,3\n2,4\n", Options{}, "line 4:1", "does not come after"},
		{"no rate", "a,b\n1,2\n3,4\n", Options{}, "line 1", "no time column"},
		{"open quote", "time,a\n0,1\n1,\"2\n", Options{}, "line 3:3", "never closes"},
		{"text after quote", "time,a\n0,1\n1,\"2\"x\n2,3\n3,4\n", Options{}, "line 3:6", "after a closing quote"},
		{"no numbers at all", "hello\nworld\n", Options{}, "line 1", "no line"},
		{"one row", "time,a\n0,1\n", Options{}, "line 2", "one data row"},
	} {
		_, err := readCSVString(t, tc.text, tc.opts)
		var fe *FormatError
		if !errors.As(err, &fe) {
			t.Errorf("%s: err = %v, want a FormatError", tc.name, err)
			continue
		}
		if fe.Place.String() != tc.place || !strings.Contains(err.Error(), tc.words) || !strings.Contains(err.Error(), "expected") {
			t.Errorf("%s: %q, want place %q and %q", tc.name, err, tc.place, tc.words)
		}
	}
}

func TestCSVRoundTrip(t *testing.T) {
	rec := testRecording(3, 2000, 12500)
	rec.Channels[1].Name = "index, main" // needs quoting
	rec.Channels[2].Unit = UnitVolt
	var buf bytes.Buffer
	if err := WriteCSV(&buf, rec, []string{"Spotloom test capture", "rig,bench 1"}); err != nil {
		t.Fatal(err)
	}
	got, err := readCSV(bytes.NewReader(buf.Bytes()), int64(buf.Len()), Options{})
	if err != nil {
		t.Fatal(err)
	}
	// the time column i/rate, written with full precision, gives back the rate
	if math.Abs(got.SampleRateHz-12500) > 1e-6 || len(got.Warnings) != 0 {
		t.Fatalf("rate %v warnings %q", got.SampleRateHz, got.Warnings)
	}
	for c := range rec.Channels {
		if got.Channels[c].Name != rec.Channels[c].Name || got.Channels[c].Unit != rec.Channels[c].Unit {
			t.Errorf("channel %d: %q %q, want %q %q", c, got.Channels[c].Name, got.Channels[c].Unit, rec.Channels[c].Name, rec.Channels[c].Unit)
		}
		for i, v := range rec.Channels[c].Samples {
			if got.Channels[c].Samples[i] != v {
				t.Fatalf("ch%d[%d] = %v, want %v", c, i, got.Channels[c].Samples[i], v)
			}
		}
	}
}

// TestCSVPrintedTimeRounding: times printed to 3 significant digits step
// unevenly by one last digit; that is rounding, not uneven sampling.
func TestCSVPrintedTimeRounding(t *testing.T) {
	var sb strings.Builder
	sb.WriteString("time (s),a\n")
	for i := 0; i < 50; i++ {
		fmt.Fprintf(&sb, "%.2e,%d\n", float64(i)*1.0416667e-5, i) // 96 kHz printed as 1.04e-05, 2.08e-05, ...
	}
	rec, err := readCSVString(t, sb.String(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Warnings) != 0 || math.Abs(rec.SampleRateHz-96000)/96000 > 0.01 {
		t.Fatalf("rate %v, warnings %q", rec.SampleRateHz, rec.Warnings)
	}
	// a lost sample in integer milliseconds is reported although the
	// printing resolution equals the step
	rec, err = readCSVString(t, "time (ms),a\n0,1\n1,2\n2,3\n4,4\n5,5\n", Options{})
	if err != nil || len(rec.Warnings) != 1 {
		t.Errorf("lost sample: %v, warnings %q", err, rec.Warnings)
	}
	if q := printQuantum([]byte("-1.2340e-03")); math.Abs(q-1e-7) > 1e-20 {
		t.Errorf("printQuantum = %v, want 1e-7", q)
	}
}

// TestCSVGivenRateOverridesTime: with a rate given, a broken time column
// is not checked (it is still not read as a signal).
func TestCSVGivenRateOverridesTime(t *testing.T) {
	rec, err := readCSVString(t, "time,a\n0,1\n1,2\n0.5,3\n", Options{SampleRateHz: 10})
	if err != nil || rec.SampleRateHz != 10 || len(rec.Channels) != 1 || rec.Frames() != 3 {
		t.Fatalf("%v %+v", err, rec)
	}
}

// TestCSVPreambleWithHeaderShape: a preamble row with as many fields as
// the header is not taken for a names row above a units row.
func TestCSVPreambleWithHeaderShape(t *testing.T) {
	rec, err := readCSVString(t, "Model,Scope,4ch\nTime,CH1,CH2\n0,1,2\n1,3,4\n", Options{})
	if err != nil || rec.Channels[0].Name != "CH1" || rec.Channels[0].Unit != "" {
		t.Fatalf("%v %+v", err, rec.Channels)
	}
	rec, err = readCSVString(t, "Time,CH1,CH2\nSecond,Volt,mV\n0,1,2000\n1,3,4000\n", Options{})
	if err != nil || rec.Channels[1].Name != "CH2" || rec.Channels[1].Unit != UnitVolt || rec.Channels[1].Samples[0] != 2 {
		t.Fatalf("%v %+v", err, rec.Channels)
	}
}

// TestCSVStatedRateKeys reads the sample rate from preamble lines in the
// documented key spellings. Expected rates are 1/interval with the SI
// prefixes of the SI Brochure (BIPM, 9th edition, table 7: k = 1e3,
// M = 1e6, m = 1e-3, µ = 1e-6).
func TestCSVStatedRateKeys(t *testing.T) {
	for _, tc := range []struct {
		preamble string
		delim    string
		want     float64
	}{
		{"Sample Interval,1e-05", ",", 1 / 1e-5},
		{"sampling period;2,0E-06", ";", 1 / 2e-6},
		{"Sample rate,96000", ",", 96000},
		{"Sample Rate (Hz),96000", ",", 96000},
		{"SAMPLE RATE [kHz],96", ",", 96 * 1e3},
		{"dt = 1e-5", ",", 1 / 1e-5},
		{"# Sample rate: 48000", ",", 48000},
		{"Sample interval,10,us", ",", 1 / (10 * 1e-6)},
		{"Sample interval: 10 us", "\t", 1 / (10 * 1e-6)},
		{"Δt = 2 ms", ",", 1 / (2 * 1e-3)},
		{"X increment,5e-7", ",", 1 / 5e-7},
		{"Sampling rate,1.5,MS/s", ",", 1.5 * 1e6},
		{"FS,10", ",", 0}, // full scale, not a rate
		{"Sampling frequency;25;kHz", ";", 25 * 1e3},
	} {
		text := tc.preamble + "\nA" + tc.delim + "B\n"
		for i := 0; i < 5; i++ {
			text += fmt.Sprintf("%d%s%d\n", (i*7)%5, tc.delim, i%2)
		}
		rec, err := readCSVString(t, text, Options{})
		if tc.want == 0 {
			if err == nil || !strings.Contains(err.Error(), "no time column") {
				t.Errorf("%q: %v, want no rate", tc.preamble, err)
			}
			continue
		}
		if err != nil {
			t.Errorf("%q: %v", tc.preamble, err)
			continue
		}
		if math.Abs(rec.SampleRateHz-tc.want) > 1e-9*tc.want || len(rec.Warnings) != 0 || len(rec.Channels) != 2 {
			t.Errorf("%q: %v Hz, %d channels, warnings %q; want %v Hz", tc.preamble, rec.SampleRateHz, len(rec.Channels), rec.Warnings, tc.want)
		}
	}
	// keys outside the set say nothing about the rate
	if _, err := readCSVString(t, "Record length,1000\nA,B\n3,1\n1,0\n4,1\n", Options{}); err == nil || !strings.Contains(err.Error(), "no time column") {
		t.Errorf("unknown key: %v", err)
	}
}

// TestCSVStatedRateUnusable: a stated rate that is not a positive number
// is an error when the rate must come from it, and a warning when a time
// column gives the rate.
func TestCSVStatedRateUnusable(t *testing.T) {
	_, err := readCSVString(t, "Sample rate,auto\nA,B\n3,1\n1,0\n4,1\n", Options{})
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Place.String() != "line 1:13" || !strings.Contains(err.Error(), `"auto"`) {
		t.Errorf("text rate: %v", err)
	}
	rec, err := readCSVString(t, "Sample rate,-5\ntime,A\n0,1\n1,0\n2,1\n", Options{})
	if err != nil || rec.SampleRateHz != 1 || len(rec.Warnings) != 1 || !strings.Contains(rec.Warnings[0], "ignored") {
		t.Errorf("negative rate beside a time column: %v %+v", err, rec)
	}
	// within 1 % of the time column: no warning (1/1.005e-3 = 995.0 Hz
	// against 1000 Hz is 0.5 % apart)
	rec, err = readCSVString(t, "Sample interval,1.005e-3\ntime,A\n0,1\n0.001,0\n0.002,1\n", Options{})
	if err != nil || len(rec.Warnings) != 0 {
		t.Errorf("0.5 %% apart: %v %+v", err, rec)
	}
}

// TestCSVSampleCounter checks the counter column: dropped as a signal,
// rate from the stated interval or the command, errors at the cell that
// breaks the count, and no 1 Hz guess. Rates are the closed form
// 1/interval.
func TestCSVSampleCounter(t *testing.T) {
	// headerless consecutive integers and a stated interval: 1/1e-4 Hz
	rec, err := readCSVString(t, "Sample interval,1e-4\n0,0.5\n1,0.25\n2,0.125\n3,0\n", Options{})
	if err != nil || math.Abs(rec.SampleRateHz-1e4) > 1e-6 || len(rec.Channels) != 1 || rec.Channels[0].Samples[1] != 0.25 {
		t.Errorf("headerless counter: %v %+v", err, rec)
	}
	// a given rate: the counter is still not a signal
	rec, err = readCSVString(t, "Sample,det\n0,1\n1,2\n2,3\n", Options{SampleRateHz: 250})
	if err != nil || rec.SampleRateHz != 250 || len(rec.Channels) != 1 || rec.Channels[0].Name != "det" {
		t.Errorf("counter with a given rate: %v %+v", err, rec)
	}
	// a time unit makes a column of whole numbers a time column: 1/1 ms
	rec, err = readCSVString(t, "Index (ms),det\n0,1\n1,2\n2,3\n", Options{})
	if err != nil || math.Abs(rec.SampleRateHz-1000) > 1e-9 || len(rec.Channels) != 1 {
		t.Errorf("whole numbers in ms: %v %+v", err, rec)
	}
	for _, tc := range []struct{ name, text, place, words string }{
		{"no interval", "0,0.5\n1,0.25\n2,0.125\n", "line 1", "sample rate is unknown"},
		{"backwards", "Sample interval,1e-4\nNo,det\n0,1\n1,2\n2,3\n1,4\n", "line 6:1", "does not come after"},
		{"not whole", "Sample interval,1e-4\nNo,det\n0,1\n1,2\n2,3\n3.5,4\n", "line 6:1", "not a whole number"},
	} {
		_, err := readCSVString(t, tc.text, Options{})
		var fe *FormatError
		if !errors.As(err, &fe) || fe.Place.String() != tc.place || !strings.Contains(err.Error(), tc.words) || !strings.Contains(err.Error(), "expected") {
			t.Errorf("%s: %v; want %s and %q", tc.name, err, tc.place, tc.words)
		}
	}
}

// TestCSVTextColumnIgnored: a column of notes, text in most rows, is
// metadata beside the samples and is not read. The rate is the closed form
// 1/(0.5 s) = 2 Hz.
func TestCSVTextColumnIgnored(t *testing.T) {
	rec, err := readCSVString(t, "time,det,note\n0,1,start\n0.5,2,\n1.0,3,beam on\n1.5,4,\n2.0,5,end\n", Options{})
	if err != nil || rec.SampleRateHz != 2 || len(rec.Channels) != 1 || rec.Channels[0].Name != "det" || rec.Frames() != 5 {
		t.Fatalf("%v %+v", err, rec)
	}
}

// TestCSVTimeColumnPerChannel: channels that each carry their own named
// time column keep one time column; columns that differ by more than 1 %
// of a step are reported. The rate is the closed form 1/(0.001 s).
func TestCSVTimeColumnPerChannel(t *testing.T) {
	text := "TIME,CH1,TIME,CH2\n0,1,0,5\n0.001,2,0.001,0\n0.002,3,0.002,5\n0.003,4,0.003,0\n"
	rec, err := readCSVString(t, text, Options{})
	if err != nil || len(rec.Channels) != 2 || rec.Channels[1].Name != "CH2" || math.Abs(rec.SampleRateHz-1000) > 1e-6 || len(rec.Warnings) != 0 {
		t.Fatalf("%v %+v", err, rec)
	}
	// the second time column runs half a step late at line 4
	rec, err = readCSVString(t, strings.Replace(text, "0.002,3,0.002", "0.002,3,0.0025", 1), Options{})
	if err != nil || len(rec.Warnings) != 1 || !strings.Contains(rec.Warnings[0], "disagree") || !strings.Contains(rec.Warnings[0], "line 4") {
		t.Fatalf("%v %q", err, rec.Warnings)
	}
}

// TestCSVStatedIntervalInHeaderCells: key and value side by side in header
// cells past the data ("X,CH1,Start,-0.01,Increment,1e-05") also give the
// rate, 1/1e-05 Hz.
func TestCSVStatedIntervalInHeaderCells(t *testing.T) {
	rec, err := readCSVString(t, "X,CH1,Start,-0.01,Increment,1e-05\n0,0.5\n1,0.25\n2,0\n", Options{})
	if err != nil || math.Abs(rec.SampleRateHz-1e5) > 1e-6 || len(rec.Channels) != 1 || rec.Channels[0].Name != "CH1" || rec.Frames() != 3 {
		t.Fatalf("%v %+v", err, rec)
	}
}

// TestCSVShortFileNotMetadataColumns: a short file whose preamble lines
// outnumber its data rows keeps its time column (its numbers in the first
// column are data, not metadata). Rate: the closed form 1/(0.001 s).
func TestCSVShortFileNotMetadataColumns(t *testing.T) {
	rec, err := readCSVString(t, "Instrument,bench scope\nSample interval,1e-3\ntime (s),detector (V)\n0,0.5\n0.001,0.25\n", Options{})
	if err != nil || math.Abs(rec.SampleRateHz-1000) > 1e-9 || len(rec.Channels) != 1 || rec.Channels[0].Name != "detector" || rec.Frames() != 2 {
		t.Fatalf("%v %+v", err, rec)
	}
}
