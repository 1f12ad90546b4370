package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"sync/atomic"
	"time"

	"golang.org/x/term"
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

// isTerminal says whether w is a terminal: a file that answers the
// terminal's own request for its settings. Being a character device is not
// enough: /dev/null is one, and a redirect there must stay quiet.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

// terminalWidth is the width of terminal w in columns, or 80 when it does
// not say.
func terminalWidth(w io.Writer) int {
	if f, ok := w.(*os.File); ok {
		if cols, _, err := term.GetSize(int(f.Fd())); err == nil && cols > 0 {
			return cols
		}
	}
	return 80
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
	line := []rune(fmt.Sprintf("%-24s %5.1f %%", stage, 100*fraction))
	if w := max(terminalWidth(p.w)-1, 1); len(line) > w {
		line = line[:w]
	}
	fmt.Fprintf(p.w, "\r%s\x1b[K", string(line))
}

// Done ends the progress line.
func (p *progressPrinter) Done() {
	if p == nil || !p.enabled {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.shown {
		fmt.Fprint(p.w, "\r\x1b[K")
	}
}
