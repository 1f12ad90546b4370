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
//     the candidate under which the most lines are all numbers with the
//     same field count (the most fields wins). When most lines are not,
//     the samples may stand beside metadata: under the most common field
//     count, the columns numeric in more than half of the rows are the
//     data columns, and the others (key/value metadata in the leading
//     columns of the first rows, empty or text later) are not read.
//  2. the first run of rows with numbers in every data column starts the
//     data; the row before it is the header (a units row may sit between
//     the two, and header cells past the data columns may name a sample
//     interval whose value stands in the units row); anything before that
//     is preamble, searched for sample interval or rate statements
//     (csvmeta.go).
//  3. the data rows are streamed from a fixed-size buffer straight into
//     float32 slices (csvstream.go). The rate comes from the time column (a
//     time name or unit, or the first column of a headerless file or of
//     one with a generic spreadsheet header, when it is a ramp), else from
//     the stated interval or rate; a sample-counter first column (0, 1, 2
//     ...) is checked for gaps and never taken for time.
//
// Lines end in LF, CR LF or, when the start of the file holds no LF, a bare
// CR. Rows holding nothing but delimiters count as blank lines.

// sniffCSVBytes is how much of a text file is looked at to find its shape.
const sniffCSVBytes = 1 << 16

// maxCSVLine is the longest line the reader accepts.
const maxCSVLine = 1 << 22

// whitespaceDelim marks fields separated by runs of spaces and tabs.
const whitespaceDelim = 0

