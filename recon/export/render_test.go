package export

import (
	"bytes"
	"image"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotloom/recon"
)

// An automatic scale bar never fails an export: on a frame too small for
// any bar and its label the export has none (the image is as rendered
// without one), and on one large enough it is the round length of the
// 1-2-5 series at most a quarter of the width (400 mm → 100 mm, by hand).
func TestAutoScaleBarFitsOrIsLeftOut(t *testing.T) {
	tiny := testFrame(28, 41, 10)
	plain := image.NewRGBA(image.Rect(0, 0, 28, 41))
	img := image.NewRGBA(image.Rect(0, 0, 28, 41))
	bar, err := overlay(img, tiny, -1, "")
	if err != nil || bar != 0 {
		t.Errorf("auto bar on a 28×41 px frame: %g mm, %v; want none and no error", bar, err)
	}
	if !bytes.Equal(img.Pix, plain.Pix) {
		t.Error("a bar that was left out still drew on the image")
	}
	if _, err := overlay(img, tiny, 50, ""); err == nil {
		t.Error("a 50 mm bar asked for on a 28×41 px frame was drawn without a word")
	}
	big := testFrame(400, 300, 1)
	bar, err = overlay(image.NewRGBA(image.Rect(0, 0, 400, 300)), big, -1, "")
	if err != nil || bar != 100 {
		t.Errorf("auto bar on a 400 mm wide frame: %g mm, %v; want 100 mm", bar, err)
	}
}

// Write tells Note when an automatic bar was left out, once per frame
// left without one, and the PNG is written all the same (decoded by the
// standard library's image/png at the frame's size); a frame large enough
// gets its bar and no note.
func TestWriteNotesABarLeftOut(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		w, h  int
		notes int
	}{{28, 41, 1}, {400, 300, 0}} {
		var notes []string
		path := filepath.Join(dir, "f.png")
		err := Write(path, []*recon.Frame{testFrame(c.w, c.h, 1)}, Options{Depth: 8, ScaleBarMM: -1, Force: true, Note: func(s string) { notes = append(notes, s) }})
		if err != nil {
			t.Fatalf("%d×%d: %v", c.w, c.h, err)
		}
		if len(notes) != c.notes || c.notes == 1 && !strings.Contains(notes[0], "too small for a scale bar") {
			t.Errorf("%d×%d: notes %q, want %d", c.w, c.h, notes, c.notes)
		}
		f, err := os.Open(path)
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Errorf("%d×%d: image/png cannot read the export: %v", c.w, c.h, err)
		} else if b := img.Bounds(); b.Dx() != c.w || b.Dy() != c.h {
			t.Errorf("%d×%d: image/png reads %v", c.w, c.h, b)
		}
	}
}
