package ui

import (
	"context"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/recipe"
)

// liveBuilder is the engine of a live view (recon.Live): frames appended
// as they come, the image so far, and new settings applied to what is in.
type liveBuilder interface {
	Append(interleaved []float32) error
	Result() *recon.Result
	Retune(ctx context.Context, r recipe.Recipe) error
	Recipe() recipe.Recipe
	// Channels is the samples appended so far, the builder's own store
	// (read only), which the capture shown shares.
	Channels() [][]float32
}

// resolveLive fills r's automatic values from first, the first seconds of
// a capture.
var resolveLive = recon.ResolveLive

// startBuilder starts the incremental build of a live view with r resolved
// from first; first's frames are then appended by the caller.
func startBuilder(ctx context.Context, first *capture.Recording, r recipe.Recipe) (liveBuilder, error) {
	resolved, err := resolveLive(ctx, first, r)
	if err != nil {
		return nil, err
	}
	l, err := recon.NewLive(resolved, recon.LayoutOf(first))
	if err != nil {
		return nil, err
	}
	return l, nil
}
