package live

import (
	"context"
	"fmt"
)

// Format is what a source delivers: interleaved float32 frames, ±1.0 full
// scale, at a whole number of hertz.
type Format struct {
	RateHz   int
	Channels int
}

// Source is where live samples come from: a sound card, a replay of a
// file, a synthetic signal in tests. Start begins delivery and returns at
// once; deliver is then called on the source's own goroutine (for a device,
// its audio callback) with whole interleaved frames, which it copies and
// must not keep; deliver never blocks. Stop ends delivery: after it
// returns, deliver is not called again. Done is closed when a source that
// has an end (a replay) has delivered its last frame.
type Source interface {
	Format() Format
	Name() string
	Start(deliver func(interleaved []float32)) error
	Stop() error
	Done() <-chan struct{}
}

// Validate checks a format before a recording starts.
func (f Format) Validate() error {
	if f.RateHz < 1 {
		return fmt.Errorf("sample rate %d Hz: expected a positive whole number of hertz", f.RateHz)
	}
	if f.Channels < 1 {
		return fmt.Errorf("%d channels: expected at least 1", f.Channels)
	}
	return nil
}

// waitDone returns when ctx ends or src is done.
func waitDone(ctx context.Context, src Source) {
	select {
	case <-ctx.Done():
	case <-src.Done():
	}
}
