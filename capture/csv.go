package capture

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// CSV reading happens in two passes over the start of the file and one
// streaming pass over the rest:
//
//  1. sniff: the first sniffCSVBytes are split into lines; the delimiter is
//     the candidate under which the last lines of that sample are all
//     numbers with the same field count (the most fields wins).
//  2. the first run of numeric rows starts the data; the non-numeric row
//     before it is the header (and a units row may sit between the two);
//     anything before that is preamble.
//  3. the data rows are streamed from a fixed-size buffer straight into
//     float32 slices.

// sniffCSVBytes is how much of a text file is looked at to find its shape.
const sniffCSVBytes = 1 << 16

// maxCSVLine is the longest line the reader accepts.
const maxCSVLine = 1 << 22

// whitespaceDelim marks fields separated by runs of spaces and tabs.
const whitespaceDelim = 0

// csvShape is what sniffing found out about a text capture.
type csvShape struct {
	delim        byte // ',', ';', '\t' or whitespaceDelim
	decimalComma bool
	fields       int      // per data row
	dataLine     int      // 1-based line of the first data row
	dataOffset   int64    // byte offset of the first data row
	names        []string // per field, "" when there is no header
	units        []string // per field
	headerLine   int      // 0 when there is no header
	trailingDrop bool     // every row ends in a delimiter: drop the empty last field
	avgRowBytes  float64  // mean length of the sniffed data rows, 0 if unknown
}

// delimName names a delimiter for messages.
func delimName(d byte) string {
	switch d {
	case ',':
		return "comma"
	case ';':
		return "semicolon"
	case '\t':
		return "tab"
	}
	return "whitespace"
}

// readCSV decodes delimited text of the given size.
func readCSV(r io.ReaderAt, size int64, opts Options) (*Recording, error) {
	head := make([]byte, min(size, sniffCSVBytes))
	if n, err := r.ReadAt(head, 0); err != nil && !(errors.Is(err, io.EOF) && n == len(head)) {
		return nil, &FormatError{Format: "csv", Place: AtByte(int64(n)), Problem: "cannot read: " + err.Error()}
	}
	shape, err := sniffCSV(head, int64(len(head)) == size)
	if err != nil {
		return nil, err
	}
	return streamCSV(io.NewSectionReader(r, shape.dataOffset, size-shape.dataOffset), size-shape.dataOffset, shape, opts)
}

// sampleLine is one record of the sniffed sample: one line, or several
// when a quoted field holds line breaks.
type sampleLine struct {
	text   []byte
	offset int64 // of the record's first byte
	line   int   // 1-based line of its first line
}

// splitSampleLines cuts head into non-blank records the way the streaming
// pass will; when head is not the whole file its last, possibly cut,
// record is dropped.
func splitSampleLines(head []byte, complete bool) []sampleLine {
	off := 0
	if bytes.HasPrefix(head, []byte{0xEF, 0xBB, 0xBF}) { // UTF-8 byte order mark
		off = 3
	}
	sc := &csvScanner{r: bytes.NewReader(head[off:]), buf: make([]byte, len(head)+1), line: 1, offset: int64(off)}
	var lines []sampleLine
	for {
		text, line, recOff, ok, err := sc.record()
		if err != nil || !ok {
			// an unclosed quote at the end of the sample: the streaming
			// pass reports it, or finds the quote closed further on
			break
		}
		lines = append(lines, sampleLine{append([]byte(nil), text...), recOff, line})
	}
	if !complete && len(lines) > 0 && !bytes.HasSuffix(head, []byte{'\n'}) {
		lines = lines[:len(lines)-1]
	}
	return lines
}

