package capture

import (
	"fmt"
	"io"
	"math"
	"strings"
)

// The streaming pass reads the data rows in three steps, each its own
// piece: planCSV decides what every column is (time, a second time column
// to compare, a sample counter, a signal, or metadata) and makes the
// channels; csvRowReader hands out one row at a time, split into the data's
// fields; timeTrack and counterTrack follow the time and counter columns
// row by row; csvPlan.rate works out the sample rate at the end.

// csvPlan is what streamCSV does with each field of a row.
type csvPlan struct {
	shape      csvShape
	given      bool      // the rate comes with the command
	role       []int     // per field: a channel number, or roleSkip ...
	scale      []float64 // per field: factor to volts (or 1)
	timeScale  []float64 // per time field: seconds per unit
	timeCol    int       // -1 when none
	counterCol int       // -1 when none
	stated     *csvMeta  // the sample interval or rate the file states
	badMeta    *csvMeta  // the first unusable statement
	metaWarn   []string  // statements that disagree
	rateSource string    // what the rate comes from, for messages
}

// planCSV finds the time column (a time name or unit, or else the first
// column of a file without a header or with a generic spreadsheet header,
// when it is a linear ramp), a sample counter, and the signals; it makes
// the Recording's channels, their samples reserved.
func planCSV(shape csvShape, size int64, opts Options) (*csvPlan, *Recording, error) {
	p := &csvPlan{shape: shape, given: opts.SampleRateHz > 0, timeCol: -1, counterCol: -1}
	data := shape.dataCols
	var checkCols []int
	for _, i := range data {
		if isTimeName(shape.names[i]) {
			if p.timeCol < 0 {
				p.timeCol = i
			} else {
				checkCols = append(checkCols, i)
			}
		}
	}
	if p.timeCol < 0 {
		// no time name: the first column with a time unit ("X (s)")
		for _, i := range data {
			if u := strings.TrimSpace(shape.units[i]); u != "" && timeUnitSeconds(u) != 0 {
				p.timeCol = i
				break
			}
		}
	}
	p.stated, p.badMeta, p.metaWarn = resolveMeta(shape.meta)
	if p.timeCol < 0 && len(data) >= 2 {
		first := data[0]
		f := shape.facts[first]
		generic := shape.headerLine > 0 && axisName(shape.names[first]) && shape.units[first] == "" && f.rows >= 3
		switch {
		case isCounterColumn(shape.names[first], shape.units[first], f):
			p.counterCol = first
		case shape.headerLine == 0 && !p.given && (f.rising || f.ramp || p.stated == nil),
			generic && !p.given && (f.even || f.ramp):
			// Without a header (or under a generic name a spreadsheet
			// gave it), the first column is time, unless it does not rise
			// and the file states its rate. Several channels may each
			// carry their own time column: time, value, time, value.
			p.timeCol = first
			checkCols = pairedTimeColumns(shape)
		}
	}
	if !p.given && p.timeCol < 0 {
		if err := p.statedRateSource(); err != nil {
			return nil, nil, err
		}
	}
	p.role = make([]int, shape.fields)
	p.timeScale = make([]float64, shape.fields)
	p.scale = make([]float64, shape.fields)
	for i := range p.role {
		p.role[i] = roleSkip
	}
	for _, i := range append([]int{p.timeCol}, checkCols...) {
		if i < 0 {
			continue
		}
		p.role[i] = roleTimeCheck
		p.timeScale[i] = timeUnitSeconds(shape.units[i])
		if p.timeScale[i] == 0 {
			return nil, nil, &UnsupportedError{Format: "csv", Place: AtLine(shape.headerLine, 0), Feature: fmt.Sprintf("time unit %q", shape.units[i]), Expected: "s, ms, us, ns or min"}
		}
	}
	if p.timeCol >= 0 {
		p.role[p.timeCol] = roleTime
	}
	if p.counterCol >= 0 {
		p.role[p.counterCol] = roleCounter
	}
	var signals []int
	for _, i := range data {
		if p.role[i] == roleSkip {
			signals = append(signals, i)
		}
	}
	if len(signals) < 1 {
		return nil, nil, &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: "rows hold only a time column", Expected: "at least one signal column"}
	}
	if len(signals) > MaxRawChannels {
		return nil, nil, &UnsupportedError{Format: "csv", Place: AtLine(shape.dataLine, 0), Feature: fmt.Sprintf("%d columns", len(signals)), Expected: fmt.Sprintf("at most %d signal columns", MaxRawChannels)}
	}
	names, units := labelSignals(shape, signals)
	rec := &Recording{Channels: make([]Channel, 0, len(signals)), Source: Source{Format: "csv", SampleType: "text"}}
	// Reserve the samples from the size of the data and the sniffed rows'
	// length, so the slices grow at most once.
	maxRows := size/int64(2*shape.fields) + 1 // no row is shorter than "1,2\n"
	estRows := maxRows
	if shape.avgRowBytes > 0 {
		estRows = min(maxRows, int64(float64(size)/shape.avgRowBytes*1.02)+16)
	}
	if opts.summary != nil {
		estRows = 0 // a streamed inspect keeps no samples
	}
	for k, i := range signals {
		p.scale[i] = 1
		name, unit := names[k], units[k]
		if name == "" {
			name = fmt.Sprintf("ch%d", len(rec.Channels))
		}
		if f, ok := voltUnits[strings.ToLower(unit)]; ok {
			p.scale[i], unit = f, UnitVolt
		}
		p.role[i] = len(rec.Channels)
		rec.Channels = append(rec.Channels, Channel{Name: name, Unit: unit, Samples: make([]float32, 0, estRows)})
	}
	return p, rec, nil
}

