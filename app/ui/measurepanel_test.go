package ui

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
)

// expected is measure.Run's result for req on f.
func expected(t *testing.T, f *recon.Frame, req measure.Request) measure.Results {
	t.Helper()
	res, err := measure.Run(f, req)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// centreMM is the centre of the frame in its mm.
func centreMM(f *recon.Frame) (x, y float64) {
	return f.OriginXMM + float64(f.Width/2)*f.PitchXMM, f.OriginYMM - float64(f.Height/2)*f.PitchYMM
}

func TestMeasurePanelFollowsTheFrame(t *testing.T) {
	// The panel's numbers are measure.Run's on the frame shown, equal to
	// those of the frame exported as a float TIFF and read back (what
	// "spotloom measure" reads), and they are taken again when the delay
	// changes.
	ws, _ := newTestWorkstation(t)
	f := ws.view.Frame()
	cx, cy := centreMM(f)
	rect := fmt.Sprintf("%g,%g,%g,%g", cx-30, cy-30, cx+30, cy+30)
	p := ws.measures
	p.kind.SetSelected(measureRegion)
	test.Type(p.where, rect)
	p.measure()
	req := measure.Request{ROI: &measure.Rect{X0: cx - 30, Y0: cy - 30, X1: cx + 30, Y1: cy + 30}}
	want := expected(t, f, req).ROI
	if len(p.taken) != 1 || p.taken[0].Results.ROI == nil || *p.taken[0].Results.ROI != *want ||
		!strings.Contains(p.cards[0].text.Text, fmt.Sprintf("mean %.6g", want.Mean)) {
		t.Fatalf("panel %+v %q, measure.Run %+v", p.taken, p.cards[0].text.Text, want)
	}
	path := filepath.Join(t.TempDir(), "shown.tiff")
	if err := export.Write(path, []*recon.Frame{f}, export.Options{Raw: true}); err != nil {
		t.Fatal(err)
	}
	l, err := export.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if read := expected(t, l.Frames[0], req).ROI; *read != *p.taken[0].Results.ROI {
		t.Errorf("panel %+v, the exported frame %+v", p.taken[0].Results.ROI, read)
	}

	before := p.cards[0].text.Text
	ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.4f", ws.result.Report.DelayDeg+2))
	ws.Wait()
	after := ws.view.Frame()
	if after == f {
		t.Fatal("the delay change made no new frame")
	}
	if want := expected(t, after, req).ROI; *p.taken[0].Results.ROI != *want || p.cards[0].text.Text == before {
		t.Errorf("after the delay change the panel says %q (%+v), the new frame gives %+v (before %q)", p.cards[0].text.Text, p.taken[0].Results.ROI, want, before)
	}

	// A profile brings its plot; a bad rectangle a message, not a crash.
	p.kind.SetSelected(measureProfile)
	p.where.SetText(fmt.Sprintf("%g,%g,%g,%g", cx-40, cy, cx+40, cy))
	p.measure()
	if len(p.cards) != 2 || !p.cards[1].plot.Visible() || p.cards[1].plot.Image == nil {
		t.Error("no plot for a profile")
	}
	p.kind.SetSelected(measureRegion)
	p.where.SetText("1,2,3")
	p.measure()
	if !strings.Contains(p.result.Text, "X0,Y0,X1,Y1") || len(p.cards) != 2 {
		t.Errorf("bad rectangle: %q, %d cards", p.result.Text, len(p.cards))
	}
}

// frameCentre is where the centre of the frame shown lies in the view,
// offset by dx, dy view units.
func frameCentre(ws *Workstation, dx, dy float32) fyne.Position {
	x, y := centreMM(ws.view.Frame())
	v := ws.view
	v.mu.Lock()
	defer v.mu.Unlock()
	v.applyFit()
	ux, uy := v.toView(x, y)
	return fyne.NewPos(ux+dx, uy+dy)
}

// drawOn drags on the image from a to b (view units) with the tool of
// kind k chosen from the tool menu, as the desktop driver reports it: a
// press, then moves whose position is the pointer's.
func drawOn(ws *Workstation, k measure.Kind, a, b fyne.Position) {
	ws.marking.tool.SetSelected(toolName(k))
	ws.view.MouseDown(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: a}, Button: desktop.MouseButtonPrimary})
	mid := fyne.NewPos((a.X+b.X)/2, (a.Y+b.Y)/2)
	ws.view.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: mid}, Dragged: fyne.NewDelta(mid.X-a.X, mid.Y-a.Y)})
	ws.view.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: b}, Dragged: fyne.NewDelta(b.X-mid.X, b.Y-mid.Y)})
	ws.view.DragEnd()
}

