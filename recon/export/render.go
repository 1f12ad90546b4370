package export

import (
	"encoding/binary"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"math"
	"strconv"
	"sync"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"

	"spotloom/recon"
)

// toneImage maps a frame through tone to an 8-bit (*image.Gray) or 16-bit
// (*image.Gray16) image; pixels without data get noData, a brightness
// from 0 (black) to 1 (white).
func toneImage(f *recon.Frame, tone recon.Tone, depth int, noData float64) draw.Image {
	r := image.Rect(0, 0, f.Width, f.Height)
	if depth == 8 {
		img := image.NewGray(r)
		hole := uint8(math.Round(noData * 255))
		for i, v := range f.Pix {
			if f.Covered[i] {
				img.Pix[i] = uint8(math.Round(tone.Map(v) * 255))
			} else {
				img.Pix[i] = hole
			}
		}
		return img
	}
	img := image.NewGray16(r)
	hole := uint16(math.Round(noData * 65535))
	for i, v := range f.Pix {
		s := hole
		if f.Covered[i] {
			s = uint16(math.Round(tone.Map(v) * 65535))
		}
		img.Pix[2*i] = uint8(s >> 8) // image.Gray16 is big-endian
		img.Pix[2*i+1] = uint8(s)
	}
	return img
}

// tiffSamples lays out an 8- or 16-bit image as little-endian TIFF rows.
func tiffSamples(img draw.Image) []byte {
	switch m := img.(type) {
	case *image.Gray:
		return m.Pix // stride = width: made by image.NewGray
	case *image.Gray16:
		out := make([]byte, len(m.Pix))
		for i := 0; i+1 < len(m.Pix); i += 2 {
			out[i], out[i+1] = m.Pix[i+1], m.Pix[i]
		}
		return out
	}
	return nil
}

// floatSamples lays out the raw frame values as little-endian IEEE 754
// binary32, uncovered pixels as noData.
func floatSamples(f *recon.Frame, noData float64) []byte {
	out := make([]byte, 4*len(f.Pix))
	hole := math.Float32bits(float32(noData))
	for i, v := range f.Pix {
		bits := hole
		if f.Covered[i] {
			bits = math.Float32bits(v)
		}
		binary.LittleEndian.PutUint32(out[4*i:], bits)
	}
	return out
}

// roundScaleBarMM returns the largest 1, 2 or 5 × 10^k mm that is at most
// a quarter of the frame's width, the usual choice of a bar that reads at
// a glance.
func roundScaleBarMM(widthMM float64) float64 {
	target := widthMM / 4
	if !(target > 0) || math.IsInf(target, 0) {
		return 0
	}
	decade := math.Pow(10, math.Floor(math.Log10(target)))
	for _, step := range []float64{5, 2, 1} {
		if v := step * decade; v <= target*(1+1e-12) {
			return v
		}
	}
	return decade
}

var goRegular = sync.OnceValues(func() (*opentype.Font, error) {
	return opentype.Parse(goregular.TTF)
})

// overlay burns a scale bar (lower left) and a caption (upper left) into
// img, white on a black box so they read on any image. It returns the bar
// length used in mm (0 when none). scaleBarMM < 0 picks a round length.
func overlay(img draw.Image, f *recon.Frame, scaleBarMM float64, caption string) (float64, error) {
	if scaleBarMM == 0 && caption == "" {
		return 0, nil
	}
	width, height := f.Width, f.Height
	textPx := min(max(float64(min(width, height))/24, 9), 48)
	fnt, err := goRegular()
	if err != nil {
		return 0, fmt.Errorf("the built-in font: %w", err)
	}
	face, err := opentype.NewFace(fnt, &opentype.FaceOptions{Size: textPx, DPI: 72, Hinting: font.HintingFull})
	if err != nil {
		return 0, fmt.Errorf("the built-in font at %.0f px: %w", textPx, err)
	}
	defer face.Close()
	metrics := face.Metrics()
	ascent, descent := metrics.Ascent.Ceil(), metrics.Descent.Ceil()
	pad := max(2, int(textPx/3))
	black := image.NewUniform(color.Black)
	white := image.NewUniform(color.White)
	drawText := func(x, baseline int, s string) {
		d := font.Drawer{Dst: img, Src: white, Face: face, Dot: fixed.P(x, baseline)}
		d.DrawString(s)
	}

	if caption != "" {
		textW := font.MeasureString(face, caption).Ceil()
		box := image.Rect(pad, pad, pad+textW+2*pad, pad+ascent+descent+2*pad)
		if box.Max.X > width || box.Max.Y > height {
			return 0, fmt.Errorf("the caption %q needs a %d×%d px box; the frame is %d×%d px: shorten it or use a finer pitch", caption, box.Dx()+2*pad, box.Dy()+2*pad, width, height)
		}
		draw.Draw(img, box, black, image.Point{}, draw.Src)
		drawText(box.Min.X+pad, box.Min.Y+pad+ascent, caption)
	}

	if scaleBarMM == 0 {
		return 0, nil
	}
	widthMM := float64(width) * f.PitchXMM
	thick := max(2, int(textPx/5))
	// barBox is the box a bar of mm and its label need, lower left.
	barBox := func(mm float64) (box image.Rectangle, barPx int, label string) {
		barPx = int(math.Round(mm / f.PitchXMM))
		label = strconv.FormatFloat(mm, 'g', -1, 64) + " mm"
		labelW := font.MeasureString(face, label).Ceil()
		boxW := max(barPx, labelW) + 2*pad
		boxH := pad + ascent + descent + pad/2 + thick + pad
		return image.Rect(pad, height-pad-boxH, pad+boxW, height-pad), barPx, label
	}
	fits := func(box image.Rectangle) bool { return box.Min.Y >= 0 && box.Max.X <= width }
	if scaleBarMM < 0 {
		// A round length of at most a quarter of the width; shorter
		// round ones while it and its label do not fit, and none on a
		// frame too small for any (its pitch is in the file either way).
		scaleBarMM = roundScaleBarMM(widthMM)
		for scaleBarMM > 0 {
			if box, px, _ := barBox(scaleBarMM); px < 1 {
				return 0, nil
			} else if fits(box) {
				break
			}
			scaleBarMM = roundScaleBarMM(4 * scaleBarMM * (1 - 1e-9))
		}
		if !(scaleBarMM > 0) {
			return 0, nil
		}
	}
	box, barPx, label := barBox(scaleBarMM)
	if barPx < 1 {
		return 0, fmt.Errorf("a %g mm scale bar is less than one pixel at %g mm pitch", scaleBarMM, f.PitchXMM)
	}
	if !fits(box) {
		return 0, fmt.Errorf("a %g mm scale bar (%d px) with its label needs a %d×%d px box; the frame is %d×%d px (%.4g mm wide): choose a shorter bar", scaleBarMM, barPx, box.Dx()+2*pad, box.Dy()+2*pad, width, height, widthMM)
	}
	draw.Draw(img, box, black, image.Point{}, draw.Src)
	barY := box.Max.Y - pad - thick
	draw.Draw(img, image.Rect(box.Min.X+pad, barY, box.Min.X+pad+barPx, barY+thick), white, image.Point{}, draw.Src)
	drawText(box.Min.X+pad, box.Min.Y+pad+ascent, label)
	return scaleBarMM, nil
}
