package ui

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"slices"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon"
	"spotloom/recon/measure"
)

// Colours of the image view. No-data pixels are hatched in violet so they
// can never be mistaken for a dark (low) value.
var (
	colourOutside = color.NRGBA{R: 0x1c, G: 0x1e, B: 0x22, A: 0xff}
	colourNoDataA = color.NRGBA{R: 0x50, G: 0x2c, B: 0x6e, A: 0xff}
	colourNoDataB = color.NRGBA{R: 0x7a, G: 0x48, B: 0xa0, A: 0xff}
)

// Pointer is what lies under the pointer in the image view.
type Pointer struct {
	XMM, YMM float64 // position on the frame's millimetre grid
	Col, Row int     // pixel under the pointer
	Value    float32 // frame value there (valid when Covered)
	Inside   bool    // the pointer is over the frame
	Covered  bool    // the pixel holds data
}

// ImageView shows one frame on its millimetre grid with zoom (wheel,
// buttons, fit), pan (drag), a scale bar and hatched no-data pixels.
type ImageView struct {
	widget.BaseWidget

	// OnPointer is called when the pointer moves over the view; Inside is
	// false when it leaves.
	OnPointer func(Pointer)
	// OnTap is called when the user clicks the frame at a position in mm.
	OnTap func(p Pointer)
	// OnZoom is called when the zoom changes (fyne units per mm).
	OnZoom func(unitsPerMM float32)
	// OnDrawn is called when a rectangle or line has been drawn with the
	// tool kind: X0,Y0,X1,Y1 in frame mm (imagemarks.go).
	OnDrawn func(kind measure.Kind, at [4]float64)
	// OnTool is called when the drawing tool changes ("" for panning).
	OnTool func(kind measure.Kind)
	// OnMark is called when a measurement's mark is clicked, with its label.
	OnMark func(label string)

	mu      sync.Mutex // guards the fields the raster reads while painting
	frame   *recon.Frame
	tone    recon.Tone
	toned   []uint8 // grey per frame pixel after tone; 0 where no data
	spare   []uint8 // the toned of the frame before, reused by retoneShifted
	covered []bool
	fit     bool
	autoFit bool    // fit again on resize until the user zooms or pans
	zoom    float32 // fyne units per mm
	centreX float64 // mm at the centre of the view
	centreY float64
	size    fyne.Size
	hover   fyne.Position // last pointer position over the view
	hovered bool

	tool     measure.Kind    // what a drag draws; "" pans
	marks    []measure.Shape // measurements drawn over the frame
	selected string          // label of the highlighted mark
	drawn    *drawing        // the shape being drawn
	press    fyne.Position   // where the last press was
	pressed  bool
}

// NewImageView returns an empty view that fits frames to its size.
func NewImageView() *ImageView {
	v := &ImageView{fit: true, autoFit: true, zoom: 1}
	v.ExtendBaseWidget(v)
	return v
}

// SetFrame shows f with tone t. The zoom and pan stay as the user left
// them, so tuning does not jump: they are kept on the millimetre grid, so
// a frame of another size (a new pitch, a new field) still shows the same
// point in mm under the pointer. A view the user has not zoomed keeps
// fitting the frame.
func (v *ImageView) SetFrame(f *recon.Frame, t recon.Tone) {
	v.mu.Lock()
	old := v.frame
	if sameGrid(old, f) && t == v.tone && len(v.toned) == f.Width*f.Height {
		v.frame = f
		v.retoneChanged(old)
	} else if d, ok := rowShift(old, f); ok && t == v.tone && len(v.toned) == old.Width*old.Height {
		v.frame = f
		v.retoneShifted(old, d)
	} else {
		v.frame = f
		v.tone = t
		v.retone()
	}
	if old == nil || f == nil || v.autoFit {
		v.fit, v.autoFit = true, true
	}
	v.mu.Unlock()
	v.Refresh()
}