// statedRateSource checks, for a file without a time column, that it
// states a usable rate.
func (p *csvPlan) statedRateSource() error {
	shape := p.shape
	if p.badMeta != nil {
		return &FormatError{Format: "csv", Place: p.badMeta.place(), Problem: fmt.Sprintf("the sample %s %q is %q, not a positive number in a known unit", kindName(p.badMeta.kind), p.badMeta.key, p.badMeta.raw),
			Expected: p.badMeta.expected()}
	}
	switch {
	case p.stated != nil:
		p.rateSource = "the stated " + kindName(p.stated.kind) + " " + p.stated.describe()
		return nil
	case p.counterCol >= 0:
		return &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: fmt.Sprintf("%s counts samples (0, 1, 2 ...) and the file states no sample interval or rate, so the sample rate is unknown", columnName(shape, p.counterCol)),
			Expected: "a line such as \"Sample interval,1e-05\" or \"Sample rate,96000\" in the file, or the rate given with the command (--rate HZ)", Err: ErrNoSampleRate}
	}
	return &FormatError{Format: "csv", Place: AtLine(max(shape.headerLine, 1), 0), Problem: "no time column and no sample rate", Expected: "a column named time (with its unit, e.g. \"time (s)\"), a line such as \"Sample interval,1e-05\", or a sample rate given with the command", Err: ErrNoSampleRate}
}

// labelSignals gives the name and unit of each signal column: the
// header's, with name and unit statements of the metadata filling in what
// the header leaves out (csvmeta.go).
func labelSignals(shape csvShape, signals []int) (names, units []string) {
	names, units = make([]string, len(signals)), make([]string, len(signals))
	for k, i := range signals {
		names[k], units[k] = shape.names[i], shape.units[i]
		if genericName(names[k]) {
			names[k] = ""
		}
	}
	for _, l := range shape.labels {
		k := -1
		switch {
		case l.field < 0 && len(signals) == 1:
			k = 0
		case l.field >= 0:
			for j, i := range signals {
				if i > l.field {
					k = j
					break
				}
			}
		}
		switch {
		case k < 0:
		case l.kind == labelName && names[k] == "":
			names[k] = l.value
		case l.kind == labelUnit && units[k] == "":
			units[k] = l.value
		}
	}
	for k, i := range signals {
		if names[k] == "" && !genericName(shape.names[i]) {
			names[k] = shape.names[i]
		}
		if names[k] == "" && shape.names[i] != "" {
			names[k] = shape.names[i] // a generic name is better than none
		}
	}
	return names, units
}

