package capture

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"unicode/utf8"
)

// Options steer Open. The zero value reads any WAV or CSV file that carries
// its own sample rate.
type Options struct {
	// SampleRateHz gives the rate of a CSV without a time column or of a raw
	// file, and overrides the rate a file states when it is above 0.
	SampleRateHz float64
	// Layout describes a raw binary file. When nil, Open looks for
	// NAME.layout.json beside the file.
	Layout *RawLayout
	// Progress, when not nil, is called now and then with the fraction of
	// the file read so far.
	Progress func(fraction float64)
	// summary, when not nil, asks the WAV and raw readers to stream the
	// samples into it instead of keeping them (Inspect).
	summary *summarizer
}

// sniffBytes is how much of a file Open looks at to choose a reader.
const sniffBytes = 4096

// rawExtensions name files that hold bare samples.
var rawExtensions = map[string]bool{".bin": true, ".raw": true, ".dat": true, ".adc": true, ".pcm": true, ".i16": true, ".u16": true, ".f32": true}

// textExtensions name files that hold delimited text.
var textExtensions = map[string]bool{".csv": true, ".txt": true, ".tsv": true, ".tab": true, ".dat": true, ".asc": true}

// Open reads the capture at path. It chooses the reader by content first
// (a RIFF/WAVE header, printable text) and extension second, and uses a raw
// layout when one is given or found beside the file.
func Open(path string, opts Options) (*Recording, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", displayPath(path), unwrapPathError(err))
	}
	if st.IsDir() {
		return nil, &FormatError{Path: path, Place: wholeFile, Problem: "is a directory", Expected: "a WAV, CSV or raw capture file"}
	}
	if !st.Mode().IsRegular() {
		return nil, &FormatError{Path: path, Place: wholeFile, Problem: "is not a regular file", Expected: "a WAV, CSV or raw capture file"}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", displayPath(path), unwrapPathError(err))
	}
	defer f.Close()
	size := st.Size()
	if size == 0 {
		return nil, &FormatError{Path: path, Place: wholeFile, Problem: "file is empty (0 bytes)", Expected: "a WAV, CSV or raw capture"}
	}
	layout, err := findLayout(path, opts)
	if err != nil {
		return nil, err
	}
	rec, err := decode(f, size, path, layout, opts)
	if err != nil {
		if errors.Is(err, ErrNoLayout) {
			return nil, missingLayout(path)
		}
		return nil, withPath(err, path)
	}
	rec.Source.Path = path
	return rec, nil
}

// decode picks the reader for a file of the given size and name (used for
// its extension and in hints) and reads it. layout, when not nil, is the raw
// layout given or found beside the file; a found one is used unless the file
// is a WAV, or text named as text (.csv, .txt, ...).
func decode(r io.ReaderAt, size int64, name string, layout *RawLayout, opts Options) (*Recording, error) {
	ext := strings.ToLower(filepath.Ext(name))
	if size == 0 {
		return nil, &FormatError{Place: wholeFile, Problem: "file is empty (0 bytes)", Expected: "a WAV, CSV or raw capture"}
	}
	head := make([]byte, min(size, sniffBytes))
	if n, err := r.ReadAt(head, 0); err != nil && !(errors.Is(err, io.EOF) && n == len(head)) {
		return nil, &FormatError{Place: AtByte(int64(n)), Problem: "cannot read: " + err.Error()}
	}
	var rec *Recording
	var err error
	switch {
	case opts.Layout != nil || (layout != nil && !isWAV(head) && !isNamedText(ext, head, size)):
		rec, err = readRaw(r, size, *layout, opts)
	case isWAV(head):
		rec, err = readWAV(r, size, opts)
	case ext == ".wav" || ext == ".wave":
		return nil, &FormatError{Format: "wav", Place: AtByte(0), Problem: fmt.Sprintf("file starts with %q", printable(head[:min(len(head), 4)])), Expected: "\"RIFF\" ... \"WAVE\""}
	case isUTF16(head):
		return nil, &UnsupportedError{Format: "csv", Place: AtByte(0), Feature: "UTF-16 text", Expected: "UTF-8 or ASCII text (save the export as UTF-8)"}
	case looksLikeText(head, size <= sniffBytes):
		rec, err = readCSV(r, size, opts)
	case rawExtensions[ext]:
		return nil, ErrNoLayout
	default:
		return nil, &FormatError{Place: AtByte(0), Problem: fmt.Sprintf("unknown format (starts with % x)", head[:min(len(head), 8)]),
			Expected: "a RIFF/WAVE file, delimited text (CSV) or a raw file with a layout; for raw ADC dumps " + layoutHint(name)}
	}
	if err != nil {
		return nil, err
	}
	if textExtensions[ext] && rec.Source.Format == "wav" {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("file is named %s but holds a WAV capture", ext))
	}
	if opts.SampleRateHz > 0 {
		rec.SampleRateHz = opts.SampleRateHz
	}
	if err := rec.Validate(); err != nil {
		return nil, &FormatError{Format: rec.Source.Format, Place: wholeFile, Problem: err.Error()}
	}
	return rec, nil
}

