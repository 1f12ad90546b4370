package ui

import (
	"sync"
	"time"
)

// liveFeed carries frames from where they arrive (the recorder's tap, or a
// source's delivery when nothing is written) to the live engine's
// goroutine. push copies under a short lock and never waits for the
// engine, so a slow image never costs a sample; take hands over everything
// pushed since the last take. (The meters' peaks are found where the
// engine's goroutine scans what it takes: widenRanges.)
type liveFeed struct {
	channels int
	mu       sync.Mutex
	buf      []float32
	spare    []float32 // the buffer handed out last, reused
	frames   int64     // frames pushed so far
	since    time.Time // when the oldest frame not yet taken arrived
	closed   bool
	wake     chan struct{} // signalled (without blocking) on push and close
}

func newLiveFeed(channels int) *liveFeed {
	return &liveFeed{channels: channels, wake: make(chan struct{}, 1)}
}

// push takes whole interleaved frames; it does not keep the slice.
func (f *liveFeed) push(interleaved []float32) {
	n := len(interleaved) - len(interleaved)%f.channels
	f.mu.Lock()
	if !f.closed {
		if len(f.buf) == 0 {
			f.since = time.Now()
		}
		f.buf = append(f.buf, interleaved[:n]...)
		f.frames += int64(n / f.channels)
	}
	f.mu.Unlock()
	f.signal()
}

func (f *liveFeed) signal() {
	select {
	case f.wake <- struct{}{}:
	default:
	}
}

// close says no more frames come; take then reports it once drained.
func (f *liveFeed) close() {
	f.mu.Lock()
	f.closed = true
	f.mu.Unlock()
	f.signal()
}

// take returns the frames pushed since the last take (valid until the
// next take), the frames pushed in all and whether the feed is closed
// (with nothing left after these frames).
func (f *liveFeed) take() (block []float32, frames int64, closed bool) {
	block, frames, closed, _ = f.takeSince()
	return block, frames, closed
}

// takeSince is take, and when the oldest of the frames arrived.
func (f *liveFeed) takeSince() (block []float32, frames int64, closed bool, since time.Time) {
	f.mu.Lock()
	defer f.mu.Unlock()
	since = f.since
	block = f.buf
	f.buf, f.spare = f.spare[:0], block
	return block, f.frames, f.closed, since
}
