package live

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"syscall"
	"time"

	"spotloom/capture"
)

// Options of a recording.
type Options struct {
	// Path is the WAV file to write; it and its sidecar must not exist.
	Path string
	// SampleType is the stored type: "int16", "int24" or "float32".
	SampleType string
	// MaxFrames ends the recording after this many frames (0: until the
	// context ends or the source is done).
	MaxFrames int64
	// RingSeconds is how much the ring buffer between the source and the
	// writer holds (default 2 s): how long the disk may stall before
	// samples are lost.
	RingSeconds float64
	// CommitEvery is how often the WAV's sizes are rewritten and the file
	// synced (default 500 ms). Every block taken from the ring reaches the
	// file at once, so a killed process loses none; a power cut may lose what
	// came after the last commit.
	CommitEvery time.Duration
	// Status, when set, is called on the writer goroutine about ten times
	// a second and after every commit.
	Status func(Status)
	// Tap, when set, is called on the writer goroutine with every frame
	// as it enters the file, in order, with the values a reader of the file
	// will get (rounded to the stored type; lost frames as the zeros that
	// mark them), so a live view sees exactly what is kept. It must not
	// keep the slice, and should return quickly.
	Tap func(interleaved []float32)
	// Create makes the WAV at Path; nil means capture.CreateWAVStream,
	// which creates a new file and never replaces one. Tests give one
	// whose writes fail, as on a full disk.
	Create func(path string, f capture.WAVStreamFormat) (*capture.WAVStream, error)
}

// Status is the progress of a recording.
type Status struct {
	Frames        int64     // frames in the file so far, lost ones included
	Committed     int64     // frames covered by the file's header and synced
	RateHz        int       // frames per second
	Peak          []float32 // per channel, largest |sample| since the last Status
	Overruns      int       // stretches of lost frames so far
	OverrunFrames int64
}

// Result is what a finished recording holds.
type Result struct {
	Path, SidecarPath string
	Sidecar           Sidecar
}

// Record records src into opts.Path until ctx ends, the source is done,
// MaxFrames are in or writing fails. Samples cross from the source's
// goroutine to this one through a ring buffer; this goroutine alone writes
// the WAV, commits it every CommitEvery and keeps the sidecar up to date.
// Frames lost to a full ring are written as zeros at their place and listed
// in the sidecar. A write error (such as a full disk) stops the recording;
// the frames already written stay readable, and the error says so.
func Record(ctx context.Context, src Source, opts Options) (*Result, error) {
	format := src.Format()
	if err := format.Validate(); err != nil {
		return nil, fmt.Errorf("%s: %v", src.Name(), err)
	}
	if opts.RingSeconds <= 0 {
		opts.RingSeconds = 2
	}
	if opts.CommitEvery <= 0 {
		opts.CommitEvery = 500 * time.Millisecond
	}
	if opts.SampleType == "" {
		opts.SampleType = "int16"
	}
	side := Sidecar{Format: SidecarFormat, File: filepath.Base(opts.Path), Device: src.Name(),
		SampleRateHz: format.RateHz, Channels: format.Channels, SampleType: opts.SampleType,
		Started: time.Now().UTC().Truncate(time.Millisecond), Overruns: []Overrun{}}
	sidePath := SidecarPath(opts.Path)
	if _, err := os.Lstat(sidePath); err == nil {
		return nil, fmt.Errorf("%s already exists; a recording never overwrites a file, choose another name", sidePath)
	}
	create := opts.Create
	if create == nil {
		create = capture.CreateWAVStream
	}
	stream, err := create(opts.Path, capture.WAVStreamFormat{RateHz: format.RateHz, Channels: format.Channels, SampleType: opts.SampleType})
	if err != nil {
		return nil, err
	}
	if err := createSidecar(sidePath, &side); err != nil {
		stream.Close()
		os.Remove(opts.Path)
		return nil, err
	}
	w := &writer{stream: stream, side: &side, sidePath: sidePath, opts: opts, format: format,
		ring: newRing(format.Channels, max(int(opts.RingSeconds*float64(format.RateHz)), 1)),
		peak: make([]float32, format.Channels)}
	if err := src.Start(w.ring.push); err != nil {
		w.finish(fmt.Sprintf("the source did not start: %v", err))
		return nil, fmt.Errorf("%s: %v", src.Name(), err)
	}
	werr := w.run(ctx, src)
	src.Stop()
	if werr == nil && !w.full() {
		// Drain what the source delivered before it stopped, and mark a
		// loss at the very end too.
		werr = w.ring.pop(w.data, w.lost)
		if lost := w.ring.takeLost(); werr == nil && lost > 0 {
			werr = w.lost(lost)
		}
	}
	stopped := "stopped"
	switch {
	case werr != nil:
		stopped = werr.Error()
	case w.full():
		stopped = "reached the requested length"
	case ctx.Err() == nil:
		stopped = "the source ended"
	}
	if err := w.finish(stopped); err != nil && werr == nil {
		werr = err
	}
	res := &Result{Path: opts.Path, SidecarPath: sidePath, Sidecar: side}
	if werr != nil {
		return res, w.explain(werr)
	}
	return res, nil
}

