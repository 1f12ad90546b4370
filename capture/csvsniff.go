package capture

import (
	"bytes"
	"fmt"
	"strings"
)

// The sniff looks at the start of a text file in named steps, each a
// method of csvSniffer: sniffDelimiter finds the delimiter and the data
// columns; dataStart the first data row; header the names, units and the
// statements of the header rows; preamble the statements above them; and
// besideData the metadata columns beside the data and the facts of each
// data column. The rate itself is worked out by the streaming pass
// (csvstream.go).

// csvSniffer holds the sample of lines and the shape found so far.
type csvSniffer struct {
	lines  []sampleLine
	idx    []int // the non-blank lines
	shape  csvShape
	isData []bool // per field
	plain  bool   // no metadata columns
}

// sniffCSV finds the delimiter, the data columns, the header and the first
// data row, and collects the sample rate statements of the preamble.
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
	shape, err := sniffDelimiter(lines, idx, len(head))
	if err != nil {
		return shape, err
	}
	shape.eol = lineEnd(head)
	s := newSniffer(lines, idx, shape)
	start := s.dataStart()
	preambleEnd := s.header(start)
	s.preamble(preambleEnd)
	s.besideData(start)
	return s.shape, nil
}

// sniffDelimiter picks the candidate under which the most lines are rows
// of numbers with one field count (ties go to more fields, then to the
// order comma, semicolon, tab, whitespace); when most lines are not, the
// samples may stand in some columns beside metadata columns.
func sniffDelimiter(lines []sampleLine, idx []int, headBytes int) (csvShape, error) {
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
	if 2*bestScore < len(idx) {
		if cs, score := sniffDataColumns(lines, idx); score > 2*bestScore {
			best, bestScore = cs, score
		}
	}
	if bestScore == 0 {
		return csvShape{}, &FormatError{Format: "csv", Place: AtLine(lines[idx[0]].line, 0), Problem: fmt.Sprintf("no line in the first %d bytes is a row of numbers (first line %q)", headBytes, clip(string(lines[idx[0]].text), 60)),
			Expected: "rows of numbers separated by commas, semicolons, tabs or spaces"}
	}
	if best.dataCols == nil {
		best.dataCols = make([]int, best.fields)
		for i := range best.dataCols {
			best.dataCols[i] = i
		}
	}
	return best, nil
}

func newSniffer(lines []sampleLine, idx []int, shape csvShape) *csvSniffer {
	s := &csvSniffer{lines: lines, idx: idx, shape: shape, isData: make([]bool, shape.fields), plain: len(shape.dataCols) == shape.fields}
	for _, c := range shape.dataCols {
		s.isData[c] = true
	}
	s.shape.names = make([]string, shape.fields)
	s.shape.units = make([]string, shape.fields)
	return s
}

// split splits sample line i as the streaming pass does: a trailing
// delimiter's empty field is dropped when it is one field too many. It
// gives nil for a quoting error.
func (s *csvSniffer) split(i int) ([][]byte, []int) {
	fields, cols, err := splitRecord(s.lines[i].text, s.shape.delim, nil, nil)
	if err != nil {
		return nil, nil
	}
	if len(fields) == s.shape.fields+1 {
		fields = dropTrailingEmpty(fields, s.shape.delim)
	}
	return fields, cols[:len(fields)]
}

func (s *csvSniffer) isNumber(f []byte) bool {
	_, ok := parseNumber(f, s.shape.decimalComma)
	return ok
}

// numbers counts the numbers among fields.
func (s *csvSniffer) numbers(fields [][]byte) int {
	n := 0
	for _, f := range fields {
		if s.isNumber(f) {
			n++
		}
	}
	return n
}

// dataFields are the cells of a row in the data columns.
func (s *csvSniffer) dataFields(f [][]byte) [][]byte {
	var out [][]byte
	for _, c := range s.shape.dataCols {
		if c < len(f) {
			out = append(out, f[c])
		}
	}
	return out
}