// place returns the zoom and centre, for the session file.
func (v *ImageView) place() viewPlace {
	v.mu.Lock()
	defer v.mu.Unlock()
	if v.autoFit {
		return viewPlace{}
	}
	v.applyFit()
	return viewPlace{Zoom: v.zoom, CentreX: v.centreX, CentreY: v.centreY}
}

// setPlace puts back a zoom and centre from place.
func (v *ImageView) setPlace(p viewPlace) {
	if !(p.Zoom > 0) {
		return
	}
	v.mu.Lock()
	v.fit, v.autoFit = false, false
	v.zoom, v.centreX, v.centreY = p.Zoom, p.CentreX, p.CentreY
	v.mu.Unlock()
	v.Refresh()
	v.zoomChanged()
}

// Reset makes the next frame fit the view (a new capture).
func (v *ImageView) Reset() {
	v.mu.Lock()
	v.fit, v.autoFit = true, true
	v.frame = nil
	v.mu.Unlock()
}

// SetTone changes the tone without rebuilding anything.
func (v *ImageView) SetTone(t recon.Tone) {
	v.mu.Lock()
	v.tone = t
	v.retone()
	v.mu.Unlock()
	v.Refresh()
}

// Frame returns the frame shown, or nil.
func (v *ImageView) Frame() *recon.Frame {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.frame
}

// retone maps every frame pixel through the tone once, so painting and
// panning only copy bytes. Call with mu held.
func (v *ImageView) retone() {
	f := v.frame
	if f == nil {
		v.toned, v.covered = nil, nil
		return
	}
	n := f.Width * f.Height
	if cap(v.toned) < n {
		v.toned = make([]uint8, n)
	}
	v.toned = v.toned[:n]
	v.covered = f.Covered
	for i := 0; i < n && i < len(f.Pix); i++ {
		if i < len(f.Covered) && f.Covered[i] {
			v.toned[i] = uint8(math.Round(255 * v.tone.Map(f.Pix[i])))
		}
	}
}

// sameGrid reports whether frames a and b have the same pixel grid.
func sameGrid(a, b *recon.Frame) bool {
	return a != nil && b != nil && a.Width == b.Width && a.Height == b.Height && a.OriginXMM == b.OriginXMM && a.OriginYMM == b.OriginYMM &&
		a.PitchXMM == b.PitchXMM && a.PitchYMM == b.PitchYMM && len(a.Pix) == len(b.Pix) && len(a.Covered) == len(b.Covered)
}

// retoneChanged is retone for a frame that follows old on the same grid
// with the same tone: only the pixels whose value or coverage changed are
// mapped again (a live image changes in the rows its newest lines cross).
// Call with mu held.
func (v *ImageView) retoneChanged(old *recon.Frame) {
	f := v.frame
	v.covered = f.Covered
	for i, c := range f.Covered {
		if c && (!old.Covered[i] || f.Pix[i] != old.Pix[i]) {
			v.toned[i] = uint8(math.Round(255 * v.tone.Map(f.Pix[i])))
		}
	}
}

// rowShift reports whether frame b is frame a's grid grown or cut by
// whole rows at the top or the bottom (a live image as the head moves on),
// and by how many rows b's row 0 is above a's (row r of b is row r−d of a).
func rowShift(a, b *recon.Frame) (d int, ok bool) {
	if a == nil || b == nil || a.Width != b.Width || a.OriginXMM != b.OriginXMM || a.PitchXMM != b.PitchXMM || a.PitchYMM != b.PitchYMM ||
		!(a.PitchYMM > 0) || len(a.Pix) != a.Width*a.Height || len(a.Covered) != len(a.Pix) || len(b.Pix) != b.Width*b.Height || len(b.Covered) != len(b.Pix) {
		return 0, false
	}
	// y = OriginYMM − row·PitchYMM (recon.Frame).
	s := (b.OriginYMM - a.OriginYMM) / a.PitchYMM
	d = int(math.Round(s))
	return d, math.Abs(s-float64(d)) < 1e-6
}