// near reports whether c is within 40 of want in each channel.
func near(c color.Color, want color.NRGBA) bool {
	r, g, b, _ := c.RGBA()
	d := func(x uint32, y uint8) bool { return math.Abs(float64(x>>8)-float64(y)) < 40 }
	return d(r, want.R) && d(g, want.G) && d(b, want.B)
}

// colourNear reports whether a pixel of colour want lies within 3 pixels
// of view position pos on the window's capture.
func colourNear(w fyne.Window, ws *Workstation, img image.Image, pos fyne.Position, want color.NRGBA) bool {
	inset, _ := w.Canvas().InteractiveArea()
	at := fyne.CurrentApp().Driver().AbsolutePositionForObject(ws.view).Add(inset).Add(pos)
	scale := float32(img.Bounds().Dx()) / w.Canvas().Size().Width
	x, y := int(at.X*scale), int(at.Y*scale)
	for dy := -3; dy <= 3; dy++ {
		for dx := -3; dx <= 3; dx++ {
			if near(img.At(x+dx, y+dy), want) {
				return true
			}
		}
	}
	return false
}

func TestDrawMeasurementsOnTheImage(t *testing.T) {
	// A rectangle and a line drawn with the mouse become measurements in
	// the frame's mm, the coordinates the pointer read-out gives at the
	// press and at the release; they are outlined on the image in their
	// colours, with their labels, can be selected by a click and removed
	// with Delete, and the tool goes back to moving the image.
	ws, w := newTestWorkstation(t)
	a, b := frameCentre(ws, -60, -40), frameCentre(ws, 40, 40)
	pa, pb := ws.view.pointerAt(a), ws.view.pointerAt(b)
	drawOn(ws, measure.KindRegion, a, b)
	if len(ws.cur.Measurements) != 1 {
		t.Fatalf("%d measurements after drawing a region", len(ws.cur.Measurements))
	}
	s := ws.cur.Measurements[0]
	if s.Kind != measure.KindRegion || s.Label != "R1" || s.Rect == nil ||
		math.Abs(s.Rect.X0-pa.XMM) > 1e-9 || math.Abs(s.Rect.Y0-pa.YMM) > 1e-9 || math.Abs(s.Rect.X1-pb.XMM) > 1e-9 || math.Abs(s.Rect.Y1-pb.YMM) > 1e-9 {
		t.Errorf("drawn %+v %+v, the read-out says %.3f,%.3f to %.3f,%.3f mm", s, s.Rect, pa.XMM, pa.YMM, pb.XMM, pb.YMM)
	}
	if ws.view.Tool() != "" || ws.marking.tool.Selected != toolName("") {
		t.Errorf("after drawing the tool is %q (%q), want moving the image", ws.view.Tool(), ws.marking.tool.Selected)
	}
	if want := expected(t, ws.view.Frame(), measure.Request{ROI: s.Rect}).ROI; len(ws.measures.taken) != 1 || *ws.measures.taken[0].Results.ROI != *want {
		t.Errorf("the list holds %+v, measure.Run gives %+v", ws.measures.taken, want)
	}

	// A line through test.Drag, the canvas's own routing: it reports one
	// move at the press position with the whole delta, so the line runs
	// from the press less the delta to the press.
	inset, _ := w.Canvas().InteractiveArea()
	origin := fyne.CurrentApp().Driver().AbsolutePositionForObject(ws.view).Add(inset)
	ws.marking.tool.SetSelected(toolName(measure.KindProfile))
	press := frameCentre(ws, 60, 20)
	test.Drag(w.Canvas(), origin.Add(press), 80, 0)
	if len(ws.cur.Measurements) != 2 || ws.cur.Measurements[1].Label != "P1" || ws.cur.Measurements[1].Line == nil {
		t.Fatalf("after drawing a line: %+v", ws.cur.Measurements)
	}
	l := ws.cur.Measurements[1].Line
	l0, l1 := ws.view.pointerAt(press.SubtractXY(80, 0)), ws.view.pointerAt(press)
	if math.Abs(l.X0-l0.XMM) > 1e-6 || math.Abs(l.X1-l1.XMM) > 1e-6 || math.Abs(l.Y0-l1.YMM) > 1e-6 {
		t.Errorf("line %+v, the read-out says %.3f to %.3f mm at y %.3f", l, l0.XMM, l1.XMM, l1.YMM)
	}

	// Both outlines are on the screen in their colours.
	img := w.Canvas().Capture()
	if !colourNear(w, ws, img, fyne.NewPos((a.X+b.X)/2, a.Y), markColour(measure.KindRegion)) {
		t.Error("no region outline on the image at the rectangle's top edge")
	}
	if !colourNear(w, ws, img, press.SubtractXY(40, 0), markColour(measure.KindProfile)) {
		t.Error("no profile line on the image")
	}
	if n := len(ws.view.markObjects()); n != 6 {
		t.Errorf("%d objects over the image, want 2 outlines with a label and its ground each", n)
	}

	// A click on the rectangle selects it; Delete removes it.
	ws.view.Tapped(&fyne.PointEvent{Position: frameCentre(ws, -30, -20)})
	if ws.marking.selected != "R1" {
		t.Fatalf("selected %q after a click inside R1", ws.marking.selected)
	}
	pressKey(w.Canvas(), fyne.KeyDelete)
	if len(ws.cur.Measurements) != 1 || ws.cur.Measurements[0].Label != "P1" || len(ws.measures.cards) != 1 {
		t.Errorf("after Delete: %+v", ws.cur.Measurements)
	}
	// Escape puts a tool away without drawing.
	ws.marking.tool.SetSelected(toolName(measure.KindEdge))
	pressKey(w.Canvas(), fyne.KeyEscape)
	if ws.view.Tool() != "" || ws.marking.tool.Selected != toolName("") {
		t.Errorf("after Escape the tool is %q (%q)", ws.view.Tool(), ws.marking.tool.Selected)
	}
	// A slip of the mouse draws nothing.
	drawOn(ws, measure.KindEdge, frameCentre(ws, 0, 0), frameCentre(ws, 1, 1))
	if len(ws.cur.Measurements) != 1 {
		t.Errorf("a 1-unit drag drew %+v", ws.cur.Measurements)
	}
}