// otherCells are the cells of a row outside the data columns, with their
// byte columns and field numbers.
func (s *csvSniffer) otherCells(f [][]byte, cols []int) (cells [][]byte, byteCols, fields []int) {
	for j := range f {
		if j >= s.shape.fields || !s.isData[j] {
			cells, byteCols, fields = append(cells, f[j]), append(byteCols, cols[j]), append(fields, j)
		}
	}
	return cells, byteCols, fields
}

// numericRow reports a row with the data's field count and numbers in
// every data column.
func (s *csvSniffer) numericRow(i int) bool {
	f, _ := s.split(i)
	return len(f) == s.shape.fields && s.numbers(s.dataFields(f)) == len(s.shape.dataCols)
}

// dataStart finds the first data row (its position in idx) and records
// where it is. The data start at the first run of numeric rows (three, or
// fewer at the end of the sample), or earlier, at damaged data rows just
// before that run: rows with the data's field count holding some numbers,
// or rows of numbers with another field count. Those are read as data so
// that the error names them, rather than being skipped as preamble.
func (s *csvSniffer) dataStart() int {
	idx, shape := s.idx, &s.shape
	start := -1
	for k := range idx {
		good := true
		for m := 0; m < min(3, len(idx)-k); m++ {
			if !s.numericRow(idx[k+m]) {
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
			if s.numericRow(idx[k]) {
				start = k
				break
			}
		}
	}
	for start > 0 && s.damaged(idx[start-1]) {
		start--
	}
	first := idx[start]
	shape.dataLine = s.lines[first].line
	shape.dataOffset = s.lines[first].offset
	if fields, _, _ := splitRecord(s.lines[first].text, shape.delim, nil, nil); len(fields) == shape.fields+1 && len(bytes.TrimSpace(fields[shape.fields])) == 0 {
		shape.trailingDrop = true
	}
	if last := s.lines[len(s.lines)-1]; len(s.lines) > first+1 {
		shape.avgRowBytes = float64(last.offset-s.lines[first].offset) / float64(len(s.lines)-1-first)
	}
	return start
}

// damaged reports a row just above the data that is damaged data rather
// than a statement or a header.
func (s *csvSniffer) damaged(i int) bool {
	f, _ := s.split(i)
	if f == nil && s.shape.delim != whitespaceDelim {
		// a quoting error: judge the row by its bare delimiter split
		f = bytes.Split(s.lines[i].text, []byte{s.shape.delim})
	}
	switch {
	case len(scanMetaCells(f, make([]int, len(f)), 0, s.shape.decimalComma, nil)) > 0, keyCell(f):
		// "Sample interval,1e-05" or `"Record Length=",120,` above the data
		return false
	case numberNames(s.dataFields(f)):
		// a header naming channels by number: "Time,1,2"
		return false
	case s.plain:
		nums := s.numbers(f)
		return len(f) > 0 && (len(f) == s.shape.fields && nums > 0 || nums == len(f))
	}
	return len(f) == s.shape.fields && s.numbers(s.dataFields(f)) > 0
}

// headerRow is a row that may name the columns.
type headerRow struct {
	cells [][]byte
	cols  []int
	line  int
}

// headerAt is the row at idx position k when it can be a header: at least
// the data's field count and no number in the data columns (but channel
// numbers, "Time,1,2").
func (s *csvSniffer) headerAt(k int) *headerRow {
	if k < 0 {
		return nil
	}
	f, cols := s.split(s.idx[k])
	if data := s.dataFields(f); len(f) < s.shape.fields || s.numbers(data) > 0 && !numberNames(data) {
		return nil
	}
	return &headerRow{f, cols, s.lines[s.idx[k]].line}
}

// dataCells are a header's cells over the data columns, trimmed.
func (s *csvSniffer) dataCells(h *headerRow) []string {
	out := make([]string, len(s.shape.dataCols))
	for i, c := range s.shape.dataCols {
		out[i] = strings.TrimSpace(string(h.cells[c]))
	}
	return out
}

// statesRate reports a header row that names a sample interval or rate
// among its cells outside the data ("X,CH1,CH2,Start,Increment"). Only
// such a row may be longer than the data rows; any other longer row (a
// sentence split at its spaces) is preamble.
func (s *csvSniffer) statesRate(h *headerRow) bool {
	of, _, _ := s.otherCells(h.cells, h.cols)
	for _, c := range of {
		if key, _ := normalizeMetaKey(string(c)); metaKeys[key] != 0 {
			return true
		}
	}
	return false
}

// header reads the names and units of the columns from the row just above
// the data, or from a names row and a units row, with the statements in
// their cells outside the data; it returns the idx position where the
// preamble ends.
func (s *csvSniffer) header(start int) int {
	shape := &s.shape
	h, u := s.headerAt(start-1), s.headerAt(start-2)
	if h == nil || u != nil && !(len(u.cells) == shape.fields && len(h.cells) == shape.fields || s.statesRate(u)) {
		u = nil
	}
	if h != nil && u == nil && len(h.cells) != shape.fields && !s.statesRate(h) {
		h = nil
	}
	switch {
	case h == nil:
		return start
	case u != nil && looksLikeUnits(s.dataCells(h)):
		// names row, then a units row; cells beyond the data are keys over
		// their values ("Start,Increment" over "-0.01,1e-05")
		for _, c := range shape.dataCols {
			shape.names[c] = strings.TrimSpace(string(u.cells[c]))
			shape.units[c] = strings.Trim(strings.TrimSpace(string(h.cells[c])), "()[] ")
		}
		for j := range min(len(u.cells), len(h.cells)) {
			if j < shape.fields && s.isData[j] {
				continue
			}
			key, unit := normalizeMetaKey(string(u.cells[j]))
			if kind, ok := metaKeys[key]; ok && len(bytes.TrimSpace(h.cells[j])) > 0 {
				shape.meta = append(shape.meta, newMeta(kind, string(u.cells[j]), string(h.cells[j]), unit, h.line, h.cols[j], shape.decimalComma))
			}
		}
		shape.headerLine = u.line
		return start - 2
	}
	for i, cell := range s.dataCells(h) {
		shape.names[shape.dataCols[i]], shape.units[shape.dataCols[i]] = splitNameUnit(cell)
	}
	of, oc, _ := s.otherCells(h.cells, h.cols)
	shape.meta = scanMetaCells(of, oc, h.line, shape.decimalComma, shape.meta)
	shape.headerLine = h.line
	return start - 1
}

// preamble collects the statements above the header; they come before
// those of the header and beside the data.
func (s *csvSniffer) preamble(end int) {
	shape := &s.shape
	var meta []csvMeta
	for _, i := range s.idx[:end] {
		l := s.lines[i]
		meta = scanMetaLine(l.text, l.line, shape.delim, shape.decimalComma, meta)
		if cells, _, err := splitRecord(l.text, shape.delim, nil, nil); err == nil {
			shape.labels = scanLabelCells(cells, nil, shape.labels)
		}
	}
	shape.meta = append(meta, shape.meta...)
}

// besideData collects the statements in metadata columns beside the
// sniffed data rows and works out what each data column looks like.
func (s *csvSniffer) besideData(start int) {
	shape := &s.shape
	var values [][]float64
	var lastText [][]byte
	for _, i := range s.idx[start:] {
		f, cols := s.split(i)
		if !s.plain && len(f) == shape.fields {
			of, oc, fields := s.otherCells(f, cols)
			shape.meta = scanMetaCells(of, oc, s.lines[i].line, shape.decimalComma, shape.meta)
			shape.labels = scanLabelCells(of, fields, shape.labels)
		}
		if len(f) != shape.fields || len(values) >= sniffFactRows {
			continue
		}
		row := make([]float64, len(shape.dataCols))
		ok := true
		for k, c := range shape.dataCols {
			v, isNum := parseNumber(f[c], shape.decimalComma)
			if !isNum {
				ok = false
				break
			}
			row[k] = v
		}
		if ok {
			values = append(values, row)
			lastText = append(lastText[:0], s.dataFields(f)...)
		}
	}
	shape.facts = make([]columnFacts, shape.fields)
	for k, c := range shape.dataCols {
		var q float64
		if len(lastText) > k {
			q = printQuantum(lastText[k])
		}
		shape.facts[c] = columnFactsOf(values, k, q)
	}
}
