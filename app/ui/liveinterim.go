package ui

// The live view's engine until the incremental one (recon.Live) is in:
// every image is a whole build of the capture so far, correct but with a
// cost that grows with the recording.

import (
	"context"
	"sync"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/recipe"
)

// liveBuilder is the engine of a live view: frames appended as they come,
// the image so far, and new settings applied to what is in.
type liveBuilder interface {
	Append(interleaved []float32) error
	Result() *recon.Result
	Retune(ctx context.Context, r recipe.Recipe) error
	Recipe() recipe.Recipe
}

// resolveLive fills r's automatic values from first, the first seconds.
var resolveLive = func(ctx context.Context, first *capture.Recording, r recipe.Recipe) (recipe.Recipe, error) {
	return recon.NewSession(first).Resolve(ctx, r)
}

// startBuilder starts the engine of a live view with r resolved from first.
var startBuilder = func(ctx context.Context, first *capture.Recording, r recipe.Recipe) (liveBuilder, error) {
	rr, err := resolveLive(ctx, first, r)
	if err != nil {
		return nil, err
	}
	rec := &capture.Recording{SampleRateHz: first.SampleRateHz, Source: first.Source}
	for _, c := range first.Channels {
		rec.Channels = append(rec.Channels, capture.Channel{Name: c.Name, Unit: c.Unit})
	}
	return &interimLive{rec: rec, r: rr}, nil
}

// interimLive builds the whole capture so far for every image.
type interimLive struct {
	mu  sync.Mutex
	rec *capture.Recording
	r   recipe.Recipe
}

func (l *interimLive) Append(b []float32) error {
	l.mu.Lock()
	defer l.mu.Unlock()
	appendInterleaved(l.rec, b)
	return nil
}
func (l *interimLive) Result() *recon.Result {
	l.mu.Lock()
	defer l.mu.Unlock()
	res, err := recon.NewSession(snapshotRecording(l.rec)).Build(context.Background(), l.r, nil)
	if err != nil {
		return nil
	}
	return res
}
func (l *interimLive) Retune(ctx context.Context, r recipe.Recipe) error {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.r = r
	return nil
}
func (l *interimLive) Recipe() recipe.Recipe { l.mu.Lock(); defer l.mu.Unlock(); return l.r }
