package recon

// Hooks for the external tests of the live build's first lines
// (earlyLines).

import "testing"

// LiveKept is how many of the first lines l keeps gridded.
func LiveKept(l *Live) int {
	l.mu.Lock()
	defer l.mu.Unlock()
	return len(l.core.early.lines)
}

// LiveZone is how many samples at a kept line's start l leaves off its
// canvas; SetLiveZone sets it (before any line is kept).
func LiveZone(l *Live) int {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.core.early.zone
}

func SetLiveZone(l *Live, zone int) {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.core.early.zone = zone
}

// SpoilLiveKept changes the baseline kept for the i-th kept line, as if
// the line had been worked out differently since.
func SpoilLiveKept(l *Live, i int) {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.core.early.lines[i].l.base0 += 1e-3
}

// TruthDotFit is truthDotFit, for the live tests.
func TruthDotFit(t *testing.T, f *Frame, dots [][2]float64, diameter float64) (rms, scaleX, scaleY float64, n int) {
	t.Helper()
	return truthDotFit(t, f, dots, diameter)
}
