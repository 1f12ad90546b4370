package capture

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// The oscilloscope-style text fixtures: samples printed from closed forms
// (a sine of known frequency and a pulse train) in the layouts scopes
// export, so the tests can check the rate and every sample against the
// formula each file was printed from. TestFixturesUpToDateCSVLayouts
// writes them with -update, like TestFixturesUpToDate does for the others.

// layoutRows is how many samples each layout fixture holds: few, so the
// fuzzer, which seeds from these files, can minimise inputs quickly.
const layoutRows = 120

// sineAt is the sine channel: amplitude 1 V, frequency hz, at time t.
func sineAt(hz, t float64) float64 { return math.Sin(2 * math.Pi * hz * t) }

// pulseAt is the pulse train: 5 V for the first width of every period
// samples, 0 V otherwise.
func pulseAt(i, period, width int) float64 {
	if i%period < width {
		return 5
	}
	return 0
}

// layoutFixture is one generated file and what it must read as.
type layoutFixture struct {
	name  string
	text  string
	rate  float64 // the rate the file was printed at
	names []string
	units []string
	want  [][]float32 // per channel, the printed cells as strconv reads them
	warn  string      // part of the one expected warning, "" for none
	// broken files: the error's place and part of its message
	place, words string
}

// cellValue is what a printed cell holds, read with strconv.ParseFloat
// (independent of the reader's own number parser).
func cellValue(cell string) float32 {
	v, err := strconv.ParseFloat(strings.Replace(strings.TrimSpace(cell), ",", ".", 1), 64)
	if err != nil {
		panic(err)
	}
	return float32(v)
}

// metaColumnsScope prints layout 1: key/value metadata in the first three
// columns of the first rows (empty later), then time and a 1 kHz sine;
// with pairs, a second block of metadata, its own time column (shifted by
// skew seconds) and a pulse train of period 50 samples.
func metaColumnsScope(name string, pairs bool, skew float64) layoutFixture {
	const dt, t0, hz = 1e-5, -1e-2, 1000.0
	fx := layoutFixture{name: name, rate: 1 / dt, names: []string{"ch0"}, units: []string{""}}
	if pairs {
		fx.names, fx.units = []string{"ch0", "ch1"}, []string{"", ""}
	}
	fx.want = make([][]float32, len(fx.names))
	var sb strings.Builder
	meta := func(i int) string {
		switch i {
		case 0:
			return fmt.Sprintf("Record Length,%d,Points", layoutRows)
		case 1:
			return fmt.Sprintf("Sample Interval,%g,s", dt)
		case 2:
			return "Trigger Point,100,Samples"
		}
		return ",, "
	}
	for i := 0; i < layoutRows; i++ {
		t := t0 + float64(i)*dt
		v := fmt.Sprintf("%.4f", sineAt(hz, t))
		fx.want[0] = append(fx.want[0], cellValue(v))
		fmt.Fprintf(&sb, "%s,%.6e,%s,", meta(i), t, v)
		if pairs {
			p := fmt.Sprintf("%.1f", pulseAt(i, 50, 10))
			fx.want[1] = append(fx.want[1], cellValue(p))
			fmt.Fprintf(&sb, ",%s,%.6e,%s,", meta(i), t+skew, p)
		}
		sb.WriteString("\r\n")
	}
	fx.text = sb.String()
	return fx
}

// counterScope prints layout 2: a header "X,CH1,CH2,Start,Increment", a
// units row that also holds the start and increment, then a sample
// counter, a 10 kHz sine and a pulse train of period 25 samples. increment
// is printed as given; skip, when not negative, is a counter value left
// out (a lost sample).
func counterScope(name, increment string, skip int) layoutFixture {
	const start, dt, hz = -1e-3, 2e-6, 10000.0
	fx := layoutFixture{name: name, rate: 1 / dt, names: []string{"CH1", "CH2"}, units: []string{UnitVolt, UnitVolt}, want: make([][]float32, 2)}
	var sb strings.Builder
	fmt.Fprintf(&sb, "X,CH1,CH2,Start,Increment,\nSequence,Volt,Volt,%e,%s\n", start, increment)
	for i := 0; i < layoutRows; i++ {
		if i == skip {
			continue
		}
		s := fmt.Sprintf("%.4e", sineAt(hz, start+float64(i)*dt))
		p := fmt.Sprintf("%.4e", pulseAt(i, 25, 5))
		fx.want[0] = append(fx.want[0], cellValue(s))
		fx.want[1] = append(fx.want[1], cellValue(p))
		fmt.Fprintf(&sb, "%d,%s,%s,\n", i, s, p)
	}
	fx.text = sb.String()
	return fx
}