// sniffCSV finds the delimiter, header and first data row.
func sniffCSV(head []byte, complete bool) (csvShape, error) {
	lines := splitSampleLines(head, complete)
	// Blank lines carry no shape.
	var idx []int
	for i, l := range lines {
		if len(bytes.TrimSpace(l.text)) > 0 {
			idx = append(idx, i)
		}
	}
	if len(idx) == 0 {
		return csvShape{}, &FormatError{Format: "csv", Place: AtLine(1, 0), Problem: "no rows of text found", Expected: "rows of numbers separated by commas, semicolons, tabs or spaces"}
	}
	// The delimiter is the candidate under which the most lines are rows of
	// numbers with one field count (ties go to more fields, then to the
	// order comma, semicolon, tab, whitespace).
	best, bestScore := csvShape{fields: -1}, 0
	for _, d := range []byte{',', ';', '\t', whitespaceDelim} {
		decimalComma := d != ','
		counts := map[int]int{}
		for _, i := range idx {
			fields, _, err := splitRecord(lines[i].text, d, nil, nil)
			if err != nil {
				continue
			}
			fields = dropTrailingEmpty(fields, d)
			if allNumbers(fields, decimalComma) {
				counts[len(fields)]++
			}
		}
		for n, score := range counts {
			if score > bestScore || score == bestScore && n > best.fields {
				best, bestScore = csvShape{delim: d, decimalComma: decimalComma, fields: n}, score
			}
		}
	}
	if bestScore == 0 {
		return csvShape{}, &FormatError{Format: "csv", Place: AtLine(lines[idx[0]].line, 0), Problem: fmt.Sprintf("no line in the first %d bytes is a row of numbers (first line %q)", len(head), clip(string(lines[idx[0]].text), 60)),
			Expected: "rows of numbers separated by commas, semicolons, tabs or spaces"}
	}
	shape := best
	split := func(i int) [][]byte {
		fields, _, err := splitRecord(lines[i].text, shape.delim, nil, nil)
		if err != nil {
			return nil
		}
		return dropTrailingEmpty(fields, shape.delim)
	}
	numbers := func(fields [][]byte) int {
		n := 0
		for _, f := range fields {
			if _, ok := parseNumber(f, shape.decimalComma); ok {
				n++
			}
		}
		return n
	}
	// The data start at the first run of numeric rows with the data's field
	// count (three rows, or fewer at the end of the sample) ...
	numericRow := func(i int) bool {
		f := split(i)
		return len(f) == shape.fields && numbers(f) == len(f)
	}
	start := -1
	for k := range idx {
		run := min(3, len(idx)-k)
		good := true
		for m := 0; m < run; m++ {
			if !numericRow(idx[k+m]) {
				good = false
				break
			}
		}
		if good {
			start = k
			break
		}
	}
	if start < 0 {
		for k := range idx {
			if numericRow(idx[k]) {
				start = k
				break
			}
		}
	}
	// ... or earlier, at damaged data rows just before that run: rows with
	// the data's field count holding some numbers, or rows of numbers with
	// another field count. Those are read as data so that the error names
	// them, rather than being skipped as preamble.
	for start > 0 {
		f := split(idx[start-1])
		if f == nil && shape.delim != whitespaceDelim {
			// a quoting error: judge the row by its bare delimiter split
			f = bytes.Split(lines[idx[start-1]].text, []byte{shape.delim})
		}
		nums := numbers(f)
		if len(f) == 0 || !(len(f) == shape.fields && nums > 0 || nums == len(f)) {
			break
		}
		start--
	}
	first := idx[start]
	shape.dataLine = lines[first].line
	shape.dataOffset = lines[first].offset
	if fields, _, _ := splitRecord(lines[first].text, shape.delim, nil, nil); len(fields) == shape.fields+1 && len(bytes.TrimSpace(fields[shape.fields])) == 0 {
		shape.trailingDrop = true
	}
	if last := lines[len(lines)-1]; len(lines) > first+1 {
		shape.avgRowBytes = float64(last.offset-lines[first].offset) / float64(len(lines)-1-first)
	}
	// Header: the non-blank row just before the data, with as many fields.
	header := func(k int) []string {
		if k < 0 {
			return nil
		}
		fields, _, err := splitRecord(lines[idx[k]].text, shape.delim, nil, nil)
		if err != nil {
			return nil
		}
		fields = dropTrailingEmpty(fields, shape.delim)
		if len(fields) != shape.fields || numbers(fields) > 0 {
			return nil
		}
		out := make([]string, len(fields))
		for i, f := range fields {
			out[i] = strings.TrimSpace(string(f))
		}
		return out
	}
	shape.names = make([]string, shape.fields)
	shape.units = make([]string, shape.fields)
	if h := header(start - 1); h != nil {
		if u := header(start - 2); u != nil && looksLikeUnits(h) {
			// names row, then a units row
			copy(shape.names, u)
			for i := range h {
				shape.units[i] = strings.Trim(h[i], "()[] ")
			}
			shape.headerLine = lines[idx[start-2]].line
		} else {
			for i, cell := range h {
				shape.names[i], shape.units[i] = splitNameUnit(cell)
			}
			shape.headerLine = lines[idx[start-1]].line
		}
	}
	return shape, nil
}