// genericName reports a header cell that names no signal: empty, one
// letter, or the "Column 3", "Field3", "Unnamed: 2" a spreadsheet or data
// library writes over columns it has no name for.
func genericName(name string) bool {
	n := strings.ToLower(strings.TrimSpace(name))
	if len(n) <= 1 {
		return len(n) == 0 || n[0] >= 'a' && n[0] <= 'z'
	}
	for _, w := range []string{"column", "col", "field", "unnamed", "var", "series"} {
		if rest, ok := strings.CutPrefix(n, w); ok {
			rest = strings.TrimLeft(rest, " _:#.")
			return strings.Trim(rest, "0123456789") == ""
		}
	}
	return false
}

// axisName reports a header cell a spreadsheet writes over a column it
// has no name for, or over the horizontal axis of a chart: empty, "x", or
// generic names such as "Column 1". Under such a name a linear ramp is the
// time, not a signal.
func axisName(name string) bool {
	n := strings.ToLower(strings.TrimSpace(name))
	return n == "x" || genericName(n) && len(n) != 1
}

// csvRowReader reads the data rows one at a time, each split into the
// data's fields, much as encoding/csv's Reader does: it keeps the record,
// its fields and the line it starts on.
type csvRowReader struct {
	sc     *csvScanner
	shape  *csvShape
	text   []byte // the record
	line   int    // its first line
	fields [][]byte
	cols   []int // 1-based byte column of each field in text
}

// next reads the next row; ok is false at the end of the data.
func (r *csvRowReader) next() (ok bool, err error) {
	text, line, _, ok, err := r.sc.record()
	if err != nil || !ok {
		return false, err
	}
	r.text, r.line = text, line
	r.fields, r.cols, err = splitRecord(text, r.shape.delim, r.fields, r.cols)
	if err != nil {
		fe := err.(*FormatError)
		fe.Place = cellPlace(text, line, fe.Place.Column)
		return false, fe
	}
	if r.shape.trailingDrop || len(r.fields) == r.shape.fields+1 {
		r.fields = dropTrailingEmpty(r.fields, r.shape.delim)
	}
	if len(r.fields) != r.shape.fields {
		return false, &FormatError{Format: "csv", Place: AtLine(line, 0), Problem: fmt.Sprintf("row has %d fields, the rows before it have %d", len(r.fields), r.shape.fields),
			Expected: fmt.Sprintf("%d %s-separated fields in every row", r.shape.fields, delimName(r.shape.delim))}
	}
	return true, nil
}

// place is where field i of the row stands.
func (r *csvRowReader) place(i int) Place { return cellPlace(r.text, r.line, r.cols[i]) }

// number reads field i as a number.
func (r *csvRowReader) number(i int) (float64, error) {
	v, ok := parseNumber(r.fields[i], r.shape.decimalComma)
	if !ok {
		expected := "a decimal number such as -1.25e-3"
		if r.shape.decimalComma {
			expected += " or -1,25e-3"
		}
		return 0, &FormatError{Format: "csv", Place: r.place(i), Problem: fmt.Sprintf("cell %q in %s is not a number", clip(string(r.fields[i]), 40), columnName(*r.shape, i)), Expected: expected}
	}
	return v, nil
}

// timeTrack follows the time column row by row. Besides the steps it keeps
// the range of slopes (lo, hi) of every straight line that each printed
// time lies within half its last digit of, together with the first: when
// that range is not empty at the end, the column is a linear ramp rounded
// to the digits printed, even where neighbouring rows show the same time.
type timeTrack struct {
	rows             int
	t0, prev         float64
	q0               float64 // half the printing step of the first time
	minStep, maxStep float64
	lo, hi           float64
	repeats          int // rows with the time of the row before
	repeatLine       int // the first of them
	lastCell         []byte
	// a second time column, compared with the first
	checkDiff             float64
	checkLine, checkField int
	guessed               bool // the time column was taken without a name
}

