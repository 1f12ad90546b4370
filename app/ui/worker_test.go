package ui

import (
	"context"
	"errors"
	"sync"
	"sync/atomic"
	"testing"

	"spotloom/recon"
)

func TestWorkerCoalescesBuilds(t *testing.T) {
	w := newWorker(nil, nil)
	started := make(chan int, 10)
	var ran, cancelled atomic.Int32
	var mu sync.Mutex
	var delivered []int
	build := func(n int, block bool) {
		submit(w, true, func(ctx context.Context, _ progressFunc) (int, error) {
			started <- n
			ran.Add(1)
			if block {
				<-ctx.Done()
				cancelled.Add(1)
				return 0, ctx.Err()
			}
			return n, nil
		}, func(v int, err error, stale bool) {
			if err == nil && !stale {
				mu.Lock()
				delivered = append(delivered, v)
				mu.Unlock()
			}
		})
	}
	build(1, true)
	<-started // build 1 is running
	build(2, false)
	build(3, false) // replaces the queued build 2
	w.wait()
	if got := ran.Load(); got != 2 {
		t.Errorf("%d builds ran, want 2 (the first, cancelled, and the newest)", got)
	}
	if cancelled.Load() != 1 {
		t.Error("the running build was not cancelled by a newer one")
	}
	if len(delivered) != 1 || delivered[0] != 3 {
		t.Errorf("delivered %v, want [3]", delivered)
	}
}

// TestWorkerCancelRightAfterSubmit: the task's context exists from the
// moment it is submitted, so a stop before its goroutine has started still
// cancels it (it used to be made inside the loop, after the stop).
func TestWorkerCancelRightAfterSubmit(t *testing.T) {
	w := newWorker(nil, nil)
	var got error
	submit(w, false, func(ctx context.Context, _ progressFunc) (struct{}, error) {
		return struct{}{}, ctx.Err()
	}, func(_ struct{}, err error, _ bool) { got = err })
	w.stop()
	w.wait()
	if !errors.Is(got, context.Canceled) {
		t.Errorf("the job saw %v, want context.Canceled", got)
	}
	if w.busy() {
		t.Error("the worker is busy after every outcome was handed over")
	}
}

// TestWorkerMarksStaleBuilds: a build that finished before a newer one was
// submitted, but is handed over after, is stale by the generation count.
func TestWorkerMarksStaleBuilds(t *testing.T) {
	release := make(chan struct{})
	var handOver []func()
	var mu sync.Mutex
	w := newWorker(nil, func(f func()) { mu.Lock(); handOver = append(handOver, f); mu.Unlock(); close(release) })
	var stale []bool
	submit(w, true, func(context.Context, progressFunc) (int, error) { return 1, nil },
		func(_ int, _ error, s bool) { stale = append(stale, s) })
	<-release // build 1 ran; its hand-over waits
	w.deliver = func(f func()) { f() }
	submit(w, true, func(context.Context, progressFunc) (int, error) { return 2, nil },
		func(_ int, _ error, s bool) { stale = append(stale, s) })
	mu.Lock()
	handOver[0]()
	mu.Unlock()
	w.wait()
	if len(stale) != 2 || !stale[1] && stale[0] == stale[1] {
		t.Fatalf("stale flags %v", stale)
	}
	if !stale[0] {
		t.Error("the older build was not marked stale")
	}
}

func TestWorkerKeepsOtherJobs(t *testing.T) {
	w := newWorker(nil, nil)
	release := make(chan struct{})
	var order []string
	var mu sync.Mutex
	note := func(s string) (int, error) {
		mu.Lock()
		order = append(order, s)
		mu.Unlock()
		return 0, nil
	}
	submit(w, false, func(context.Context, progressFunc) (int, error) {
		<-release
		return note("open")
	}, nil)
	submit(w, false, func(context.Context, progressFunc) (int, error) { return note("estimate") }, nil)
	submit(w, true, func(context.Context, progressFunc) (int, error) { return note("build") }, nil)
	close(release)
	w.wait()
	if len(order) != 3 || order[0] != "open" || order[1] != "estimate" || order[2] != "build" {
		t.Errorf("ran %v, want open, estimate, build", order)
	}
}

// TestHistoryStepsEndWithTheDrag: the changes of one drag are one step,
// however long it lasts; the next drag of the same control, a typed value
// or another control each make a step of their own.
func TestHistoryStepsEndWithTheDrag(t *testing.T) {
	h := newHistory()
	s := func(level float64) settings { return settings{Tone: recon.Tone{Level: level}} }

	h.begin("level")
	h.record("level", s(1)) // 1 → 2
	h.record("level", s(2)) // 2 → 3, same drag, even much later
	if len(h.undo) != 0 || !h.canUndo() {
		t.Errorf("during the drag %d steps are recorded (undo possible: %v), want none until it ends, with undo possible", len(h.undo), h.canUndo())
	}
	h.end()
	if len(h.undo) != 1 || h.undo[0].Tone.Level != 1 {
		t.Fatalf("the drag's end recorded %v, want one step back to level 1", h.undo)
	}
	h.begin("level")
	h.record("level", s(3)) // a second drag: a new step
	h.end()
	h.record("gamma", s(4)) // another control, typed
	h.record("gamma", s(5)) // typed again: a new step
	if len(h.undo) != 4 {
		t.Fatalf("%d steps, want 4", len(h.undo))
	}
	cur := s(6)
	for _, want := range []float64{5, 4, 3, 1} {
		var ok bool
		cur, ok = h.back(cur)
		if !ok || cur.Tone.Level != want {
			t.Fatalf("undo gave level %v (ok %v), want %v", cur.Tone.Level, ok, want)
		}
	}
	if _, ok := h.back(cur); ok {
		t.Error("undo past the first step")
	}
	cur, _ = h.forward(cur)
	if cur.Tone.Level != 3 {
		t.Errorf("redo gave %v, want 3", cur.Tone.Level)
	}
	h.record("window", cur)
	if h.canRedo() {
		t.Error("a new change kept the redo steps")
	}
}