// preambleScope prints a preamble, a header and columns without time: a
// 1 kHz sine at the given interval and a pulse train of period 50 samples,
// with the delimiter delim (decimal commas when it is ';').
func preambleScope(name, preamble, header string, delim string, dt float64) layoutFixture {
	fx := layoutFixture{name: name, rate: 1 / dt, want: make([][]float32, 2)}
	var sb strings.Builder
	sb.WriteString(preamble)
	sb.WriteString(header)
	for i := 0; i < layoutRows; i++ {
		s := fmt.Sprintf("%.4f", sineAt(1000, float64(i)*dt))
		p := fmt.Sprintf("%.1f", pulseAt(i, 50, 10))
		fx.want[0] = append(fx.want[0], cellValue(s))
		fx.want[1] = append(fx.want[1], cellValue(p))
		if delim == ";" {
			s, p = strings.Replace(s, ".", ",", 1), strings.Replace(p, ".", ",", 1)
		}
		if delim == " " {
			fmt.Fprintf(&sb, "  %9s  %4s\n", s, p)
		} else {
			fmt.Fprintf(&sb, "%s%s%s\n", s, delim, p)
		}
	}
	fx.text = sb.String()
	return fx
}

// labelledScope prints layout 1 with two more metadata rows that name the
// channel and its unit ("Source,CH1", "Vertical Units,V"). Resaved, it is
// that file as a spreadsheet saves it again: a header row of generic names
// over the columns (",,,x,y"), an empty row of delimiters after the last
// sample, and bare CR line ends.
func labelledScope(name string, resaved bool) layoutFixture {
	const dt, t0, hz = 1e-5, -1e-2, 1000.0
	fx := layoutFixture{name: name, rate: 1 / dt, names: []string{"CH1"}, units: []string{UnitVolt}, want: make([][]float32, 1)}
	eol := "\r\n"
	var sb strings.Builder
	if resaved {
		eol = "\r"
		sb.WriteString(",,,x,y" + eol)
	}
	meta := []string{fmt.Sprintf("Record Length,%d,Points", layoutRows), fmt.Sprintf("Sample Interval,%g,s", dt),
		"Trigger Point,100,Samples", "Source,CH1,", "Vertical Units,V,"}
	for i := 0; i < layoutRows; i++ {
		m := ",,"
		if i < len(meta) {
			m = meta[i]
		}
		t := t0 + float64(i)*dt
		v := fmt.Sprintf("%.4f", sineAt(hz, t))
		fx.want[0] = append(fx.want[0], cellValue(v))
		fmt.Fprintf(&sb, "%s,%.6e,%s%s", m, t, v, eol)
	}
	if resaved {
		sb.WriteString(",,,," + eol)
	}
	fx.text = sb.String()
	return fx
}

// quantisedScope prints a fast capture whose time column has too few
// digits: a preamble of quoted keys that end in "=" with the value in the
// next cell (`"Sampling Frequency (Hz)=",500000000,`), a header naming the
// channels by number ("Time,1,2"), times in seconds with 8 decimals (1e-8
// s, so each time repeats on about five rows at 2 ns per sample), a 10 MHz
// sine and a pulse train, and a last row of bare delimiters. back, when
// positive, makes the time of that row run backwards by 1e-8 s.
func quantisedScope(name string, back int) layoutFixture {
	const rate, hz = 5e8, 1e7
	fx := layoutFixture{name: name, rate: rate, names: []string{"1", "2"}, units: []string{"", ""}, want: make([][]float32, 2)}
	var sb strings.Builder
	sb.WriteString("\"Model=\",\"Bench scope 2ch\",\r\n\"Sampling Frequency (Hz)=\",500000000,\r\n\"Record Length=\",120,\r\nTime,1,2\r\n")
	for i := 0; i < layoutRows; i++ {
		t := float64(i) / rate
		if i == back {
			t -= 2e-8
		}
		s := fmt.Sprintf("%.4f", sineAt(hz, float64(i)/rate))
		p := fmt.Sprintf("%.2f", pulseAt(i, 20, 4))
		fx.want[0] = append(fx.want[0], cellValue(s))
		fx.want[1] = append(fx.want[1], cellValue(p))
		fmt.Fprintf(&sb, "%.8f,%s,%s\r\n", t, s, p)
	}
	sb.WriteString(",,\r\n")
	fx.text = sb.String()
	return fx
}