// add takes the time t (seconds) of the next row, printed as cell in units
// of scale seconds.
func (tt *timeTrack) add(t float64, cell []byte, scale float64, place Place) error {
	half := 0.5 * printQuantum(cell) * scale * (1 + 1e-9)
	tt.lastCell = append(tt.lastCell[:0], cell...)
	if tt.rows == 0 {
		tt.t0, tt.prev, tt.q0 = t, t, half
		tt.lo, tt.hi = math.Inf(-1), math.Inf(1)
		tt.rows = 1
		return nil
	}
	step := t - tt.prev
	if !(step >= 0) {
		return &FormatError{Format: "csv", Place: place, Problem: fmt.Sprintf("time %g s does not come after the previous row's %g s", t, tt.prev), Expected: timeExpectation(tt.guessed)}
	}
	if step == 0 {
		if tt.repeats == 0 {
			tt.repeatLine = place.Line
		}
		tt.repeats++
	}
	if tt.rows == 1 || step < tt.minStep {
		tt.minStep = step
	}
	if tt.rows == 1 || step > tt.maxStep {
		tt.maxStep = step
	}
	// the scale of the times bounds how finely a float64 holds them
	tol := half + tt.q0 + 1e-12*math.Abs(t)
	n := float64(tt.rows)
	tt.lo = math.Max(tt.lo, (t-tt.t0-tol)/n)
	tt.hi = math.Min(tt.hi, (t-tt.t0+tol)/n)
	tt.prev = t
	tt.rows++
	return nil
}

// ramp reports whether the times are a linear ramp rounded to their digits.
func (tt *timeTrack) ramp() bool { return tt.rows >= 2 && tt.lo <= tt.hi && tt.hi > 0 }

// counterTrack follows a sample-counter column and counts its jumps.
type counterTrack struct {
	rows           int
	prev           float64
	gaps, gapLine  int
	gapFrom, gapTo float64
	shape          *csvShape
	field          int
}

// add takes the counter v of the next row.
func (ct *counterTrack) add(v float64, cell []byte, place Place) error {
	const expected = "a sample counter rising by 1 from row to row"
	if v != math.Trunc(v) || math.Abs(v) > 1<<53 {
		return &FormatError{Format: "csv", Place: place, Problem: fmt.Sprintf("sample counter %q in %s is not a whole number", clip(string(cell), 40), columnName(*ct.shape, ct.field)), Expected: expected}
	}
	if ct.rows > 0 {
		step := v - ct.prev
		if !(step > 0) {
			return &FormatError{Format: "csv", Place: place, Problem: fmt.Sprintf("sample counter %.0f does not come after the previous row's %.0f", v, ct.prev), Expected: expected}
		}
		if step != 1 {
			if ct.gaps == 0 {
				ct.gapLine, ct.gapFrom, ct.gapTo = place.Line, ct.prev, v
			}
			ct.gaps++
		}
	}
	ct.prev = v
	ct.rows++
	return nil
}

// streamCSV reads the data rows described by shape from r, which starts at
// the first data row.
// csvSummaryBlock is how many values of one channel a streamed inspect
// gathers before handing them to the summarizer.
const csvSummaryBlock = 4096