// retoneShifted is retoneChanged for a frame whose rows are old's shifted
// by d (rowShift): a pixel whose value and coverage are those of old's at
// its place keeps its grey, the others are mapped again. Call with mu
// held.
func (v *ImageView) retoneShifted(old *recon.Frame, d int) {
	f := v.frame
	w, n := f.Width, f.Width*f.Height
	prev := v.toned
	v.toned = slices.Grow(v.spare[:0], n)[:n]
	v.spare = prev
	v.covered = f.Covered
	for r := range f.Height {
		row := f.Pix[r*w : (r+1)*w]
		cov := f.Covered[r*w : (r+1)*w]
		out := v.toned[r*w : (r+1)*w]
		if ro := r - d; ro >= 0 && ro < old.Height {
			oldRow, oldCov, oldTone := old.Pix[ro*w:(ro+1)*w], old.Covered[ro*w:(ro+1)*w], prev[ro*w:(ro+1)*w]
			for i, c := range cov {
				if !c {
					continue
				}
				if oldCov[i] && row[i] == oldRow[i] {
					out[i] = oldTone[i]
				} else {
					out[i] = uint8(math.Round(255 * v.tone.Map(row[i])))
				}
			}
			continue
		}
		for i, c := range cov {
			if c {
				out[i] = uint8(math.Round(255 * v.tone.Map(row[i])))
			}
		}
	}
}

// ZoomFit fits the whole frame into the view.
func (v *ImageView) ZoomFit() {
	v.mu.Lock()
	v.fit, v.autoFit = true, true
	v.mu.Unlock()
	v.Refresh()
	v.zoomChanged()
}

// ZoomBy multiplies the zoom by factor, keeping the centre of the view.
func (v *ImageView) ZoomBy(factor float32) {
	v.mu.Lock()
	v.applyFit()
	v.autoFit = false
	v.zoomAbout(factor, v.size.Width/2, v.size.Height/2)
	v.mu.Unlock()
	v.Refresh()
	v.zoomChanged()
}

// ZoomPixels sets the zoom so one frame pixel covers one screen unit.
func (v *ImageView) ZoomPixels() {
	v.mu.Lock()
	v.applyFit()
	v.autoFit = false
	if v.frame != nil && v.frame.PitchXMM > 0 {
		v.zoom = float32(1 / v.frame.PitchXMM)
	}
	v.mu.Unlock()
	v.Refresh()
	v.zoomChanged()
}

// Zoom returns fyne units per mm.
func (v *ImageView) Zoom() float32 {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	return v.zoom
}

func (v *ImageView) zoomChanged() {
	if v.OnZoom != nil {
		v.OnZoom(v.Zoom())
	}
}

// applyFit turns "fit" into a concrete zoom and centre. Call with mu held.
func (v *ImageView) applyFit() {
	if !v.fit || v.frame == nil || v.size.Width <= 0 || v.size.Height <= 0 {
		return
	}
	f := v.frame
	wmm := float64(f.Width) * f.PitchXMM
	hmm := float64(f.Height) * f.PitchYMM
	if wmm <= 0 || hmm <= 0 {
		return
	}
	v.zoom = float32(math.Min(float64(v.size.Width)/wmm, float64(v.size.Height)/hmm))
	v.centreX = f.OriginXMM + float64(f.Width-1)*f.PitchXMM/2
	v.centreY = f.OriginYMM - float64(f.Height-1)*f.PitchYMM/2
	v.fit = false
}

// zoomAbout zooms by factor keeping the point (ux,uy) (view units) fixed.
func (v *ImageView) zoomAbout(factor, ux, uy float32) {
	if v.frame == nil {
		return
	}
	xmm, ymm := v.toMM(ux, uy)
	z := v.zoom * factor
	// Between a whole frame in a few units and one pixel over half the view.
	z = float32(math.Max(1e-3, math.Min(float64(z), 4000)))
	v.zoom = z
	v.centreX = xmm - float64(ux-v.size.Width/2)/float64(z)
	v.centreY = ymm + float64(uy-v.size.Height/2)/float64(z)
}

