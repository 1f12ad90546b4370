package ui

import (
	"context"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"spotloom/recon"
)

func TestWorkerCoalescesBuilds(t *testing.T) {
	w := newWorker(nil)
	started := make(chan int, 10)
	var ran, cancelled atomic.Int32
	var mu sync.Mutex
	var delivered []int
	build := func(n int, block bool) *job {
		return &job{
			build: true,
			run: func(ctx context.Context, _ func(string, float64)) (any, error) {
				started <- n
				ran.Add(1)
				if block {
					<-ctx.Done()
					cancelled.Add(1)
					return nil, ctx.Err()
				}
				return n, nil
			},
			done: func(v any, err error, _ bool) {
				if err == nil {
					mu.Lock()
					delivered = append(delivered, v.(int))
					mu.Unlock()
				}
			},
		}
	}
	w.submit(build(1, true))
	<-started // build 1 is running
	w.submit(build(2, false))
	w.submit(build(3, false)) // replaces the queued build 2
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

func TestWorkerKeepsOtherJobs(t *testing.T) {
	w := newWorker(nil)
	release := make(chan struct{})
	var order []string
	var mu sync.Mutex
	note := func(s string) {
		mu.Lock()
		order = append(order, s)
		mu.Unlock()
	}
	w.submit(&job{run: func(context.Context, func(string, float64)) (any, error) {
		<-release
		note("open")
		return nil, nil
	}})
	w.submit(&job{run: func(context.Context, func(string, float64)) (any, error) { note("estimate"); return nil, nil }})
	w.submit(&job{build: true, run: func(context.Context, func(string, float64)) (any, error) { note("build"); return nil, nil }})
	close(release)
	w.wait()
	if len(order) != 3 || order[0] != "open" || order[1] != "estimate" || order[2] != "build" {
		t.Errorf("ran %v, want open, estimate, build", order)
	}
}

func TestHistoryMergesRunsOfOneControl(t *testing.T) {
	h := newHistory()
	now := time.Unix(0, 0)
	h.now = func() time.Time { return now }
	s := func(level float64) settings { return settings{Tone: recon.Tone{Level: level}} }

	h.record("level", s(1)) // 1 → 2
	now = now.Add(100 * time.Millisecond)
	h.record("level", s(2)) // 2 → 3, same drag
	now = now.Add(100 * time.Millisecond)
	h.record("gamma", s(3)) // another control: a new step
	now = now.Add(3 * time.Second)
	h.record("gamma", s(4)) // after a pause: a new step
	if len(h.undo) != 3 {
		t.Fatalf("%d steps, want 3", len(h.undo))
	}
	cur := s(5)
	for _, want := range []float64{4, 3, 1} {
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