// knownUnits are unit cells a units row may hold without brackets.
var knownUnits = map[string]bool{
	"s": true, "sec": true, "second": true, "seconds": true, "ms": true, "us": true, "µs": true, "μs": true, "ns": true, "min": true,
	"v": true, "mv": true, "uv": true, "µv": true, "μv": true, "kv": true, "volt": true, "volts": true,
	"a": true, "ma": true, "ua": true, "µa": true, "hz": true, "khz": true, "mm": true, "cm": true, "m": true,
	"deg": true, "°": true, "%": true, "counts": true, "fs": true, "w": true, "mw": true, "-": true,
}

// looksLikeUnits reports a row of unit cells: "(s)", "[V]", "mV", "Volt".
func looksLikeUnits(row []string) bool {
	seen := false
	for _, c := range row {
		c = strings.TrimSpace(c)
		if c == "" {
			continue
		}
		seen = true
		bracketed := len(c) >= 2 && (c[0] == '(' && c[len(c)-1] == ')' || c[0] == '[' && c[len(c)-1] == ']')
		if !bracketed && !knownUnits[strings.ToLower(c)] {
			return false
		}
	}
	return seen
}

// splitNameUnit splits "CH1 (V)", "CH1 [V]" or "CH1/V" into name and unit.
func splitNameUnit(cell string) (name, unit string) {
	cell = strings.TrimSpace(cell)
	for _, p := range [][2]string{{"(", ")"}, {"[", "]"}} {
		if strings.HasSuffix(cell, p[1]) {
			if i := strings.LastIndex(cell, p[0]); i > 0 {
				return strings.TrimSpace(cell[:i]), strings.TrimSpace(cell[i+1 : len(cell)-1])
			}
		}
	}
	if i := strings.LastIndex(cell, "/"); i > 0 && i < len(cell)-1 && len(cell)-i <= 4 {
		return strings.TrimSpace(cell[:i]), strings.TrimSpace(cell[i+1:])
	}
	return cell, ""
}

// timeNames are header names of a time column.
var timeNames = map[string]bool{"time": true, "t": true, "s": true, "sec": true, "secs": true, "second": true, "seconds": true, "timestamp": true, "x-axis": true, "zeit": true, "temps": true, "tiempo": true}

// isTimeName reports whether a header cell names a time column.
func isTimeName(name string) bool {
	n := strings.ToLower(strings.TrimSpace(name))
	return timeNames[n] || strings.HasPrefix(n, "time")
}

// timeUnitSeconds is the length of one time unit in seconds, 0 if unknown.
func timeUnitSeconds(unit string) float64 {
	switch strings.ToLower(strings.TrimSpace(unit)) {
	case "", "s", "sec", "secs", "second", "seconds":
		return 1
	case "ms":
		return 1e-3
	case "us", "µs", "μs":
		return 1e-6
	case "ns":
		return 1e-9
	case "min":
		return 60
	}
	return 0
}