// writer is the recording's own goroutine state.
type writer struct {
	stream   *capture.WAVStream
	side     *Sidecar
	sidePath string
	opts     Options
	format   Format
	ring     *ring
	peak     []float32
	tapped   []float32 // Tap's buffer
}

func (w *writer) full() bool { return w.opts.MaxFrames > 0 && w.stream.Frames() >= w.opts.MaxFrames }

// room is how many more frames the recording takes.
func (w *writer) room(n int64) int64 {
	if w.opts.MaxFrames <= 0 {
		return n
	}
	return max(min(n, w.opts.MaxFrames-w.stream.Frames()), 0)
}

func (w *writer) data(interleaved []float32) error {
	n := w.room(int64(len(interleaved) / w.format.Channels))
	interleaved = interleaved[:n*int64(w.format.Channels)]
	nch := w.format.Channels
	for c := range nch {
		p := w.peak[c]
		for i := c; i < len(interleaved); i += nch {
			if a := abs32(interleaved[i]); a > p {
				p = a
			}
		}
		w.peak[c] = p
	}
	if w.opts.Tap == nil || len(interleaved) == 0 {
		return w.stream.Write(interleaved)
	}
	if cap(w.tapped) < len(interleaved) {
		w.tapped = make([]float32, len(interleaved))
	}
	w.tapped = w.tapped[:len(interleaved)]
	if err := w.stream.WriteKept(w.tapped, interleaved); err != nil {
		return err
	}
	w.tap(w.tapped)
	return nil
}

// abs32 is |v| (NaN stays NaN, which no comparison takes): the sign bit
// cleared, with no branch to guess wrong on a signal's random signs.
func abs32(v float32) float32 {
	return math.Float32frombits(math.Float32bits(v) &^ (1 << 31))
}

// tap hands frames just written to opts.Tap as the file stores them
// (zeros, or what WriteKept decoded from the bytes written).
func (w *writer) tap(kept []float32) {
	if w.opts.Tap != nil && len(kept) > 0 {
		w.opts.Tap(kept)
	}
}

func (w *writer) lost(frames uint64) error {
	n := w.room(int64(frames))
	if n == 0 {
		return nil
	}
	w.side.Overruns = append(w.side.Overruns, Overrun{AtFrame: w.stream.Frames(), Frames: n})
	w.side.OverrunFrames += n
	if err := w.stream.WriteSilence(n); err != nil {
		return err
	}
	if w.opts.Tap != nil {
		zeros := make([]float32, min(n, 4096)*int64(w.format.Channels))
		for left := n; left > 0; left -= 4096 {
			w.tap(zeros[:min(left, 4096)*int64(w.format.Channels)])
		}
	}
	return nil
}

// run moves samples from the ring to the file until the recording ends.
func (w *writer) run(ctx context.Context, src Source) error {
	tick := time.NewTicker(20 * time.Millisecond)
	defer tick.Stop()
	lastCommit, lastStatus := time.Now(), time.Now()
	for {
		select {
		case <-ctx.Done():
			return nil
		case <-src.Done():
			return nil
		case <-tick.C:
		}
		if err := w.ring.pop(w.data, w.lost); err != nil {
			return err
		}
		// Every block taken reaches the file at once, so a kill loses
		// nothing the writer had; the header follows at the next commit.
		if err := w.stream.Flush(); err != nil {
			return err
		}
		if w.full() {
			return nil
		}
		now := time.Now()
		if now.Sub(lastCommit) >= w.opts.CommitEvery {
			lastCommit = now
			if err := w.commit(); err != nil {
				return err
			}
			w.status()
			lastStatus = now
		} else if now.Sub(lastStatus) >= 100*time.Millisecond {
			lastStatus = now
			w.status()
		}
	}
}

// commit makes everything so far durable: the WAV, then its sidecar.
func (w *writer) commit() error {
	if err := w.stream.Commit(); err != nil {
		return err
	}
	w.side.Frames = w.stream.Frames()
	return updateSidecar(w.sidePath, w.side)
}

func (w *writer) status() {
	if w.opts.Status == nil {
		return
	}
	peak := append([]float32(nil), w.peak...)
	clear(w.peak)
	w.opts.Status(Status{Frames: w.stream.Frames(), Committed: w.side.Frames, RateHz: w.format.RateHz, Peak: peak,
		Overruns: len(w.side.Overruns), OverrunFrames: w.side.OverrunFrames})
}

// finish closes the WAV and writes the final sidecar.
func (w *writer) finish(stopped string) error {
	err := w.stream.Close()
	w.side.Frames = w.stream.Frames()
	w.side.Finished = true
	w.side.Stopped = stopped
	if serr := updateSidecar(w.sidePath, w.side); err == nil {
		err = serr
	}
	w.status()
	return err
}

// explain turns a write error into the one-line message a user needs.
func (w *writer) explain(err error) error {
	secs := float64(w.stream.Frames()) / float64(w.format.RateHz)
	if errors.Is(err, syscall.ENOSPC) {
		return fmt.Errorf("%s: the disk is full; the recording stopped after %.1f s, and those %.1f s are in the file: %w", w.opts.Path, secs, secs, err)
	}
	return fmt.Errorf("%s: the recording stopped after %.1f s (the samples before are in the file): %w", w.opts.Path, secs, err)
}
