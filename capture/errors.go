package capture

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
	"unicode"
)

// Place says where in a file something was found: a byte offset for binary
// formats, a line and column (both counted from 1) for text. A Place with
// Offset -1 and Line 0 means the file as a whole.
type Place struct {
	Offset int64 // byte offset, used when Line is 0; -1 means none
	Line   int   // 1-based line, 0 when the place is a byte offset
	Column int   // 1-based column (field number for CSV), 0 for the whole line
}

// AtByte is the Place at byte offset off.
func AtByte(off int64) Place { return Place{Offset: off} }

// AtLine is the Place at a 1-based line and column; column 0 means the line.
func AtLine(line, column int) Place { return Place{Offset: -1, Line: line, Column: column} }

// wholeFile is the Place for facts about the file as a whole (its size).
var wholeFile = Place{Offset: -1}

// String gives "byte 36", "line 12:7", "line 12", or "" for the whole file.
func (p Place) String() string {
	switch {
	case p.Line > 0 && p.Column > 0:
		return fmt.Sprintf("line %d:%d", p.Line, p.Column)
	case p.Line > 0:
		return fmt.Sprintf("line %d", p.Line)
	case p.Offset >= 0:
		return fmt.Sprintf("byte %d", p.Offset)
	}
	return ""
}

// FormatError reports a file that is not a valid capture of its format: it
// is truncated, its header contradicts its size, or a value is not what the
// format allows. Expected says what would have been valid.
type FormatError struct {
	Path     string // file as given to Open, "" for a reader without a name
	Format   string // "wav", "csv", "raw" or "" before the format is known
	Place    Place
	Problem  string // what was seen
	Expected string // what was expected instead, may be ""
	// Err, when set, is a sentinel such as ErrNoSampleRate that callers
	// can test with errors.Is to offer a remedy; it is not in the message.
	Err error
}

// Error gives the one-line message "PATH: FORMAT PLACE: PROBLEM; expected ...".
func (e *FormatError) Error() string {
	return describe(e.Path, e.Format, e.Place, e.Problem, e.Expected)
}

// Unwrap returns the sentinel the error carries, if any.
func (e *FormatError) Unwrap() error { return e.Err }

// UnsupportedError reports a file that is valid for its format but uses a
// feature Spotloom does not read (a compressed WAV, an unknown sample type).
type UnsupportedError struct {
	Path     string
	Format   string
	Place    Place
	Feature  string // what is not handled
	Expected string // what is handled instead
}

// Error gives the one-line message "PATH: FORMAT PLACE: unsupported ...".
func (e *UnsupportedError) Error() string {
	return describe(e.Path, e.Format, e.Place, "unsupported "+e.Feature, e.Expected)
}

// describe builds the one-line message "PATH: FORMAT PLACE: PROBLEM; expected EXPECTED".
func describe(path, format string, place Place, problem, expected string) string {
	msg := ""
	if path != "" {
		msg = displayPath(path) + ": "
	}
	where := format
	if p := place.String(); p != "" {
		if where != "" {
			where += " "
		}
		where += p
	}
	if where != "" {
		msg += where + ": "
	}
	msg += problem
	if expected != "" {
		msg += "; expected " + expected
	}
	return msg
}

// ErrNoLayout is wrapped by the error Open returns for a binary file that
// has no layout: neither Options.Layout nor a NAME.layout.json sidecar.
var ErrNoLayout = errors.New("raw capture has no layout")

// ErrNoSampleRate is wrapped by the error Open returns for a text capture
// that has no time column and states no sample interval or rate: it reads
// with Options.SampleRateHz set.
var ErrNoSampleRate = errors.New("capture has no sample rate")

// withPath fills in the file name of typed errors made by readers that only
// see an io.ReaderAt.
func withPath(err error, path string) error {
	var fe *FormatError
	if errors.As(err, &fe) && fe.Path == "" {
		fe.Path = path
	}
	var ue *UnsupportedError
	if errors.As(err, &ue) && ue.Path == "" {
		ue.Path = path
	}
	return err
}

// displayPath is a file name as messages show it: as it is, or quoted when
// it holds a line break or another non-printing character, so that every
// message stays on one line.
func displayPath(path string) string {
	if strings.IndexFunc(path, func(r rune) bool { return !unicode.IsPrint(r) && r != ' ' }) >= 0 {
		return strconv.Quote(path)
	}
	return path
}