// toMM converts a position in the view (fyne units) to frame mm. Call
// with mu held and fit applied.
func (v *ImageView) toMM(ux, uy float32) (float64, float64) {
	z := float64(v.zoom)
	if z <= 0 {
		z = 1
	}
	return v.centreX + float64(ux-v.size.Width/2)/z, v.centreY - float64(uy-v.size.Height/2)/z
}

// pointerAt describes the frame under view position pos.
func (v *ImageView) pointerAt(pos fyne.Position) Pointer {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	f := v.frame
	if f == nil {
		return Pointer{}
	}
	xmm, ymm := v.toMM(pos.X, pos.Y)
	col := int(math.Round((xmm - f.OriginXMM) / f.PitchXMM))
	row := int(math.Round((f.OriginYMM - ymm) / f.PitchYMM))
	p := Pointer{XMM: xmm, YMM: ymm, Col: col, Row: row}
	if col >= 0 && row >= 0 && col < f.Width && row < f.Height {
		p.Inside = true
		p.Value, p.Covered = f.At(col, row)
	}
	return p
}

// Scrolled zooms about the pointer: one wheel step is a factor of 1.25.
// Drivers report a notch as anything from 10 to over 30 units, and a
// touchpad as many small deltas, so a delta counts as at most one step.
func (v *ImageView) Scrolled(ev *fyne.ScrollEvent) {
	steps := math.Max(-1, math.Min(1, float64(ev.Scrolled.DY)/10))
	if steps == 0 {
		return
	}
	v.mu.Lock()
	v.applyFit()
	v.autoFit = false
	v.zoomAbout(float32(math.Pow(1.25, steps)), ev.Position.X, ev.Position.Y)
	v.mu.Unlock()
	v.Refresh()
	v.zoomChanged()
}

// Dragged pans the frame with the pointer, or draws with the tool chosen.
func (v *ImageView) Dragged(ev *fyne.DragEvent) {
	v.mu.Lock()
	if v.drawDragged(ev) {
		v.mu.Unlock()
		v.Refresh()
		if v.OnPointer != nil {
			v.OnPointer(v.pointerAt(ev.Position))
		}
		return
	}
	v.applyFit()
	v.autoFit = false
	if v.zoom > 0 {
		v.centreX -= float64(ev.Dragged.DX / v.zoom)
		v.centreY += float64(ev.Dragged.DY / v.zoom)
	}
	v.mu.Unlock()
	v.Refresh()
	if v.OnPointer != nil {
		v.OnPointer(v.pointerAt(ev.Position))
	}
}

// Hover describes what now lies under the pointer (after a rebuild the
// frame under a still pointer has changed); ok is false when the pointer
// is not over the view.
func (v *ImageView) Hover() (p Pointer, ok bool) {
	v.mu.Lock()
	pos, on := v.hover, v.hovered
	v.mu.Unlock()
	if !on {
		return Pointer{}, false
	}
	return v.pointerAt(pos), true
}

// Tapped selects the measurement under the pointer, or else reports the
// position clicked.
func (v *ImageView) Tapped(ev *fyne.PointEvent) {
	v.mu.Lock()
	v.pressed = false
	v.mu.Unlock()
	if label := v.markAt(ev.Position); label != "" && v.OnMark != nil {
		v.OnMark(label)
		return
	}
	if v.OnMark != nil {
		v.OnMark("")
	}
	if v.OnTap != nil {
		v.OnTap(v.pointerAt(ev.Position))
	}
}

// MouseIn starts the pointer read-out.
func (v *ImageView) MouseIn(ev *desktop.MouseEvent) { v.MouseMoved(ev) }

