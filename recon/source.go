package recon

import (
	"context"
	"fmt"

	"spotloom/recon/recipe"
)

// rowSource is one cross-scan source: where the head was at every sample.
// Each source is one type in its own file; sourceOf is the only place that
// chooses between them.
type rowSource interface {
	// find fills res (whose blockLen is set) with y in mm for every block
	// of the capture, and the strokes.
	find(ctx context.Context, rec rowsInput, p rowsParams, res *rowsResult) (*rowsResult, error)
	// channel is the channel the source reads (-1 for none).
	channel(ch channels) int
	// needs is the channel role the source needs ("position", "steps"),
	// or "" for none.
	needs() string
	// readsTone reports whether the source reads the amplitude of a
	// carrier tone: rows.carrier_hz applies, and the channel may be the
	// index channel too (a two-input sound card).
	readsTone() bool
	// fromTiming fills in the rows values the source takes from the
	// index timing when they are left automatic, and says so.
	fromTiming(r *recipe.Recipe, t *timingResult, rateHz float64) []string
	// liveNull is the key of the source's own that a live build
	// (docs/pipeline.md, "Live") needs resolved first and that is still
	// null in r, or "".
	liveNull(r recipe.Recipe) string
	// liveLevels is the source's share of a live build of r: how the
	// level of each block is read as the samples come in, or nil for a
	// source that gives the position itself (liveY).
	liveLevels(r recipe.Recipe, rateHz float64) liveLevels
	// liveY is the share of a live build of a source whose blocks'
	// positions need no level smoothed and calibrated (an even motion,
	// step pulses), or nil.
	liveY(r recipe.Recipe, rateHz float64) liveY
}

// sourceOf returns the implementation of a rows source.
func sourceOf(s recipe.RowSource) (rowSource, error) {
	switch s {
	case recipe.SourcePosition:
		return positionSource{}, nil
	case recipe.SourceTone:
		return toneSource{}, nil
	case recipe.SourceSteps:
		return stepsSource{}, nil
	case recipe.SourceEven:
		return evenSource{}, nil
	}
	return nil, fmt.Errorf("rows.source %q: allowed values are %s", s, recipe.Allowed(recipe.RowSources))
}

// mustSource is sourceOf for a recipe that passed Validate.
func mustSource(s recipe.RowSource) rowSource {
	src, err := sourceOf(s)
	if err != nil {
		return positionSource{}
	}
	return src
}