// voltUnits are signal units converted to volts on reading.
var voltUnits = map[string]float64{"v": 1, "mv": 1e-3, "uv": 1e-6, "µv": 1e-6, "μv": 1e-6, "kv": 1e3, "volt": 1, "volts": 1}

// dropTrailingEmpty removes the empty field a delimiter at the end of a row
// leaves.
func dropTrailingEmpty(fields [][]byte, delim byte) [][]byte {
	if delim != whitespaceDelim && len(fields) > 1 && len(bytes.TrimSpace(fields[len(fields)-1])) == 0 {
		return fields[:len(fields)-1]
	}
	return fields
}

// allNumbers reports whether every field is a number.
func allNumbers(fields [][]byte, decimalComma bool) bool {
	for _, f := range fields {
		if _, ok := parseNumber(f, decimalComma); !ok {
			return false
		}
	}
	return true
}

func clip(s string, n int) string {
	if len(s) > n {
		return s[:n] + "..."
	}
	return s
}

// splitRecord splits one record into fields (RFC 4180 section 2: fields may
// be enclosed in double quotes, a quote inside is doubled, and a quoted
// field may hold delimiters and line breaks). It appends to fields and
// cols (the 1-based byte column where each field starts) and returns them.
// Unquoted fields are slices of rec; quoted ones with doubled quotes are
// copied.
func splitRecord(rec []byte, delim byte, fields [][]byte, cols []int) ([][]byte, []int, error) {
	fields, cols = fields[:0], cols[:0]
	i := 0
	if delim == whitespaceDelim {
		for i < len(rec) && (rec[i] == ' ' || rec[i] == '\t') {
			i++
		}
		if i == len(rec) {
			return fields, cols, nil
		}
	}
	for {
		cols = append(cols, i+1)
		if i < len(rec) && rec[i] == '"' {
			// quoted field
			j := i + 1
			var unq []byte
			doubled := false
			for {
				k := bytes.IndexByte(rec[j:], '"')
				if k < 0 {
					return fields, cols, &csvSyntaxError{col: i + 1, msg: "quoted field does not close", expected: "a closing double quote (RFC 4180 section 2, rule 5)"}
				}
				if j+k+1 < len(rec) && rec[j+k+1] == '"' {
					if !doubled {
						unq = append([]byte(nil), rec[i+1:j+k+1]...)
						doubled = true
					} else {
						unq = append(unq, rec[j:j+k+1]...)
					}
					j += k + 2
					continue
				}
				if doubled {
					unq = append(unq, rec[j:j+k]...)
				} else {
					unq = rec[i+1 : j+k]
				}
				j += k + 1
				break
			}
			fields = append(fields, unq)
			i = j
			if delim == whitespaceDelim {
				for i < len(rec) && (rec[i] == ' ' || rec[i] == '\t') {
					i++
				}
				if i == len(rec) {
					return fields, cols, nil
				}
				continue
			}
			if i == len(rec) {
				return fields, cols, nil
			}
			if rec[i] != delim {
				return fields, cols, &csvSyntaxError{col: i + 1, msg: fmt.Sprintf("%q after a closing quote", rec[i]), expected: "the " + delimName(delim) + " delimiter or the end of the row (RFC 4180 section 2, rule 7)"}
			}
			i++
			continue
		}
		if delim == whitespaceDelim {
			j := i
			for j < len(rec) && rec[j] != ' ' && rec[j] != '\t' {
				j++
			}
			fields = append(fields, rec[i:j])
			for j < len(rec) && (rec[j] == ' ' || rec[j] == '\t') {
				j++
			}
			if j == len(rec) {
				return fields, cols, nil
			}
			i = j
			continue
		}
		k := bytes.IndexByte(rec[i:], delim)
		if k < 0 {
			fields = append(fields, rec[i:])
			return fields, cols, nil
		}
		fields = append(fields, rec[i:i+k])
		i += k + 1
	}
}

// csvSyntaxError is a quoting error inside one record.
type csvSyntaxError struct {
	col      int
	msg      string
	expected string
}