func TestMeasurementsUndoAndRedo(t *testing.T) {
	// Drawing, pairing and removing are undo steps of their own; none of
	// them rebuilds the frame.
	ws, _ := newTestWorkstation(t)
	res := ws.result
	drawOn(ws, measure.KindRegion, frameCentre(ws, -80, -30), frameCentre(ws, -20, 30))
	drawOn(ws, measure.KindRegion, frameCentre(ws, 20, -30), frameCentre(ws, 80, 30))
	ws.measures.cards[1].pair.SetSelected("R1")
	if got := ws.cur.Measurements[1].CNRWith; got != "R1" {
		t.Fatalf("R2's CNR is taken against %q", got)
	}
	r1, r2 := ws.measures.taken[0].Results.ROI, ws.measures.taken[1].Results.ROI
	// |m₁ − m₂| / √((s₁² + s₂²)/2), the definition in recon/measure's doc.
	wantCNR := math.Abs(r1.Mean-r2.Mean) / math.Sqrt((r1.SD*r1.SD+r2.SD*r2.SD)/2)
	if c := ws.measures.taken[1].Results.CNR; c == nil || math.Abs(*c-wantCNR) > 1e-9*wantCNR {
		t.Errorf("CNR %v, want %g", c, wantCNR)
	}
	ws.removeMeasurement("R1")
	if len(ws.cur.Measurements) != 1 || ws.cur.Measurements[0].CNRWith != "" {
		t.Fatalf("after removing R1: %+v", ws.cur.Measurements)
	}
	ws.Undo()
	if len(ws.cur.Measurements) != 2 || ws.cur.Measurements[1].CNRWith != "R1" || len(ws.measures.cards) != 2 {
		t.Fatalf("undo of the removal: %+v", ws.cur.Measurements)
	}
	ws.Undo()
	ws.Undo()
	if len(ws.cur.Measurements) != 1 || ws.cur.Measurements[0].Label != "R1" || len(ws.view.marks) != 1 {
		t.Errorf("after undoing the pairing and R2: %+v, %d marks", ws.cur.Measurements, len(ws.view.marks))
	}
	ws.Redo()
	if len(ws.cur.Measurements) != 2 || ws.cur.Measurements[1].Label != "R2" {
		t.Errorf("redo: %+v", ws.cur.Measurements)
	}
	ws.Wait()
	if ws.result != res {
		t.Error("a measurement change rebuilt the frame")
	}
	if !ws.Modified() {
		t.Error("drawn measurements do not mark the window as not saved")
	}
}

// drawThree draws a region R1, a second region R2 with its CNR against
// R1, and a profile line P1 across the frame's centre.
func drawThree(ws *Workstation) {
	drawOn(ws, measure.KindRegion, frameCentre(ws, -80, -30), frameCentre(ws, -20, 30))
	drawOn(ws, measure.KindRegion, frameCentre(ws, 20, -30), frameCentre(ws, 80, 30))
	ws.measures.cards[1].pair.SetSelected("R1")
	drawOn(ws, measure.KindProfile, frameCentre(ws, -90, 0), frameCentre(ws, 90, 10))
}

