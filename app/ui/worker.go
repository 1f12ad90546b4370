package ui

import (
	"context"
	"sync"
)

// A job is one piece of engine work. Jobs run one at a time on the
// worker's goroutine, never on the UI goroutine; run's progress reports go
// to the worker's progress handler.
type job struct {
	// build jobs coalesce: a newer build replaces a pending one and cancels
	// a running one. Other jobs (opening a capture, estimating offsets)
	// queue behind and are never dropped.
	build bool
	run   func(ctx context.Context, progress func(stage string, fraction float64)) (any, error)
	// done receives run's result on the worker goroutine; superseded is
	// true when a newer build arrived while this one ran.
	done func(value any, err error, superseded bool)
}

// worker serialises engine work (a Session runs one Build at a time) and
// coalesces builds so a burst of control changes costs one build, not a
// backlog.
type worker struct {
	mu       sync.Mutex
	queue    []*job
	running  *job
	cancel   context.CancelFunc
	progress func(stage string, fraction float64)
	idle     *sync.Cond
}

func newWorker(progress func(stage string, fraction float64)) *worker {
	w := &worker{progress: progress}
	w.idle = sync.NewCond(&w.mu)
	return w
}

// submit queues j. A build job replaces any queued build and cancels a
// running build.
func (w *worker) submit(j *job) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if j.build {
		kept := w.queue[:0]
		for _, q := range w.queue {
			if !q.build {
				kept = append(kept, q)
			}
		}
		w.queue = kept
		if w.running != nil && w.running.build && w.cancel != nil {
			w.cancel()
		}
	}
	w.queue = append(w.queue, j)
	if w.running == nil {
		w.running = w.queue[0]
		w.queue = w.queue[1:]
		go w.loop(w.running)
	}
}

// stop cancels the running job and drops queued builds (the user pressed
// Cancel).
func (w *worker) stop() {
	w.mu.Lock()
	defer w.mu.Unlock()
	kept := w.queue[:0]
	for _, q := range w.queue {
		if !q.build {
			kept = append(kept, q)
		}
	}
	w.queue = kept
	if w.cancel != nil {
		w.cancel()
	}
}

// busy reports whether a job is running or queued.
func (w *worker) busy() bool {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.running != nil
}

// wait blocks until no job is running or queued.
func (w *worker) wait() {
	w.mu.Lock()
	defer w.mu.Unlock()
	for w.running != nil {
		w.idle.Wait()
	}
}

func (w *worker) loop(j *job) {
	for j != nil {
		ctx, cancel := context.WithCancel(context.Background())
		w.mu.Lock()
		w.cancel = cancel
		w.mu.Unlock()

		value, err := j.run(ctx, w.progress)
		cancel()

		w.mu.Lock()
		w.cancel = nil
		superseded := false
		for _, q := range w.queue {
			if q.build && j.build {
				superseded = true
			}
		}
		w.mu.Unlock()

		if j.done != nil {
			j.done(value, err, superseded)
		}

		w.mu.Lock()
		if len(w.queue) == 0 {
			w.running = nil
			w.idle.Broadcast()
			w.mu.Unlock()
			return
		}
		j = w.queue[0]
		w.queue = w.queue[1:]
		w.running = j
		w.mu.Unlock()
	}
}