func streamCSV(r io.Reader, size int64, shape csvShape, opts Options) (*Recording, error) {
	p, rec, err := planCSV(shape, size, opts)
	if err != nil {
		return nil, err
	}
	rows := &csvRowReader{sc: &csvScanner{r: r, buf: make([]byte, readBufferBytes), line: shape.dataLine, eol: shape.eol}, shape: &shape}
	tt := &timeTrack{guessed: p.timeCol >= 0 && axisName(shape.names[p.timeCol]) && shape.units[p.timeCol] == ""}
	ct := &counterTrack{shape: &shape, field: p.counterCol}
	n, nonFinite := 0, 0
	nextProgress := int64(1 << 20)
	// Inspect streams: the values go to the summarizer a block at a time
	// and the recording keeps no samples.
	sum := opts.summary
	var pending [][]float32
	if sum != nil {
		sum.start(len(rec.Channels), inspectRoleSamples)
		pending = make([][]float32, len(rec.Channels))
		for c := range pending {
			pending[c] = make([]float32, 0, csvSummaryBlock)
		}
	}
	for {
		ok, err := rows.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		var tRow float64
		for i, cell := range rows.fields {
			role := p.role[i]
			if role == roleSkip {
				continue
			}
			v, err := rows.number(i)
			if err != nil {
				return nil, err
			}
			if role < 0 && p.given {
				continue // a given rate overrides the time and counter columns
			}
			switch role {
			case roleTime:
				tRow = v * p.timeScale[i]
				err = tt.add(tRow, cell, p.timeScale[i], rows.place(i))
			case roleTimeCheck:
				if d := math.Abs(v*p.timeScale[i] - tRow); d > tt.checkDiff || math.IsNaN(d) && tt.checkLine == 0 {
					tt.checkDiff, tt.checkLine, tt.checkField = d, rows.line, i
				}
			case roleCounter:
				err = ct.add(v, cell, rows.place(i))
			default:
				x := float32(v * p.scale[i])
				if x-x != 0 { // NaN, ±Inf, or beyond float32
					nonFinite++
					x = 0
				}
				if sum != nil {
					pending[role] = append(pending[role], x)
					if len(pending[role]) == csvSummaryBlock {
						sum.add(role, pending[role])
						pending[role] = pending[role][:0]
					}
					break
				}
				c := &rec.Channels[role]
				c.Samples = append(c.Samples, x)
			}
			if err != nil {
				return nil, err
			}
		}
		n++
		if opts.Progress != nil && rows.sc.offset >= nextProgress {
			opts.Progress(float64(rows.sc.offset) / float64(size))
			nextProgress += 1 << 20
		}
	}
	if n == 0 {
		return nil, &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: "no data rows", Expected: "rows of numbers after the header"}
	}
	if sum != nil {
		for c, x := range pending {
			sum.add(c, x)
		}
		sum.frames = n
	}
	if err := p.rate(rec, tt, ct, n, opts); err != nil {
		return nil, err
	}
	if nonFinite > 0 {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("%d cells were NaN, infinite or beyond the float32 range and were set to 0", nonFinite))
	}
	if opts.Progress != nil {
		opts.Progress(1)
	}
	return rec, nil
}

// rate sets the sample rate of rec from the command, the time column or
// the file's statements, with warnings about what disagrees.
func (p *csvPlan) rate(rec *Recording, tt *timeTrack, ct *counterTrack, rows int, opts Options) error {
	shape := p.shape
	ratePlace := AtLine(shape.dataLine, 0)
	metaWarn := p.metaWarn
	switch {
	case p.given:
		rec.SampleRateHz = opts.SampleRateHz
		metaWarn = nil
	case p.timeCol >= 0 && rows >= 2:
		if err := p.timeRate(rec, tt); err != nil {
			return err
		}
		metaWarn = nil // the time column decides
	case p.timeCol >= 0:
		return &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: "one data row cannot give a sample rate", Expected: "two or more rows, or a sample rate given with the command (--rate HZ)"}
	default:
		// checked before reading: the file states its rate
		rec.SampleRateHz = tenDigits(p.stated.hz)
		ratePlace = p.stated.place()
	}
	rec.Warnings = append(rec.Warnings, metaWarn...)
	if ct.gaps > 0 {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("the sample counter in %s jumps from %.0f to %.0f at line %d (%s in all: lost or skipped samples); samples are treated as evenly spaced at %.6g Hz",
			columnName(shape, p.counterCol), ct.gapFrom, ct.gapTo, ct.gapLine, plural(ct.gaps, "jump"), rec.SampleRateHz))
	}
	if !(rec.SampleRateHz >= MinSampleRateHz) || rec.SampleRateHz > MaxSampleRateHz || math.IsInf(rec.SampleRateHz, 0) {
		return &FormatError{Format: "csv", Place: ratePlace, Problem: fmt.Sprintf("%s gives a sample rate of %g Hz", p.rateSource, rec.SampleRateHz), Expected: fmt.Sprintf("a rate of at least %g Hz and at most %g Hz", float64(MinSampleRateHz), MaxSampleRateHz)}
	}
	return nil
}