// layoutFixtures are the generated layout files, good ones first.
func layoutFixtures() []layoutFixture {
	withNames := func(fx layoutFixture, names, units []string) layoutFixture {
		fx.names, fx.units = names, units
		return fx
	}
	withWarn := func(fx layoutFixture, warn string) layoutFixture {
		fx.warn = warn
		return fx
	}
	broken := func(fx layoutFixture, place, words string) layoutFixture {
		fx.place, fx.words = place, words
		return fx
	}
	mismatch := preambleScope("preamble_disagrees.csv", "Sample interval,1.02e-05\n", "time (s),CH1 (V),CH2 (V)\n", ",", 1e-5)
	{
		// the same samples with a time column at 1e-5 s
		var sb strings.Builder
		sb.WriteString("Sample interval,1.02e-05\ntime (s),CH1 (V),CH2 (V)\n")
		for i := 0; i < layoutRows; i++ {
			fmt.Fprintf(&sb, "%.6e,%.4f,%.1f\n", float64(i)*1e-5, sineAt(1000, float64(i)*1e-5), pulseAt(i, 50, 10))
		}
		mismatch.text = sb.String()
	}
	// the increment cell's byte column in the units row
	incCol := fmt.Sprintf("line 2:%d", len("Sequence,Volt,Volt,-1.000000e-03,")+1)
	return []layoutFixture{
		metaColumnsScope("scope_metacols.csv", false, 0),
		metaColumnsScope("scope_metacols_pairs.csv", true, 0),
		withWarn(metaColumnsScope("scope_metacols_pairs_skewed.csv", true, 3e-6), "time columns disagree"),
		counterScope("scope_counter.csv", "2.000000e-06", -1),
		// header and units rows are lines 1 and 2, counter k is on line k+3 up to
		// the gap and on line k+2 after it: 101 stands on line 103
		withWarn(counterScope("scope_counter_gap.csv", "2.000000e-06", 100), "jumps from 99 to 101 at line 103"),
		withNames(preambleScope("preamble_interval.csv", "Capture,bench run 7\nSample Interval,1e-05\n\n", "CH1,CH2\n", ",", 1e-5),
			[]string{"CH1", "CH2"}, []string{"", ""}),
		withNames(preambleScope("preamble_period_semicolon.csv", "Messung;Prüfstand 3\nSampling period;2,0E-06\n", "Kanal 1 [V];Kanal 2 [V]\n", ";", 2e-6),
			[]string{"Kanal 1", "Kanal 2"}, []string{UnitVolt, UnitVolt}),
		withNames(preambleScope("preamble_rate_hz.csv", "Sample Rate (Hz),96000\n", "det,idx\n", ",", 1.0/96000),
			[]string{"det", "idx"}, []string{"", ""}),
		withNames(preambleScope("preamble_dt.txt", "# bench logger, no header\ndt = 1e-5\n", "", " ", 1e-5),
			[]string{"ch0", "ch1"}, []string{"", ""}),
		withWarn(withNames(mismatch, []string{"CH1", "CH2"}, []string{UnitVolt, UnitVolt}), "more than 1% apart"),
		labelledScope("scope_metacols_labels.csv", false),
		labelledScope("scope_metacols_resaved.csv", true),
		withWarn(quantisedScope("scope_time_quantised.csv", -1), "too few digits"),
		broken(counterScope("bad/counter_increment_zero.csv", "0", -1), incCol, `"Increment" is "0"`),
		broken(counterScope("bad/counter_increment_negative.csv", "-2.000000e-06", -1), incCol, `"Increment" is "-2.000000e-06"`),
		broken(counterScope("bad/counter_increment_text.csv", "auto", -1), incCol, `"Increment" is "auto"`),
		broken(counterScope("bad/counter_no_interval.csv", "", -1), "line 3", "sample rate is unknown"),
		// row 60 stands on line 65 (four preamble and header lines)
		broken(quantisedScope("bad/time_backwards_quantised.csv", 60), "line 65:1", "does not come after"),
	}
}

