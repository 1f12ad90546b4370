package main

import (
	"testing"

	"fyne.io/fyne/v2"
)

func TestFitSize(t *testing.T) {
	// Worked by hand: units = pixels / scale, never more than asked for.
	want := fyne.NewSize(1440, 900)
	for _, c := range []struct {
		w, h  int
		scale float32
		out   fyne.Size
	}{
		{1366, 768, 1, fyne.NewSize(1366, 768)},
		{1024, 700, 1, fyne.NewSize(1024, 700)},
		{2732, 1536, 2, fyne.NewSize(1366, 768)},
		{3840, 2160, 1, want},
		{0, 0, 1, want},
		{1366, 768, 0, fyne.NewSize(1366, 768)},
	} {
		if got := fitSize(want, c.w, c.h, c.scale); got != c.out {
			t.Errorf("%d×%d px at scale %g: %v, want %v", c.w, c.h, c.scale, got, c.out)
		}
	}
}