func (e *csvSyntaxError) Error() string { return e.msg }

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// parseNumber reads a decimal number such as "-1.25e-3", allowing spaces
// around it and, when decimalComma is set, "1,25" for 1.25. The common case
// is computed exactly without allocating (Clinger's fast path: a mantissa
// below 2^53 times an exact power of ten, W. D. Clinger, "How to read
// floating point numbers accurately", PLDI 1990); anything else goes to
// strconv.ParseFloat.
func parseNumber(b []byte, decimalComma bool) (float64, bool) {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	for len(b) > 0 && (b[len(b)-1] == ' ' || b[len(b)-1] == '\t') {
		b = b[:len(b)-1]
	}
	if len(b) == 0 {
		return 0, false
	}
	i := 0
	neg := false
	if b[0] == '-' || b[0] == '+' {
		neg = b[0] == '-'
		i++
	}
	var mant uint64
	digits, exp10 := 0, 0
	sawDigit, sawPoint := false, false
	for ; i < len(b); i++ {
		c := b[i]
		switch {
		case c >= '0' && c <= '9':
			sawDigit = true
			if digits < 19 {
				mant = mant*10 + uint64(c-'0')
				if mant != 0 {
					digits++
				}
				if sawPoint {
					exp10--
				}
			} else if !sawPoint {
				exp10++ // digits past 19 only scale; the slow path rounds them
				digits = 99
			} else {
				digits = 99
			}
			continue
		case (c == '.' || (c == ',' && decimalComma)) && !sawPoint:
			sawPoint = true
			continue
		}
		break
	}
	if !sawDigit {
		return slowNumber(b, decimalComma)
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		eneg := false
		if i < len(b) && (b[i] == '-' || b[i] == '+') {
			eneg = b[i] == '-'
			i++
		}
		if i == len(b) {
			return 0, false
		}
		e := 0
		for ; i < len(b) && b[i] >= '0' && b[i] <= '9'; i++ {
			if e < 10000 {
				e = e*10 + int(b[i]-'0')
			}
		}
		if eneg {
			e = -e
		}
		exp10 += e
	}
	if i != len(b) {
		return slowNumber(b, decimalComma)
	}
	if digits > 15 || mant >= 1<<53 || exp10 < -22 || exp10 > 22 {
		return slowNumber(b, decimalComma)
	}
	f := float64(mant)
	if exp10 < 0 {
		f /= pow10[-exp10]
	} else {
		f *= pow10[exp10]
	}
	if neg {
		f = -f
	}
	return f, true
}

// slowNumber parses what the fast path leaves: long mantissas, large
// exponents, "NaN" and "Inf".
func slowNumber(b []byte, decimalComma bool) (float64, bool) {
	s := string(b)
	if decimalComma && strings.Count(s, ",") == 1 && !strings.Contains(s, ".") {
		s = strings.Replace(s, ",", ".", 1)
	}
	if strings.ContainsAny(s, "_xXpP") { // Go syntax strconv accepts, not decimal text
		return 0, false
	}
	f, err := strconv.ParseFloat(s, 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && ne.Err == strconv.ErrRange {
			return f, true // ±Inf or 0: counted as non-finite or kept
		}
		return 0, false
	}
	return f, true
}

// csvScanner reads physical lines from a fixed buffer that grows only for
// a line longer than itself.
type csvScanner struct {
	r       io.Reader
	buf     []byte
	start   int // first unread byte
	end     int // end of buffered bytes
	eof     bool
	line    int   // number of the next physical line
	offset  int64 // bytes consumed before buf[start]
	scratch []byte
}

