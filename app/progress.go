package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"sync/atomic"
	"time"
)

// stageHook, when tests set it, sees every progress report, terminal or
// not, on the goroutine doing the work.
var stageHook atomic.Pointer[func(stage string, fraction float64)]

// progressPrinter shows long work on stderr, but only when stderr is a
// terminal, so scripts and CI logs stay clean.
type progressPrinter struct {
	mu      sync.Mutex
	w       io.Writer
	enabled bool
	last    time.Time
	shown   bool
}

func newProgress(stderr io.Writer) *progressPrinter {
	return &progressPrinter{w: stderr, enabled: isTerminal(stderr)}
}

// isTerminal says whether w is a terminal (a character device).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

// Report shows stage and fraction (0..1); calls closer than 100 ms apart
// are dropped. It is safe to call from several goroutines.
func (p *progressPrinter) Report(stage string, fraction float64) {
	if hook := stageHook.Load(); hook != nil {
		(*hook)(stage, fraction)
	}
	if p == nil || !p.enabled {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	now := time.Now()
	if fraction < 1 && now.Sub(p.last) < 100*time.Millisecond {
		return
	}
	p.last = now
	p.shown = true
	fmt.Fprintf(p.w, "\r%-24s %5.1f %%", stage, 100*fraction)
}

// Done ends the progress line.
func (p *progressPrinter) Done() {
	if p == nil || !p.enabled {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.shown {
		fmt.Fprintf(p.w, "\r%-40s\r", "")
	}
}