// csvShape is what sniffing found out about a text capture.
type csvShape struct {
	delim        byte // ',', ';', '\t' or whitespaceDelim
	eol          byte // '\n', or '\r' for bare CR line ends
	decimalComma bool
	fields       int      // per data row
	dataLine     int      // 1-based line of the first data row
	dataOffset   int64    // byte offset of the first data row
	names        []string // per field, "" when there is no header
	units        []string // per field
	headerLine   int      // 0 when there is no header
	trailingDrop bool     // every row ends in a delimiter: drop the empty last field
	avgRowBytes  float64  // mean length of the sniffed data rows, 0 if unknown
	// dataCols are the fields that hold samples, in order: all of them,
	// or fewer when metadata columns stand beside the data.
	dataCols []int
	facts    []columnFacts // per field, for the data columns
	meta     []csvMeta     // sample interval or rate statements, in file order
	labels   []csvLabel    // channel name and unit statements
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
	sc := &csvScanner{r: bytes.NewReader(head[off:]), buf: make([]byte, len(head)+1), line: 1, offset: int64(off), eol: lineEnd(head)}
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

// sniffFactRows is how many sniffed data rows columnFacts looks at.
const sniffFactRows = 4096

// sniffDataColumns looks for data columns among metadata columns: under
// each delimiter the rows with the most common field count are taken, the
// columns numeric in more than half of those rows are the data columns,
// and the score is the number of rows whose data columns all hold numbers.
// Only a split that leaves at least one column out counts. Rows are not
// trimmed of a trailing delimiter: its empty column is one more metadata
// column, so rows whose last metadata cell is empty keep their count.
func sniffDataColumns(lines []sampleLine, idx []int) (csvShape, int) {
	best, bestScore := csvShape{}, 0
	for _, d := range []byte{',', ';', '\t'} {
		decimalComma := d != ','
		rows := make([][][]byte, len(idx))
		counts := map[int]int{}
		for k, i := range idx {
			fields, _, err := splitRecord(lines[i].text, d, nil, nil)
			if err != nil {
				continue
			}
			rows[k] = fields
			counts[len(fields)]++
		}
		n, nRows := 0, 0
		for c, r := range counts {
			if r > nRows || r == nRows && c > n {
				n, nRows = c, r
			}
		}
		if n < 2 || n > MaxRawChannels*4 {
			continue
		}
		numeric := make([]int, n)
		for _, f := range rows {
			if len(f) != n {
				continue
			}
			for j, cell := range f {
				if _, ok := parseNumber(cell, decimalComma); ok {
					numeric[j]++
				}
			}
		}
		var cols []int
		for j, m := range numeric {
			if 2*m > nRows {
				cols = append(cols, j)
			}
		}
		if len(cols) == 0 || len(cols) == n {
			continue
		}
		// The score counts the rows with numbers in every data column; in
		// those rows each other column must be empty or text in most, or
		// it is a data column with damaged cells (or the split is wrong).
		score := 0
		other := make([]int, n) // numbers in the other columns of scored rows
		for _, f := range rows {
			if len(f) != n {
				continue
			}
			all := true
			for _, j := range cols {
				if _, ok := parseNumber(f[j], decimalComma); !ok {
					all = false
					break
				}
			}
			if !all {
				continue
			}
			score++
			for j, cell := range f {
				if _, ok := parseNumber(cell, decimalComma); ok && 2*numeric[j] <= nRows {
					other[j]++
				}
			}
		}
		for _, m := range other {
			if 2*m > score {
				score = 0
			}
		}
		if score > bestScore {
			best, bestScore = csvShape{delim: d, decimalComma: decimalComma, fields: n, dataCols: cols}, score
		}
	}
	return best, bestScore
}

// columnFacts describe one data column over the sniffed rows.
type columnFacts struct {
	rows        int     // sniffed rows
	rising      bool    // every value above the one before
	even        bool    // rising in equal steps (within 1 % or the printing)
	step        float64 // mean step
	integers    bool    // every value a whole number
	consecutive bool    // whole numbers rising by exactly 1
	mostlyByOne bool    // more than half of the steps are +1
	// ramp: never falling, and within the printing of a straight rising
	// line, though neighbouring values may repeat (a time column printed
	// with too few digits)
	ramp bool
}

// columnFactsOf works out the facts of column k of values; quantum is the
// printing resolution of its last cell.
func columnFactsOf(values [][]float64, k int, quantum float64) columnFacts {
	f := columnFacts{rows: len(values), rising: len(values) >= 2, integers: len(values) > 0}
	minStep, maxStep := math.Inf(1), math.Inf(-1)
	ones := 0
	lo, hi := math.Inf(-1), math.Inf(1) // slopes of lines through the printed values
	for i, row := range values {
		v := row[k]
		if i > 0 {
			tol := quantum*(1+1e-9) + 1e-12*math.Abs(v)
			lo = math.Max(lo, (v-values[0][k]-tol)/float64(i))
			hi = math.Min(hi, (v-values[0][k]+tol)/float64(i))
		}
		if v != math.Trunc(v) || math.Abs(v) > 1<<53 {
			f.integers = false
		}
		if i == 0 {
			continue
		}
		step := v - values[i-1][k]
		if step == 1 {
			ones++
		}
		if !(step > 0) {
			f.rising = false
		}
		minStep, maxStep = math.Min(minStep, step), math.Max(maxStep, step)
	}
	f.mostlyByOne = len(values) >= 2 && 2*ones > len(values)-1
	f.ramp = len(values) >= 3 && minStep >= 0 && lo <= hi && hi > 0 && values[len(values)-1][k] > values[0][k]
	if f.rising {
		f.step = (values[len(values)-1][k] - values[0][k]) / float64(len(values)-1)
		tolerance := math.Max(0.01*f.step, math.Min(1.5*quantum, 0.5*f.step))
		f.even = maxStep-f.step <= tolerance && f.step-minStep <= tolerance
		f.consecutive = f.integers && minStep == 1 && maxStep == 1
	}
	return f
}

// knownUnits are unit cells a units row may hold without brackets.
var knownUnits = map[string]bool{
	"s": true, "sec": true, "second": true, "seconds": true, "ms": true, "us": true, "µs": true, "μs": true, "ns": true, "min": true,
	"v": true, "mv": true, "uv": true, "µv": true, "μv": true, "kv": true, "volt": true, "volts": true,
	"a": true, "ma": true, "ua": true, "µa": true, "hz": true, "khz": true, "mm": true, "cm": true, "m": true,
	"deg": true, "°": true, "%": true, "counts": true, "fs": true, "w": true, "mw": true, "-": true,
	"sequence": true, "samples": true, "points": true, "pts": true, "#": true,
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

// keyCell reports a row that starts with a key cell: text ending in "="
// or ":" (`"Record Length=",120,`), a statement rather than damaged data.
func keyCell(fields [][]byte) bool {
	if len(fields) == 0 {
		return false
	}
	k := bytes.TrimSpace(fields[0])
	return len(k) > 1 && (k[len(k)-1] == '=' || k[len(k)-1] == ':') && !isDigitByte(k[0])
}

func isDigitByte(c byte) bool { return c >= '0' && c <= '9' }

// numberNames reports header cells that name channels by number, as some
// instruments do ("Time,1,2"): one or more names that start with a letter,
// then whole numbers from 1 up rising by one.
func numberNames(cells [][]byte) bool {
	names, next := 0, 0
	for _, c := range cells {
		c = bytes.TrimSpace(c)
		if len(c) == 0 {
			return false
		}
		if next == 0 && !isDigitByte(c[0]) {
			r := c[0] | 0x20
			if r < 'a' || r > 'z' {
				return false
			}
			names++
			continue
		}
		n, err := strconv.Atoi(string(c))
		if err != nil || n < 1 || n > 999 || next > 0 && n != next {
			return false
		}
		next = n + 1
	}
	return names > 0 && next > 0
}

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
					return fields, cols, quotingError(i+1, "quoted field does not close", "a closing double quote (RFC 4180 section 2, rule 5)")
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
				return fields, cols, quotingError(i+1, fmt.Sprintf("%q after a closing quote", rec[i]), "the "+delimName(delim)+" delimiter or the end of the row (RFC 4180 section 2, rule 7)")
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

// quotingError is a quoting error at byte column col of a record; the
// caller places it on its line with cellPlace.
func quotingError(col int, problem, expected string) *FormatError {
	return &FormatError{Format: "csv", Place: AtLine(0, col), Problem: problem, Expected: expected}
}

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

// lineEnd is the byte that ends lines in a file that starts with head:
// '\n' (LF or CR LF), or '\r' for a file written with bare CR line ends.
func lineEnd(head []byte) byte {
	if bytes.IndexByte(head, '\n') < 0 && bytes.IndexByte(head, '\r') >= 0 {
		return '\r'
	}
	return '\n'
}

// csvScanner reads physical lines from a fixed buffer that grows only for
// a line longer than itself.
type csvScanner struct {
	r       io.Reader
	eol     byte // '\n', or '\r' for bare CR line ends
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
		if j := bytes.IndexByte(s.buf[s.start:s.end], s.eol); j >= 0 {
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
		if emptyRow(text) {
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

// emptyRow reports a row with nothing in it but spaces and delimiters, such
// as the ",," a spreadsheet leaves after the last sample: like a blank line,
// it holds no sample.
func emptyRow(text []byte) bool {
	for _, c := range text {
		switch c {
		case ' ', '\t', '\r', ',', ';':
		default:
			return false
		}
	}
	return true
}

// cellPlace is the Place of the byte at 1-based column col of a record that
// starts at line: a record joined from several lines (a quoted field with
// line breaks) counts the lines before the cell.
func cellPlace(rec []byte, line, col int) Place {
	before := rec[:min(max(col-1, 0), len(rec))]
	if n := bytes.Count(before, []byte{'\n'}); n > 0 {
		return AtLine(line+n, col-1-bytes.LastIndexByte(before, '\n'))
	}
	return AtLine(line, col)
}

// Column roles in streamCSV besides channel numbers (0 and up).
const (
	roleSkip      = -1 // metadata column: not read
	roleTime      = -2 // the time column the rate comes from
	roleTimeCheck = -3 // another time column, compared with the first
	roleCounter   = -4 // sample counter: 0, 1, 2 ...
)

// counterNames are header names of a sample-counter column.
var counterNames = map[string]bool{"x": true, "sequence": true, "seq": true, "index": true, "idx": true, "sample": true, "samples": true,
	"no": true, "no.": true, "nr": true, "nr.": true, "n": true, "#": true, "point": true, "points": true, "sample no": true, "sample no.": true, "sample number": true, "sample index": true}

// counterUnits are unit cells of a sample-counter column.
var counterUnits = map[string]bool{"sequence": true, "samples": true, "sample": true, "points": true, "pts": true, "#": true, "index": true, "count": true, "counts": true}

// isCounterColumn reports a column that counts samples: named as a counter
// (or with a counter unit) and holding numbers that mostly step by 1 (the
// streaming pass reports the rows that do not), or holding whole
// numbers rising by exactly 1 under a name that is not time. A column with
// any other unit (a time unit, volts) is not a counter.
func isCounterColumn(name, unit string, f columnFacts) bool {
	n, u := strings.ToLower(strings.TrimSpace(name)), strings.ToLower(strings.Trim(strings.TrimSpace(unit), "()[] "))
	if u != "" && !counterUnits[u] {
		return false
	}
	if (counterNames[n] || counterUnits[u]) && f.mostlyByOne {
		return true
	}
	return !isTimeName(name) && f.consecutive && f.rows >= 3
}

// tenDigits rounds a rate to ten significant digits: it comes from printed
// text, and last-bit noise should not show up as 499999.99999999994 Hz.
func tenDigits(hz float64) float64 {
	v, _ := strconv.ParseFloat(strconv.FormatFloat(hz, 'g', 10, 64), 64)
	return v
}

// plural gives "1 jump" or "3 jumps".
func plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return fmt.Sprintf("%d %ss", n, word)
}

// kindName names what a stated value is.
func kindName(k csvMetaKind) string {
	if k == metaRate {
		return "rate"
	}
	return "interval"
}

// columnName names field i for messages.
func columnName(shape csvShape, i int) string {
	if shape.names[i] != "" {
		return fmt.Sprintf("column %q (field %d)", shape.names[i], i+1)
	}
	return fmt.Sprintf("field %d", i+1)
}

// pairedTimeColumns finds the time columns of a headerless file whose
// channels each carry their own: the data columns alternate time, value,
// time, value; every time column rises in even steps about as long as the
// first one's (within 10 %), and the value columns do not all do so. It
// returns the time columns after the first.
func pairedTimeColumns(shape csvShape) []int {
	data := shape.dataCols
	if len(data) < 4 || len(data)%2 != 0 {
		return nil
	}
	first := shape.facts[data[0]]
	if !first.even {
		return nil
	}
	valuesEven := true
	var times []int
	for k, c := range data {
		f := shape.facts[c]
		if k%2 == 1 {
			valuesEven = valuesEven && f.even
			continue
		}
		if !f.even || math.Abs(f.step-first.step) > 0.1*first.step {
			return nil
		}
		if k > 0 {
			times = append(times, c)
		}
	}
	if valuesEven {
		return nil
	}
	return times
}

// timeExpectation says what a time column must do, and how to read the
// rows without it: with the rate given on the command line.
func timeExpectation(guessed bool) string {
	if guessed {
		return "time rising from row to row (the first column was read as time because it has no name of its own; give the sample rate with the command, --rate HZ, to read it as a signal)"
	}
	return "time rising from row to row, or the sample rate given with the command (--rate HZ) to read the rows as evenly spaced"
}

// printQuantum is the value of one unit in the last digit of a printed
// number: 0.001 for "1.234", 1e-7 for "-1.2340e-03". It runs once per row
// of a time column, so it scans the cell once by hand.
func printQuantum(b []byte) float64 {
	b = bytes.TrimSpace(b)
	point, mark := -1, len(b)
	for i, c := range b {
		if c == 'e' || c == 'E' {
			mark = i
			break
		}
		if (c == '.' || c == ',') && point < 0 {
			point = i
		}
	}
	exp := 0
	if mark < len(b) {
		digits := b[mark+1:]
		neg := len(digits) > 0 && digits[0] == '-'
		if len(digits) > 0 && (digits[0] == '-' || digits[0] == '+') {
			digits = digits[1:]
		}
		if len(digits) == 0 || len(digits) > 6 {
			return 0
		}
		for _, c := range digits {
			if c < '0' || c > '9' {
				return 0
			}
			exp = 10*exp + int(c-'0')
		}
		if neg {
			exp = -exp
		}
	}
	if point >= 0 {
		exp -= mark - point - 1
	}
	switch {
	case exp >= 0 && exp < len(pow10):
		return pow10[exp]
	case exp < 0 && -exp < len(pow10):
		return 1 / pow10[-exp]
	}
	return math.Pow(10, float64(exp))
}