func TestMeasurementsGoWithTheSidecar(t *testing.T) {
	// Export… writes the list into the sidecar as "measurements" (read
	// back by measure.ParseList, which "spotloom report --measure" uses);
	// loading that sidecar, or opening the capture it sits beside, brings
	// the same shapes back, measured on the rebuilt frame.
	ws, _ := newTestWorkstation(t)
	dir := t.TempDir()
	wav := writeDemoWAV(t, ws, dir, "bench.wav")
	drawThree(ws)
	want := measure.CloneList(ws.cur.Measurements)
	if len(want) != 3 {
		t.Fatalf("drew %+v", want)
	}
	form := ws.newExportForm()
	form.folder.SetText(dir)
	form.name.SetText("bench.tiff")
	form.export()
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatalf("export: %s", p)
	}
	side := filepath.Join(dir, "bench.recipe.json")
	got, err := measure.LoadList(side)
	if err != nil || !measure.SameList(got, want) {
		t.Fatalf("the sidecar holds %+v (%v), want %+v", got, err, want)
	}
	if ws.Modified() {
		t.Error("after the export the measurements still count as not saved")
	}

	ws.removeMeasurement("P1")
	ws.LoadRecipe(side)
	ws.Wait()
	if p := ws.Problem(); p != "" || !measure.SameList(ws.cur.Measurements, want) {
		t.Fatalf("after loading the sidecar: %+v (%s)", ws.cur.Measurements, p)
	}

	other, _ := newTestWorkstation(t)
	other.OpenFile(wav, nil)
	other.Wait()
	if p := other.Problem(); p != "" || !measure.SameList(other.cur.Measurements, want) {
		t.Fatalf("opening the capture beside the sidecar: %+v (%s)", other.cur.Measurements, p)
	}
	f := other.view.Frame()
	for i, tk := range other.measures.taken {
		q, err := want[i].Request(want)
		if err != nil {
			t.Fatal(err)
		}
		res := expected(t, f, q)
		if tk.Err != nil || !sameNumbers(tk.Results, res) {
			t.Errorf("%s on the reopened frame: %+v (%v), measure.Run %+v", want[i].Label, tk.Results, tk.Err, res)
		}
	}
}

func jsonOf(v any) string {
	data, err := json.Marshal(v)
	if err != nil {
		return err.Error()
	}
	return string(data)
}

// sameNumbers compares the numbers of two results through their JSON,
// the keys "spotloom measure --json" prints.
func sameNumbers(a, b measure.Results) bool {
	a.Request, b.Request = measure.Request{}, measure.Request{}
	return jsonOf(a) == jsonOf(b)
}

func TestExportReportSheet(t *testing.T) {
	// Export report… writes the sheet "spotloom report" writes, with the
	// window's measurements: poppler's pdftotext (independent of the
	// writer) finds each label and the panel's numbers, pdftoppm's page
	// shows the frame and the region's outline in its print colour, and a
	// second sheet to the same name asks before replacing the first.
	for _, tool := range []string{"pdftoppm", "pdftotext"} {
		if _, err := exec.LookPath(tool); err != nil {
			t.Skipf("%s is not installed (Debian poppler-utils; .ci/run installs it)", tool)
		}
	}
	ws, _ := newTestWorkstation(t)
	drawThree(ws)
	dir := t.TempDir()
	form := ws.newReportForm()
	form.folder.SetText(dir)
	if form.name.Text != "spotloom-demo-report.pdf" {
		t.Errorf("proposed name %q", form.name.Text)
	}
	form.write()
	ws.Wait()
	if p := ws.Problem(); p != "" {
		t.Fatalf("report: %s", p)
	}
	path := filepath.Join(dir, "spotloom-demo-report.pdf")
	out, err := exec.Command("pdftotext", path, "-").CombinedOutput()
	if err != nil {
		t.Fatalf("pdftotext: %v: %s", err, out)
	}
	r2 := ws.measures.taken[1].Results
	for _, want := range []string{"Spotloom report sheet", "built-in demo", "R1", "R2", "P1", "Region statistics", "Line profile",
		fmt.Sprintf("Mean %.6g", r2.ROI.Mean), fmt.Sprintf("CNR against R1: %.4g", *r2.CNR), fmt.Sprintf("Length %.4g mm", *ws.measures.taken[2].Results.DistanceMM)} {
		if !strings.Contains(string(out), want) {
			t.Errorf("the sheet's text lacks %q:\n%s", want, out)
		}
	}
	if out, err := exec.Command("pdftoppm", "-r", "60", "-f", "1", "-l", "1", "-png", path, filepath.Join(dir, "page")).CombinedOutput(); err != nil {
		t.Fatalf("pdftoppm: %v: %s", err, out)
	}
	pages, _ := filepath.Glob(filepath.Join(dir, "page-*.png"))
	if len(pages) != 1 {
		t.Fatalf("pdftoppm made %v", pages)
	}
	img := readPNG(t, pages[0])
	blue, spread := 0, map[uint8]bool{}
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			c := color.NRGBAModel.Convert(img.At(x, y)).(color.NRGBA)
			if near(c, color.NRGBA{R: 30, G: 120, B: 220}) {
				blue++
			}
			if c.R == c.G && c.G == c.B {
				spread[c.R] = true
			}
		}
	}
	// The region's print colour is export's (30, 120, 220); the frame
	// gives the page many greys.
	if blue < 20 || len(spread) < 64 {
		t.Errorf("page 1 has %d pixels of the region's outline and %d greys: the frame or its marks are missing", blue, len(spread))
	}

	before, _ := os.ReadFile(path)
	ws.writeReport(path, false)
	ws.Wait()
	if len(ws.dialogs) == 0 {
		t.Fatal("a second sheet to the same name did not ask")
	}
	if after, _ := os.ReadFile(path); !bytes.Equal(after, before) {
		t.Error("the first sheet was replaced without asking")
	}
}