// timeRate takes the rate from the time column: the mean step over the
// span, or, for a ramp printed with so few digits that rows repeat, the
// stated interval when it fits the ramp.
func (p *csvPlan) timeRate(rec *Recording, tt *timeTrack) error {
	shape := p.shape
	p.rateSource = "the time column"
	span := tt.prev - tt.t0
	if !(span > 0) {
		return &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: fmt.Sprintf("the time column holds %g s in all %d rows", tt.t0, tt.rows), Expected: timeExpectation(true)}
	}
	meanStep := span / float64(tt.rows-1)
	rec.SampleRateHz = tenDigits(1 / meanStep)
	timeScale := p.timeScale[p.timeCol]
	quantum := printQuantum(tt.lastCell) * timeScale
	statedFits := p.stated != nil && 1/p.stated.hz >= tt.lo && 1/p.stated.hz <= tt.hi
	switch {
	case tt.repeats > 0 && tt.ramp():
		source := fmt.Sprintf("its span, %.6g s over %d rows", span, tt.rows)
		if statedFits {
			rec.SampleRateHz = tenDigits(p.stated.hz)
			source = "the stated " + kindName(p.stated.kind) + " " + p.stated.describe()
		}
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("the time column is printed with too few digits for its rate: %s repeat the time of the row before (the first at line %d); it is read as an even ramp at %.10g Hz, from %s",
			plural(tt.repeats, "row"), tt.repeatLine, rec.SampleRateHz, source))
	default:
		// Steps that differ from the mean by more than 1 % are reported,
		// unless the difference is only the rounding of the printed
		// times. The last cell shows the resolution (a leading "0" would
		// not); half a step is always reported, since that is a lost or
		// doubled sample whatever the printing.
		rounding := math.Min(1.5*quantum, 0.5*meanStep)
		tolerance := math.Max(0.01*meanStep, rounding)
		if tt.maxStep-meanStep > tolerance || meanStep-tt.minStep > tolerance {
			rec.Warnings = append(rec.Warnings, fmt.Sprintf("time steps range from %.6g s to %.6g s around a mean of %.6g s (more than 1%% uneven); samples are treated as evenly spaced at %.6g Hz",
				tt.minStep, tt.maxStep, meanStep, rec.SampleRateHz))
		}
		if p.stated != nil && math.Abs(p.stated.hz-rec.SampleRateHz) > 0.01*rec.SampleRateHz {
			rec.Warnings = append(rec.Warnings, fmt.Sprintf("the file states a sample %s of %s, which gives %.10g Hz, but the time column gives %.10g Hz (more than 1%% apart); the time column is used",
				kindName(p.stated.kind), p.stated.describe(), p.stated.hz, rec.SampleRateHz))
		}
	}
	// Time columns printed alike differ by at most their last digit; a
	// quarter of a step is always reported.
	checkTolerance := math.Max(0.01*meanStep, math.Min(quantum, 0.25*meanStep))
	if tt.checkLine > 0 && !(tt.checkDiff <= checkTolerance) {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("the time columns disagree: %s differs from %s by up to %.6g s (line %d), more than 1%% of a step; the first time column is used",
			columnName(shape, tt.checkField), columnName(shape, p.timeCol), tt.checkDiff, tt.checkLine))
	}
	if p.badMeta != nil {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("the sample %s %s is not a positive number in a known unit and was ignored; the time column gives the rate", kindName(p.badMeta.kind), p.badMeta.describe()))
	}
	return nil
}