// MouseMoved updates the pointer read-out.
func (v *ImageView) MouseMoved(ev *desktop.MouseEvent) {
	v.mu.Lock()
	v.hover, v.hovered = ev.Position, true
	v.mu.Unlock()
	if v.OnPointer != nil {
		v.OnPointer(v.pointerAt(ev.Position))
	}
}

// MouseOut clears the pointer read-out.
func (v *ImageView) MouseOut() {
	v.mu.Lock()
	v.hovered = false
	v.mu.Unlock()
	if v.OnPointer != nil {
		v.OnPointer(Pointer{})
	}
}

// Cursor shows a crosshair over the view, for pointing at features.
func (v *ImageView) Cursor() desktop.Cursor { return desktop.CrosshairCursor }

// CreateRenderer makes the view's renderer.
func (v *ImageView) CreateRenderer() fyne.WidgetRenderer {
	r := &imageViewRenderer{view: v}
	r.raster = canvas.NewRaster(r.paint)
	r.raster.ScaleMode = canvas.ImageScalePixels
	r.backing = canvas.NewRectangle(color.NRGBA{A: 0x90})
	r.backing.CornerRadius = 3
	r.bar = canvas.NewRectangle(color.White)
	r.barEdge = canvas.NewRectangle(color.Black)
	r.barText = canvas.NewText("", color.White)
	r.barText.TextSize = theme.CaptionTextSize()
	r.barText.TextStyle = fyne.TextStyle{Bold: true}
	r.empty = canvas.NewText("No frame yet", theme.Color(theme.ColorNameDisabled))
	r.empty.Alignment = fyne.TextAlignCenter
	r.marks = container.NewWithoutLayout()
	return r
}

type imageViewRenderer struct {
	view          *ImageView
	raster        *canvas.Raster
	bar, barEdge  *canvas.Rectangle
	backing       *canvas.Rectangle
	barText       *canvas.Text
	empty         *canvas.Text
	marks         *fyne.Container // the measurements' outlines and labels
	lastBarLength float64
}

func (r *imageViewRenderer) Layout(size fyne.Size) {
	r.view.mu.Lock()
	refit := false
	if r.view.size != size {
		// A view the user has not zoomed keeps fitting; otherwise the
		// centre stays where it was.
		r.view.size = size
		if r.view.autoFit && r.view.frame != nil {
			r.view.fit, refit = true, true
		}
	}
	r.view.mu.Unlock()
	if refit {
		defer r.view.zoomChanged()
	}
	r.raster.Resize(size)
	r.raster.Move(fyne.NewPos(0, 0))
	r.empty.Resize(fyne.NewSize(size.Width, 30))
	r.empty.Move(fyne.NewPos(0, size.Height/2-15))
	r.layoutBar()
	r.layoutMarks()
}

// layoutMarks places the measurements' outlines over the frame.
func (r *imageViewRenderer) layoutMarks() {
	r.marks.Objects = r.view.markObjects()
	r.marks.Resize(r.view.size)
	r.marks.Refresh()
}

// niceLength picks 1, 2 or 5 times a power of ten not above mm.
func niceLength(mm float64) float64 {
	if !(mm > 0) {
		return 0
	}
	p := math.Pow(10, math.Floor(math.Log10(mm)))
	for _, m := range []float64{5, 2, 1} {
		if m*p <= mm {
			return m * p
		}
	}
	return p
}

