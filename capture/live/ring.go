package live

import (
	"sync/atomic"
)

// ring is a single-producer, single-consumer queue of interleaved frames
// between an audio callback (the producer, which must never block or
// allocate) and the writer goroutine (the consumer). When the writer falls
// behind and the ring is full, the frames that do not fit are counted as
// lost, and the next frames that do fit are preceded by a gap event, so the
// writer marks the loss at its place in time instead of closing it up.
type ring struct {
	channels int
	samples  []float32 // capacity frames × channels
	frames   uint64    // capacity in frames

	written atomic.Uint64 // frames ever put in (producer)
	read    atomic.Uint64 // frames ever taken out (consumer)

	// Gap events, a second small SPSC queue.
	gaps       []gap
	gapWritten atomic.Uint64
	gapRead    atomic.Uint64

	pendingLost uint64 // producer only: frames lost since the last gap event
}

// gap says that lost frames were dropped just before ring frame at.
type gap struct {
	at   uint64 // ring position (frames put in before the loss)
	lost uint64
}

func newRing(channels int, frames int) *ring {
	return &ring{channels: channels, samples: make([]float32, frames*channels), frames: uint64(frames), gaps: make([]gap, 256)}
}

// push puts interleaved frames in, dropping (and counting) what does not
// fit. It is called by the producer only.
func (r *ring) push(interleaved []float32) {
	n := uint64(len(interleaved) / r.channels)
	w := r.written.Load()
	free := r.frames - (w - r.read.Load())
	if r.pendingLost > 0 && free > 0 {
		if g := r.gapWritten.Load(); g-r.gapRead.Load() < uint64(len(r.gaps)) {
			r.gaps[g%uint64(len(r.gaps))] = gap{at: w, lost: r.pendingLost}
			r.gapWritten.Store(g + 1)
			r.pendingLost = 0
		} else {
			free = 0 // no room to mark the gap: keep losing until there is
		}
	}
	take := min(n, free)
	ch := uint64(r.channels)
	start := w % r.frames
	first := min(take, r.frames-start)
	copy(r.samples[start*ch:], interleaved[:first*ch])
	copy(r.samples, interleaved[first*ch:take*ch])
	r.written.Store(w + take)
	r.pendingLost += n - take
}

// takeLost returns and clears the frames lost since the last gap event;
// call it only once the producer has stopped.
func (r *ring) takeLost() uint64 {
	lost := r.pendingLost
	r.pendingLost = 0
	return lost
}

// pop hands the consumer everything available, in order: stretches of
// frames (data) and gaps (lost frames at their place). It is called by the
// consumer only.
func (r *ring) pop(data func(interleaved []float32) error, lost func(frames uint64) error) error {
	w := r.written.Load() // before the gaps: every gap before w is then visible
	rd := r.read.Load()
	for rd < w {
		end := w
		if g := r.gapRead.Load(); g < r.gapWritten.Load() {
			next := r.gaps[g%uint64(len(r.gaps))]
			if next.at <= rd {
				if err := lost(next.lost); err != nil {
					return err
				}
				r.gapRead.Store(g + 1)
				continue
			}
			end = min(end, next.at)
		}
		start := rd % r.frames
		stop := min(start+(end-rd), r.frames)
		if err := data(r.samples[start*uint64(r.channels) : stop*uint64(r.channels)]); err != nil {
			return err
		}
		rd += stop - start
		r.read.Store(rd)
	}
	// Gaps exactly at the end of what is there come out now too.
	for g := r.gapRead.Load(); g < r.gapWritten.Load(); g++ {
		next := r.gaps[g%uint64(len(r.gaps))]
		if next.at > rd {
			break
		}
		if err := lost(next.lost); err != nil {
			return err
		}
		r.gapRead.Store(g + 1)
	}
	return nil
}
