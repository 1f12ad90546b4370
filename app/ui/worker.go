package ui

import (
	"context"
	"sync"
)

// progressFunc receives a job's stage and how far it is (0..1).
type progressFunc = func(stage string, fraction float64)

// A task is one piece of engine work queued on a worker. Its context is
// made when it is submitted, so a Cancel right after a submit reaches it.
type task struct {
	build  bool
	gen    uint64 // the worker's build generation when it was submitted
	ctx    context.Context
	cancel context.CancelFunc
	// run does the work on the worker goroutine and returns what hands the
	// outcome over on the UI goroutine.
	run func(ctx context.Context, progress progressFunc) func(stale bool)
}

// worker serialises engine work (a Session runs one Build at a time) and
// coalesces builds so a burst of control changes costs one build, not a
// backlog. Outcomes come back through deliver (fyne.Do in the window), one
// at a time and in order; a build outcome is stale when a newer build was
// submitted after it.
type worker struct {
	mu       sync.Mutex
	queue    []*task
	running  *task
	gen      uint64 // generation of the newest build submitted
	pending  int    // tasks submitted whose outcome has not been handed over
	progress progressFunc
	deliver  func(func())
	// settled runs on the hand-over goroutine after the last outcome is
	// handed over, before wait returns.
	settled func()
	idle    *sync.Cond
}

// newWorker makes a worker whose outcomes are handed over by deliver (nil
// runs them on the worker goroutine, for tests).
func newWorker(progress progressFunc, deliver func(func())) *worker {
	if deliver == nil {
		deliver = func(f func()) { f() }
	}
	if progress == nil {
		progress = func(string, float64) {}
	}
	w := &worker{progress: progress, deliver: deliver}
	w.idle = sync.NewCond(&w.mu)
	return w
}

// submit queues run on w. A build replaces any queued build and cancels a
// running one. done receives run's outcome on the UI goroutine (through the
// worker's deliver); stale is true for a build a newer build has replaced.
func submit[T any](w *worker, build bool, run func(ctx context.Context, progress progressFunc) (T, error), done func(value T, err error, stale bool)) {
	w.mu.Lock()
	defer w.mu.Unlock()
	ctx, cancel := context.WithCancel(context.Background())
	t := &task{build: build, ctx: ctx, cancel: cancel}
	if build {
		w.gen++
		kept := w.queue[:0]
		for _, q := range w.queue {
			if q.build {
				q.cancel()
				w.pending--
			} else {
				kept = append(kept, q)
			}
		}
		w.queue = kept
		if w.running != nil && w.running.build {
			w.running.cancel()
		}
	}
	t.gen = w.gen
	t.run = func(ctx context.Context, progress progressFunc) func(bool) {
		value, err := run(ctx, progress)
		return func(stale bool) {
			if done != nil {
				done(value, err, stale)
			}
		}
	}
	w.pending++
	w.queue = append(w.queue, t)
	if w.running == nil {
		w.next()
	}
}

// next starts the first queued task. Call with mu held.
func (w *worker) next() {
	if len(w.queue) == 0 {
		w.running = nil
		return
	}
	t := w.queue[0]
	w.queue = w.queue[1:]
	w.running = t
	go w.loop(t)
}

func (w *worker) loop(t *task) {
	hand := t.run(t.ctx, w.progress)
	t.cancel()
	w.deliver(func() {
		w.mu.Lock()
		stale := t.build && t.gen != w.gen
		w.mu.Unlock()
		hand(stale)
		w.mu.Lock()
		last := w.pending == 1
		w.mu.Unlock()
		if last && w.settled != nil {
			w.settled()
		}
		w.mu.Lock()
		w.pending--
		if w.pending <= 0 {
			w.pending = 0
			w.idle.Broadcast()
		}
		w.mu.Unlock()
	})
	w.mu.Lock()
	w.next()
	w.mu.Unlock()
}

// stop cancels the running task and every queued one, and drops queued
// builds (the user pressed Cancel). Queued tasks that are not builds still
// run, see their cancelled context and report it.
func (w *worker) stop() {
	w.mu.Lock()
	defer w.mu.Unlock()
	kept := w.queue[:0]
	for _, q := range w.queue {
		q.cancel()
		if q.build {
			w.pending--
		} else {
			kept = append(kept, q)
		}
	}
	w.queue = kept
	if w.running != nil {
		w.running.cancel()
	}
	if w.pending <= 0 {
		w.pending = 0
		w.idle.Broadcast()
	}
}

// busy reports whether a task is queued, running or not yet handed over.
func (w *worker) busy() bool {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.pending > 0
}

// wait blocks until every task submitted has been handed over. It must not
// be called on the goroutine deliver runs on.
func (w *worker) wait() {
	w.mu.Lock()
	defer w.mu.Unlock()
	for w.pending > 0 {
		w.idle.Wait()
	}
}