// layoutBar sizes the scale bar to a round length near a fifth of the view.
func (r *imageViewRenderer) layoutBar() {
	v := r.view
	v.mu.Lock()
	v.applyFit()
	zoom, size, hasFrame := v.zoom, v.size, v.frame != nil
	v.mu.Unlock()
	show := hasFrame && zoom > 0 && size.Width > 40
	r.bar.Hidden, r.barEdge.Hidden, r.barText.Hidden, r.backing.Hidden = !show, !show, !show, !show
	r.empty.Hidden = hasFrame
	if !show {
		return
	}
	lengthMM := niceLength(float64(size.Width/5) / float64(zoom))
	r.lastBarLength = lengthMM
	w := float32(lengthMM) * zoom
	x, y := float32(14), size.Height-18
	r.barEdge.Move(fyne.NewPos(x-1, y-1))
	r.barEdge.Resize(fyne.NewSize(w+2, 8))
	r.bar.Move(fyne.NewPos(x, y))
	r.bar.Resize(fyne.NewSize(w, 6))
	r.barText.Text = formatMM(lengthMM)
	ts := r.barText.MinSize()
	r.barText.Move(fyne.NewPos(x, y-ts.Height-1))
	r.barText.Resize(ts)
	r.backing.Move(fyne.NewPos(x-6, y-ts.Height-4))
	r.backing.Resize(fyne.NewSize(max(w, ts.Width)+12, ts.Height+16))
}

func formatMM(mm float64) string {
	switch {
	case mm >= 1:
		return fmt.Sprintf("%g mm", mm)
	default:
		return fmt.Sprintf("%g µm", mm*1000)
	}
}

func (r *imageViewRenderer) MinSize() fyne.Size { return fyne.NewSize(160, 120) }

func (r *imageViewRenderer) Refresh() {
	r.layoutBar()
	r.layoutMarks()
	r.barText.Refresh()
	r.raster.Refresh()
	canvas.Refresh(r.backing)
	canvas.Refresh(r.bar)
	canvas.Refresh(r.barEdge)
	canvas.Refresh(r.empty)
}

func (r *imageViewRenderer) Objects() []fyne.CanvasObject {
	return []fyne.CanvasObject{r.raster, r.marks, r.empty, r.backing, r.barEdge, r.bar, r.barText}
}

func (r *imageViewRenderer) Destroy() {}

// paint renders the visible part of the frame at screen resolution with
// nearest-neighbour sampling (a pixel stays a crisp square when zoomed in).
func (r *imageViewRenderer) paint(w, h int) image.Image {
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	v := r.view
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	f := v.frame
	if f == nil || v.size.Width <= 0 || f.PitchXMM <= 0 || f.PitchYMM <= 0 {
		fill(img, colourOutside)
		return img
	}
	scale := float64(w) / float64(v.size.Width) // screen pixels per fyne unit
	z := float64(v.zoom) * scale                // screen pixels per mm
	if z <= 0 {
		fill(img, colourOutside)
		return img
	}
	cols := make([]int, w)
	for px := range cols {
		xmm := v.centreX + (float64(px)+0.5-float64(w)/2)/z
		c := int(math.Floor((xmm-f.OriginXMM)/f.PitchXMM + 0.5))
		if c < 0 || c >= f.Width {
			c = -1
		}
		cols[px] = c
	}
	for py := 0; py < h; py++ {
		ymm := v.centreY - (float64(py)+0.5-float64(h)/2)/z
		row := int(math.Floor((f.OriginYMM-ymm)/f.PitchYMM + 0.5))
		line := img.Pix[py*img.Stride : py*img.Stride+4*w]
		for px, c := range cols {
			var col color.NRGBA
			switch {
			case c < 0 || row < 0 || row >= f.Height:
				col = colourOutside
			case !v.covered[row*f.Width+c]:
				if ((px+py)/6)%2 == 0 {
					col = colourNoDataA
				} else {
					col = colourNoDataB
				}
			default:
				g := v.toned[row*f.Width+c]
				col = color.NRGBA{R: g, G: g, B: g, A: 0xff}
			}
			line[4*px], line[4*px+1], line[4*px+2], line[4*px+3] = col.R, col.G, col.B, col.A
		}
	}
	return img
}

func fill(img *image.NRGBA, c color.NRGBA) {
	for i := 0; i+3 < len(img.Pix); i += 4 {
		img.Pix[i], img.Pix[i+1], img.Pix[i+2], img.Pix[i+3] = c.R, c.G, c.B, c.A
	}
}