// next returns the next physical line without its line ending, the line's
// number and byte offset; ok is false at the end of input.
func (s *csvScanner) next() (text []byte, line int, offset int64, ok bool, err error) {
	for {
		if j := bytes.IndexByte(s.buf[s.start:s.end], '\n'); j >= 0 {
			text = s.buf[s.start : s.start+j]
			line, offset = s.line, s.offset
			s.line++
			s.start += j + 1
			s.offset += int64(j + 1)
			return bytes.TrimSuffix(text, []byte{'\r'}), line, offset, true, nil
		}
		if s.eof {
			if s.start == s.end {
				return nil, s.line, s.offset, false, nil
			}
			text = s.buf[s.start:s.end]
			line, offset = s.line, s.offset
			s.line++
			s.offset += int64(s.end - s.start)
			s.start = s.end
			return bytes.TrimSuffix(text, []byte{'\r'}), line, offset, true, nil
		}
		// Keep the partial line and read more.
		if s.start > 0 {
			n := copy(s.buf, s.buf[s.start:s.end])
			s.start, s.end = 0, n
		}
		if s.end == len(s.buf) {
			if len(s.buf) >= maxCSVLine {
				return nil, s.line, s.offset, false, &FormatError{Format: "csv", Place: AtLine(s.line, 0), Problem: fmt.Sprintf("line is longer than %d bytes", maxCSVLine), Expected: "one row of numbers per line"}
			}
			grown := make([]byte, 2*len(s.buf))
			copy(grown, s.buf[:s.end])
			s.buf = grown
		}
		n, rerr := s.r.Read(s.buf[s.end:])
		s.end += n
		if rerr == io.EOF {
			s.eof = true
		} else if rerr != nil {
			return nil, s.line, s.offset, false, &FormatError{Format: "csv", Place: AtLine(s.line, 0), Problem: "cannot read: " + rerr.Error()}
		}
	}
}

// record returns the next non-blank record, joining physical lines while a
// quoted field is open (an odd number of quote characters so far).
func (s *csvScanner) record() (rec []byte, line int, offset int64, ok bool, err error) {
	for {
		text, line, offset, ok, err := s.next()
		if !ok || err != nil {
			return nil, line, offset, ok, err
		}
		if len(bytes.TrimSpace(text)) == 0 {
			continue
		}
		if bytes.Count(text, []byte{'"'})%2 == 0 {
			return text, line, offset, true, nil
		}
		s.scratch = append(s.scratch[:0], text...)
		for bytes.Count(s.scratch, []byte{'"'})%2 == 1 {
			more, _, _, ok, err := s.next()
			if err != nil {
				return nil, line, offset, false, err
			}
			if !ok {
				return nil, line, offset, false, &FormatError{Format: "csv", Place: AtLine(line, bytes.IndexByte(text, '"')+1), Problem: "quoted field opened here never closes", Expected: "a closing double quote (RFC 4180 section 2, rule 6)"}
			}
			s.scratch = append(s.scratch, '\n')
			s.scratch = append(s.scratch, more...)
		}
		return s.scratch, line, offset, true, nil
	}
}

