package export

import (
	"bytes"
	"image"
	"testing"
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