// isNamedText reports whether a file is a text capture by both its name and
// its content, so a layout file that happens to lie beside a CSV export does
// not turn it into raw samples. A layout given explicitly still wins.
func isNamedText(ext string, head []byte, size int64) bool {
	return textExtensions[ext] && looksLikeText(head, size <= sniffBytes)
}

// unwrapPathError drops the path an *fs.PathError repeats, since the caller
// names the file first.
func unwrapPathError(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s: %w", pe.Op, pe.Err)
	}
	return err
}

// looksLikeText reports whether head is printable UTF-8 text. complete says
// head is the whole file (so a cut rune at its end is an error).
func looksLikeText(head []byte, complete bool) bool {
	if len(head) >= 3 && head[0] == 0xEF && head[1] == 0xBB && head[2] == 0xBF {
		head = head[3:]
	}
	control := 0
	for i := 0; i < len(head); {
		c := head[i]
		if c < utf8.RuneSelf {
			switch {
			case c == 0:
				return false
			case c < 0x20 && c != '\t' && c != '\n' && c != '\r' && c != '\f':
				control++
			case c == 0x7F:
				control++
			}
			i++
			continue
		}
		r, n := utf8.DecodeRune(head[i:])
		if r == utf8.RuneError && n <= 1 {
			if !complete && len(head)-i < utf8.UTFMax {
				break
			}
			return false
		}
		i += n
	}
	return control*100 <= len(head)
}

// isUTF16 reports a UTF-16 byte order mark.
func isUTF16(head []byte) bool {
	return len(head) >= 2 && (head[0] == 0xFF && head[1] == 0xFE || head[0] == 0xFE && head[1] == 0xFF)
}

// printable quotes bytes for a message without control characters.
func printable(b []byte) string {
	var sb strings.Builder
	for _, c := range b {
		if c >= 0x20 && c < 0x7F {
			sb.WriteByte(c)
		} else {
			fmt.Fprintf(&sb, "\\x%02x", c)
		}
	}
	return sb.String()
}

// LooksLikeCapture reports whether path is named as a capture Open reads:
// a WAV, a text capture (.csv, .txt, …), a raw dump (.bin, .raw, …), or any
// file with a raw layout sidecar beside it (see LayoutPaths). It looks at
// names only, so a file chooser can offer captures without reading them.
func LooksLikeCapture(path string) bool {
	ext := strings.ToLower(filepath.Ext(path))
	if ext == ".wav" || ext == ".wave" || textExtensions[ext] || rawExtensions[ext] {
		return true
	}
	if strings.HasSuffix(strings.ToLower(path), ".layout.json") {
		return false
	}
	for _, p := range LayoutPaths(path) {
		if fi, err := os.Stat(p); err == nil && fi.Mode().IsRegular() {
			return true
		}
	}
	return false
}