// streamCSV reads the data rows described by shape from r, which starts at
// the first data row.
func streamCSV(r io.Reader, size int64, shape csvShape, opts Options) (*Recording, error) {
	timeCol := -1
	for i, n := range shape.names {
		if isTimeName(n) {
			timeCol = i
			break
		}
	}
	// Without a header, the first column is time when it rises at an even
	// pace over the first rows and no rate was given.
	noHeader := shape.headerLine == 0
	if timeCol < 0 && noHeader && opts.SampleRateHz <= 0 && shape.fields >= 2 {
		timeCol = 0
	}
	timeScale := 1.0
	if timeCol >= 0 {
		timeScale = timeUnitSeconds(shape.units[timeCol])
		if timeScale == 0 {
			return nil, &UnsupportedError{Format: "csv", Place: AtLine(shape.headerLine, 0), Feature: fmt.Sprintf("time unit %q", shape.units[timeCol]), Expected: "s, ms, us, ns or min"}
		}
	}
	nsig := shape.fields
	if timeCol >= 0 {
		nsig--
	}
	if nsig < 1 {
		return nil, &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: "rows hold only a time column", Expected: "at least one signal column"}
	}
	if nsig > MaxRawChannels {
		return nil, &UnsupportedError{Format: "csv", Place: AtLine(shape.dataLine, 0), Feature: fmt.Sprintf("%d columns", nsig), Expected: fmt.Sprintf("at most %d signal columns", MaxRawChannels)}
	}
	rec := &Recording{Channels: make([]Channel, 0, nsig), Source: Source{Format: "csv", SampleType: "text"}}
	colChan := make([]int, shape.fields) // field → channel, -1 for time
	scale := make([]float64, shape.fields)
	for i := range shape.names {
		scale[i] = 1
		if i == timeCol {
			colChan[i] = -1
			continue
		}
		name, unit := shape.names[i], shape.units[i]
		if name == "" {
			name = fmt.Sprintf("ch%d", len(rec.Channels))
		}
		if f, ok := voltUnits[strings.ToLower(unit)]; ok {
			scale[i], unit = f, UnitVolt
		}
		colChan[i] = len(rec.Channels)
		rec.Channels = append(rec.Channels, Channel{Name: name, Unit: unit})
	}
	// Reserve the samples from the size of the data and the sniffed rows'
	// length, so the slices grow at most once.
	maxRows := size/int64(2*shape.fields) + 1 // no row is shorter than "1,2\n"
	estRows := maxRows
	if shape.avgRowBytes > 0 {
		estRows = min(maxRows, int64(float64(size)/shape.avgRowBytes*1.02)+16)
	}
	for c := range rec.Channels {
		rec.Channels[c].Samples = make([]float32, 0, estRows)
	}
	sc := &csvScanner{r: r, buf: make([]byte, readBufferBytes), line: shape.dataLine}
	var fields [][]byte
	var cols []int
	var t0, tPrev, minStep, maxStep float64
	var lastTime []byte // the last time cell, for its printing resolution
	rows := 0
	nonFinite := 0
	var consumed int64
	nextProgress := int64(1 << 20)
	names := func(i int) string {
		if shape.names[i] != "" {
			return fmt.Sprintf("column %q (field %d)", shape.names[i], i+1)
		}
		return fmt.Sprintf("field %d", i+1)
	}
	for {
		text, line, _, ok, err := sc.record()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		fields, cols, err = splitRecord(text, shape.delim, fields, cols)
		if err != nil {
			se := err.(*csvSyntaxError)
			return nil, &FormatError{Format: "csv", Place: AtLine(line, se.col), Problem: se.msg, Expected: se.expected}
		}
		if shape.trailingDrop || len(fields) == shape.fields+1 {
			fields = dropTrailingEmpty(fields, shape.delim)
		}
		if len(fields) != shape.fields {
			return nil, &FormatError{Format: "csv", Place: AtLine(line, 0), Problem: fmt.Sprintf("row has %d fields, the rows before it have %d", len(fields), shape.fields),
				Expected: fmt.Sprintf("%d %s-separated fields in every row", shape.fields, delimName(shape.delim))}
		}
		for i, f := range fields {
			v, ok := parseNumber(f, shape.decimalComma)
			if !ok {
				return nil, &FormatError{Format: "csv", Place: AtLine(line, cols[i]), Problem: fmt.Sprintf("cell %q in %s is not a number", clip(string(f), 40), names(i)),
					Expected: "a decimal number such as -1.25e-3" + map[bool]string{true: " or -1,25e-3", false: ""}[shape.decimalComma]}
			}
			if i == timeCol {
				if opts.SampleRateHz > 0 {
					continue // a given rate overrides the time column
				}
				t := v * timeScale
				lastTime = append(lastTime[:0], f...)
				if rows > 0 {
					step := t - tPrev
					if !(step > 0) {
						return nil, &FormatError{Format: "csv", Place: AtLine(line, cols[i]), Problem: fmt.Sprintf("time %g s does not come after the previous row's %g s", t, tPrev), Expected: timeExpectation(noHeader && timeCol == 0)}
					}
					if rows == 1 || step < minStep {
						minStep = step
					}
					if rows == 1 || step > maxStep {
						maxStep = step
					}
				} else {
					t0 = t
				}
				tPrev = t
				continue
			}
			x := float32(v * scale[i])
			if x-x != 0 { // NaN, ±Inf, or beyond float32
				nonFinite++
				x = 0
			}
			c := &rec.Channels[colChan[i]]
			c.Samples = append(c.Samples, x)
		}
		rows++
		consumed = sc.offset
		if opts.Progress != nil && consumed >= nextProgress {
			opts.Progress(float64(consumed) / float64(size))
			nextProgress += 1 << 20
		}
	}
	if rows == 0 {
		return nil, &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: "no data rows", Expected: "rows of numbers after the header"}
	}
	switch {
	case opts.SampleRateHz > 0:
		rec.SampleRateHz = opts.SampleRateHz
	case timeCol >= 0 && rows >= 2:
		meanStep := (tPrev - t0) / float64(rows-1)
		// Ten significant digits: the time column is printed text, and its
		// last-bit noise should not show up as 499999.99999999994 Hz.
		rec.SampleRateHz, _ = strconv.ParseFloat(strconv.FormatFloat(1/meanStep, 'g', 10, 64), 64)
		// Steps that differ from the mean by more than 1 % are reported,
		// unless the difference is only the rounding of the printed times.
		// The last cell shows the resolution (a leading "0" would not);
		// half a step is always reported, since that is a lost or doubled
		// sample whatever the printing.
		rounding := math.Min(1.5*printQuantum(lastTime)*timeScale, 0.5*meanStep)
		tolerance := math.Max(0.01*meanStep, rounding)
		if maxStep-meanStep > tolerance || meanStep-minStep > tolerance {
			rec.Warnings = append(rec.Warnings, fmt.Sprintf("time steps range from %.6g s to %.6g s around a mean of %.6g s (more than 1%% uneven); samples are treated as evenly spaced at %.6g Hz",
				minStep, maxStep, meanStep, rec.SampleRateHz))
		}
	case timeCol >= 0:
		return nil, &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: "one data row cannot give a sample rate", Expected: "two or more rows, or a sample rate given with the command"}
	default:
		return nil, &FormatError{Format: "csv", Place: AtLine(max(shape.headerLine, 1), 0), Problem: "no time column and no sample rate", Expected: "a column named time (with its unit, e.g. \"time (s)\") or a sample rate given with the command"}
	}
	if !(rec.SampleRateHz > 0) || rec.SampleRateHz > MaxSampleRateHz || math.IsInf(rec.SampleRateHz, 0) {
		return nil, &FormatError{Format: "csv", Place: AtLine(shape.dataLine, 0), Problem: fmt.Sprintf("time column gives a sample rate of %g Hz", rec.SampleRateHz), Expected: fmt.Sprintf("a rate above 0 and at most %g Hz", MaxSampleRateHz)}
	}
	if nonFinite > 0 {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("%d cells were NaN, infinite or beyond the float32 range and were set to 0", nonFinite))
	}
	if opts.Progress != nil {
		opts.Progress(1)
	}
	return rec, nil
}

// timeExpectation says what a time column must do, and how to read a
// headerless first column as a signal instead.
func timeExpectation(guessed bool) string {
	if guessed {
		return "time rising from row to row (without a header the first column is read as time; give a sample rate to read it as a signal)"
	}
	return "time rising from row to row"
}

// printQuantum is the value of one unit in the last digit of a printed
// number: 0.001 for "1.234", 1e-7 for "-1.2340e-03".
func printQuantum(b []byte) float64 {
	b = bytes.TrimSpace(b)
	exp := 0
	if i := bytes.IndexAny(b, "eE"); i >= 0 {
		e, err := strconv.Atoi(string(b[i+1:]))
		if err != nil {
			return 0
		}
		exp, b = e, b[:i]
	}
	if i := bytes.IndexAny(b, ".,"); i >= 0 {
		exp -= len(b) - i - 1
	}
	return math.Pow(10, float64(exp))
}
