package ui

import (
	"context"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/recipe"
)

// Engine is what the window needs from the reconstruction engine for one
// capture. The production engine wraps a recon.Session; tests may supply
// their own. Calls are serialised by the window: at most one runs at a time.
type Engine interface {
	// Recording is the capture the engine works on.
	Recording() *capture.Recording
	// Build reconstructs the capture with r; it stops early when ctx is
	// cancelled and reports its stages to progress (which may be nil).
	Build(ctx context.Context, r recipe.Recipe, progress func(stage string, fraction float64)) (*Result, error)
	// FirstLook makes a starting recipe for the capture from start, keeping
	// the keys known names, and builds it (recon.FirstLook: the same as
	// "spotloom recipe"); the notes say what it chose and what disagrees.
	FirstLook(ctx context.Context, start recipe.Recipe, known recon.Known, progress func(stage string, fraction float64)) (*Look, error)
	// EstimateApertureOffsets returns one offset in degrees per aperture
	// that lines up neighbouring lines of the image built with r.
	EstimateApertureOffsets(ctx context.Context, r recipe.Recipe) ([]float64, error)
}

// Result is one finished build: the frames (one per stroke when strokes
// are split), the report, the recipe with every automatic value filled in,
// and every line found, in time order.
type Result struct {
	Frames []*recon.Frame
	Report recon.Report
	Recipe recipe.Recipe
	Lines  []Line
}

// Look is a first look at a capture: its build, the settings it chose
// (automatic values still null) and notes on what it chose and what
// disagrees.
type Look struct {
	Result   *Result
	Settings recipe.Recipe
	Notes    []string
}

// Line is one sweep of the beam as the engine found it; times are seconds
// from the start of the capture.
type Line struct {
	Number, Aperture, Stroke     int
	EdgeS                        float64 // index edge (or line start for one pulse per revolution)
	Repaired                     bool    // the edge was missing and filled in
	FieldStartS, FieldEndS       float64 // beam inside the field of view
	BaselineStartS, BaselineEndS float64 // beam-off interval used for the baseline
	YMM                          float64 // cross-scan position at mid-field
}

// OpenFunc reads a capture file; the window uses capture.Open unless a
// test gives another.
type OpenFunc func(path string, opts capture.Options) (*capture.Recording, error)

// EngineFunc makes the engine for a freshly opened capture.
type EngineFunc func(rec *capture.Recording) Engine
