package recipe

import (
	"fmt"
	"slices"
	"strings"

	"spotloom/internal/strictjson"
)

// Law is sweep.law: how time within a line maps to the beam's angle.
type Law string

// The sweep laws.
const (
	// LawUniform is a constant angular rate: a spinning wheel or polygon.
	LawUniform Law = "uniform"
	// LawSine is a resonant mirror: the angle is a sine of time.
	LawSine Law = "sine"
	// LawTable is a measured [[fraction_of_line, x_mm], …] table.
	LawTable Law = "table"
)

// Laws lists every allowed sweep.law, in the order error messages and the
// window list them.
var Laws = []Law{LawUniform, LawSine, LawTable}

// RowSource is rows.source: where the cross-scan position of every
// sample comes from.
type RowSource string

// The cross-scan sources.
const (
	// SourcePosition is a DC level on the position channel.
	SourcePosition RowSource = "position"
	// SourceTone is the peak amplitude of a carrier tone on the position
	// channel (a potentiometer fed with a sine wave, read by a sound card).
	SourceTone RowSource = "tone"
	// SourceSteps is step pulses on the steps channel × rows.mm_per_step.
	SourceSteps RowSource = "steps"
	// SourceEven is a constant rows.speed_mm_s.
	SourceEven RowSource = "even"
)

// RowSources lists every allowed rows.source, in the order error messages
// and the window list them.
var RowSources = []RowSource{SourcePosition, SourceTone, SourceSteps, SourceEven}

// ReadsPosition reports whether the source reads the position channel
// (and so needs rows.calibration).
func (s RowSource) ReadsPosition() bool { return s == SourcePosition || s == SourceTone }

// ParseLaw returns the law named s, or an error listing the allowed laws.
func ParseLaw(s string) (Law, error) { return parseMode("sweep.law", s, Laws) }

// ParseRowSource returns the source named s, or an error listing the
// allowed sources.
func ParseRowSource(s string) (RowSource, error) { return parseMode("rows.source", s, RowSources) }

func parseMode[T ~string](key, s string, allowed []T) (T, error) {
	if slices.Contains(allowed, T(s)) {
		return T(s), nil
	}
	return "", &KeyError{Key: key, Msg: fmt.Sprintf("is %s: allowed values are %s", strictjson.Quote(s), Allowed(allowed))}
}

// Allowed joins a list of allowed values for a message: "uniform, sine, table".
func Allowed[T ~string](allowed []T) string {
	names := make([]string, len(allowed))
	for i, a := range allowed {
		names[i] = string(a)
	}
	return strings.Join(names, ", ")
}