// TestFixturesUpToDateCSVLayouts regenerates the layout fixtures and their
// fuzz seeds and compares them with the committed files (or rewrites them
// with -update). The seeds are named as makeFuzzCorpus names them.
func TestFixturesUpToDateCSVLayouts(t *testing.T) {
	for _, fx := range layoutFixtures() {
		ext := filepath.Ext(fx.name)
		seed := strings.NewReplacer("/", "_", ".", "_").Replace(fx.name)
		files := map[string][]byte{
			filepath.Join(fixtureDir, fx.name):         []byte(fx.text),
			filepath.Join(fuzzDir, "FuzzDecode", seed): corpusFile([]byte(fx.text), ext),
			filepath.Join(fuzzDir, "FuzzCSV", seed):    corpusFile([]byte(fx.text)),
		}
		for path, want := range files {
			if *update {
				if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(path, want, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			if got, err := os.ReadFile(path); err != nil || !bytes.Equal(got, want) {
				t.Errorf("%s differs from what the generator writes; run go test ./capture -run TestFixturesUpToDate -update", path)
			}
		}
	}
}

// TestCSVLayoutFixtures opens every layout fixture: the rate must be the
// one the file was printed at (1/interval, to the ten digits the reader
// keeps) and every sample the printed cell of the closed form; broken
// files must fail with the file, the place and what was expected.
func TestCSVLayoutFixtures(t *testing.T) {
	for _, fx := range layoutFixtures() {
		path := filepath.Join(fixtureDir, fx.name)
		rec, err := Open(path, Options{})
		if fx.words != "" {
			if err == nil {
				t.Errorf("%s: no error, want %q", fx.name, fx.words)
				continue
			}
			msg := err.Error()
			if !strings.HasPrefix(msg, path+": csv "+fx.place) || !strings.Contains(msg, fx.words) || !strings.Contains(msg, "expected") || !strings.Contains(msg, "--rate") {
				t.Errorf("%s: %q; want the path, %q, %q and what was expected", fx.name, msg, fx.place, fx.words)
			}
			continue
		}
		if err != nil {
			t.Errorf("%s: %v", fx.name, err)
			continue
		}
		// closed form: rate = 1/interval
		if math.Abs(rec.SampleRateHz-fx.rate) > 1e-9*fx.rate {
			t.Errorf("%s: rate %.12g Hz, want %.12g", fx.name, rec.SampleRateHz, fx.rate)
		}
		switch {
		case fx.warn == "" && len(rec.Warnings) != 0:
			t.Errorf("%s: unexpected warnings %q", fx.name, rec.Warnings)
		case fx.warn != "" && (len(rec.Warnings) != 1 || !strings.Contains(rec.Warnings[0], fx.warn)):
			t.Errorf("%s: warnings %q, want one with %q", fx.name, rec.Warnings, fx.warn)
		}
		if len(rec.Channels) != len(fx.names) {
			t.Errorf("%s: %d channels, want %d", fx.name, len(rec.Channels), len(fx.names))
			continue
		}
		for c, ch := range rec.Channels {
			if ch.Name != fx.names[c] || ch.Unit != fx.units[c] {
				t.Errorf("%s: channel %d is %q [%s], want %q [%s]", fx.name, c, ch.Name, ch.Unit, fx.names[c], fx.units[c])
			}
			if len(ch.Samples) != len(fx.want[c]) {
				t.Errorf("%s: channel %d has %d samples, want %d", fx.name, c, len(ch.Samples), len(fx.want[c]))
				continue
			}
			for i, v := range ch.Samples {
				if v != fx.want[c][i] {
					t.Errorf("%s: %s[%d] = %v, want %v", fx.name, ch.Name, i, v, fx.want[c][i])
					break
				}
			}
		}
	}
}