func readPNG(t *testing.T, path string) image.Image {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	img, err := png.Decode(fh)
	if err != nil {
		t.Fatal(err)
	}
	return img
}

func TestMeasurementThatCannotBeTakenSaysWhy(t *testing.T) {
	// A region off the frame, or a dot grid the frame does not hold, stays
	// in the list with the reason in the window's words (no flag names).
	ws, _ := newTestWorkstation(t)
	f := ws.view.Frame()
	far := f.OriginXMM + float64(f.Width)*f.PitchXMM + 100
	ws.AddMeasurement(measure.Shape{Kind: measure.KindRegion, Rect: &measure.Rect{X0: far, Y0: 0, X1: far + 10, Y1: 10}})
	ws.AddMeasurement(measure.Shape{Kind: measure.KindDots, SpacingMM: 25})
	text := ws.measures.cards[0].text.Text
	if !strings.HasPrefix(text, "Not taken: the rectangle") || !strings.Contains(text, "outside the frame") {
		t.Errorf("R1 off the frame says %q", text)
	}
	if got := ws.measures.cards[1].text.Text; strings.Contains(got, "--dots") || !strings.HasPrefix(got, "Not taken:") {
		t.Errorf("the demo has no 25 mm dot grid, and G1 says %q", got)
	}
}

func TestSelectingAMarkShowsItsCard(t *testing.T) {
	// Clicking a mark on the image scrolls the list to its card.
	ws, _ := newTestWorkstation(t)
	cx, cy := centreMM(ws.view.Frame())
	for i := range 6 {
		x := cx - 60 + 20*float64(i)
		ws.AddMeasurement(measure.Shape{Kind: measure.KindProfile, Line: &measure.Line{X0: x, Y0: cy - 40, X1: x, Y1: cy + 40}})
	}
	ws.selectMeasurement("")
	p := ws.measures
	p.scroll.Offset.Y = 0
	p.scroll.Refresh()
	last := p.cards[5]
	if top := p.list.Position().Y + last.box.Position().Y; top < p.scroll.Size().Height {
		t.Fatalf("the last card starts at %.0f, inside the %.0f-high list already", top, p.scroll.Size().Height)
	}
	v := ws.view
	v.mu.Lock()
	v.applyFit()
	ux, uy := v.toView(cx+40, cy)
	v.mu.Unlock()
	ws.view.Tapped(&fyne.PointEvent{Position: fyne.NewPos(ux, uy)})
	if ws.marking.selected != "P6" {
		t.Fatalf("the click selected %q, want P6", ws.marking.selected)
	}
	top := p.list.Position().Y + last.box.Position().Y
	if top < p.scroll.Offset.Y || top+last.box.Size().Height > p.scroll.Offset.Y+p.scroll.Size().Height+1 {
		t.Errorf("P6's card at %.0f…%.0f, the list shows %.0f…%.0f", top, top+last.box.Size().Height, p.scroll.Offset.Y, p.scroll.Offset.Y+p.scroll.Size().Height)
	}
}
