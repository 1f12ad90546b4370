package ui

import (
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

// parseSweepTable reads the pairs of a measured sweep table, one a line:
// the fraction of the line (0 at its start, 1 at its end) and the position
// in mm, separated by a comma, semicolon, tab, spaces or an arrow, as a
// spreadsheet or a text file gives them. Blank lines, lines starting with
// # and a first line of column names are skipped. Errors name the line and
// say what is wrong in the window's words.
func parseSweepTable(text string) ([][2]float64, error) {
	var pairs [][2]float64
	first := true
	for n, line := range strings.Split(strings.ReplaceAll(text, "\r\n", "\n"), "\n") {
		line = strings.TrimSpace(line)
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		header := first && !startsWithNumber(line)
		first = false
		if header {
			continue // column names
		}
		fields := strings.FieldsFunc(strings.NewReplacer("→", " ", "->", " ").Replace(line), func(r rune) bool {
			return r == ',' || r == ';' || r == '\t' || r == ' '
		})
		if len(fields) != 2 {
			return nil, fmt.Errorf("line %d, %q: give two numbers, the fraction of the line and the position in mm, such as 0.25, -40", n+1, line)
		}
		var p [2]float64
		for k, f := range fields {
			v, err := strconv.ParseFloat(strings.Replace(f, "−", "-", 1), 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("line %d: %q is not a number", n+1, f)
			}
			p[k] = v
		}
		if p[0] < 0 || p[0] > 1 {
			return nil, fmt.Errorf("line %d: the fraction %g is outside 0 to 1 (the start to the end of the line)", n+1, p[0])
		}
		if len(pairs) > 0 && !(p[0] > pairs[len(pairs)-1][0]) {
			return nil, fmt.Errorf("line %d: the fraction %g does not follow %g; the fractions must increase down the list", n+1, p[0], pairs[len(pairs)-1][0])
		}
		pairs = append(pairs, p)
	}
	if len(pairs) < 2 {
		return nil, fmt.Errorf("the table has %d pair(s); a measured sweep needs two or more", len(pairs))
	}
	return pairs, nil
}

func startsWithNumber(line string) bool {
	return line != "" && strings.ContainsRune("0123456789+-.−", []rune(line)[0])
}

// formatSweepTable writes pairs one a line, as parseSweepTable reads them.
func formatSweepTable(pairs [][2]float64) string {
	var b strings.Builder
	for _, p := range pairs {
		fmt.Fprintf(&b, "%s, %s\n", strconv.FormatFloat(p[0], 'g', -1, 64), strconv.FormatFloat(p[1], 'g', -1, 64))
	}
	return b.String()
}

// uniformX is where the uniform law puts the beam at fraction f of the
// line: the angle runs evenly across the field, θ = (f − ½)·field, and the
// projection turns it into mm (as recon.Project does for the build).
func uniformX(s recipe.Sweep, f float64) float64 {
	x := recon.Project(s.Projection, s.DistanceMM, (f-0.5)*s.FieldDeg)
	if s.Reverse {
		x = -x
	}
	return x
}

// uniformTable is the uniform law written out at n+1 even fractions: a
// start a user edits toward what was measured.
func uniformTable(s recipe.Sweep, n int) [][2]float64 {
	pairs := make([][2]float64, n+1)
	for i := range pairs {
		f := float64(i) / float64(n)
		pairs[i] = [2]float64{f, math.Round(uniformX(s, f)*1000) / 1000}
	}
	return pairs
}

// tablePlot draws a measured table against the uniform law on the trace
// strip's paper, fraction of the line across and mm up.
type tablePlot struct {
	widget.BaseWidget
	mu     sync.Mutex
	sweep  recipe.Sweep
	pairs  [][2]float64
	raster *canvas.Raster
}

func newTablePlot(s recipe.Sweep) *tablePlot {
	p := &tablePlot{sweep: s}
	p.raster = canvas.NewRaster(p.paint)
	p.ExtendBaseWidget(p)
	return p
}

func (p *tablePlot) setPairs(pairs [][2]float64) {
	p.mu.Lock()
	p.pairs = pairs
	p.mu.Unlock()
	p.raster.Refresh()
}

func (p *tablePlot) CreateRenderer() fyne.WidgetRenderer {
	return &tablePlotRenderer{plot: p}
}

type tablePlotRenderer struct{ plot *tablePlot }

func (r *tablePlotRenderer) Layout(size fyne.Size)        { r.plot.raster.Resize(size) }
func (r *tablePlotRenderer) MinSize() fyne.Size           { return fyne.NewSize(360, 220) }
func (r *tablePlotRenderer) Refresh()                     { r.plot.raster.Refresh() }
func (r *tablePlotRenderer) Objects() []fyne.CanvasObject { return []fyne.CanvasObject{r.plot.raster} }
func (r *tablePlotRenderer) Destroy()                     {}

// Inks of the table plot, from the trace strip's palette.
var (
	tableInk   = traceColours[0]
	uniformInk = traceMuted
)

func (p *tablePlot) paint(w, h int) image.Image {
	scale := 1.0
	if size := p.Size(); size.Width > 0 {
		scale = float64(w) / float64(size.Width)
	}
	p.mu.Lock()
	pairs, s := p.pairs, p.sweep
	p.mu.Unlock()
	return paintTable(pairs, s, w, h, scale)
}

// paintTable draws the plot of pairs against the uniform law of s.
func paintTable(pairs [][2]float64, s recipe.Sweep, w, h int, scale float64) *image.NRGBA {
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	fill(img, tracePaper)
	pt := &tracePainter{img: img, scale: scale, face: traceFace(int(math.Round(12 * scale))), small: traceFace(int(math.Round(10.5 * scale)))}
	left, right, top, bottom := pt.px(52), w-pt.px(10), pt.px(20), h-pt.px(30)
	if right-left < 10 || bottom-top < 10 {
		return img
	}
	const steps = 200
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := 0; i <= steps; i++ {
		x := uniformX(s, float64(i)/steps)
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	for _, q := range pairs {
		lo, hi = math.Min(lo, q[1]), math.Max(hi, q[1])
	}
	if !(hi > lo) {
		lo, hi = lo-1, hi+1
	}
	pad := 0.05 * (hi - lo)
	lo, hi = lo-pad, hi+pad
	toX := func(f float64) int { return left + int(math.Round(f*float64(right-left-1))) }
	toY := func(mm float64) int { return bottom - int(math.Round((mm-lo)/(hi-lo)*float64(bottom-top))) }
	for _, f := range axisTicks(0, 1, 5) {
		x := toX(f)
		vline(img, x, top, bottom, traceGrid)
		pt.text(pt.small, tickLabel(f, 0.2), x, bottom+pt.px(13), 1, traceMuted, false)
	}
	pt.text(pt.small, "fraction of the line", right, h-pt.px(4), 2, traceInk, false)
	mmStep := niceStep(hi-lo, 5)
	for _, mm := range axisTicks(lo, hi, 5) {
		y := toY(mm)
		hline(img, left, right, y, traceGrid)
		pt.text(pt.small, tickLabel(mm, mmStep), left-pt.px(5), y+pt.px(4), 2, traceMuted, false)
	}
	pt.text(pt.small, "mm", left-pt.px(5), top-pt.px(6), 2, traceInk, false)
	rect(img, left, top, right, bottom+1, traceLaneEdge)
	// The uniform law, dotted.
	for i := 0; i <= steps; i += 2 {
		f := float64(i) / steps
		x, y := toX(f), toY(uniformX(s, f))
		shade(img, x, x+max(1, pt.px(1.5)), y, y+max(1, pt.px(1.5)), uniformInk)
	}
	// The table: straight lines between its points (the build interpolates
	// linearly), a square at each point.
	thick := max(1, pt.px(1.5))
	for i := 1; i < len(pairs); i++ {
		x0, y0, x1, y1 := toX(pairs[i-1][0]), toY(pairs[i-1][1]), toX(pairs[i][0]), toY(pairs[i][1])
		n := max(abs(x1-x0), abs(y1-y0), 1)
		for k := 0; k <= n; k++ {
			x := x0 + (x1-x0)*k/n
			y := y0 + (y1-y0)*k/n
			shade(img, x, x+thick, y, y+thick, tableInk)
		}
	}
	for _, q := range pairs {
		x, y := toX(q[0]), toY(q[1])
		r := max(2, pt.px(3))
		shade(img, x-r, x+r+1, y-r, y+r+1, tableInk)
	}
	pt.text(pt.small, "— measured table", left+pt.px(6), top-pt.px(6), 0, tableInk, false)
	pt.text(pt.small, "··· uniform law", left+pt.px(130), top-pt.px(6), 0, uniformInk, false)
	return img
}

func abs(v int) int {
	if v < 0 {
		return -v
	}
	return v
}

// tableEditor is the dialog that edits the measured sweep table.
type tableEditor struct {
	ws      *Workstation
	text    *widget.Entry
	message *widget.Label
	plot    *tablePlot
	dialog  *dialog.ConfirmDialog
}

// ShowTableEditor opens the editor of the measured sweep table.
func (ws *Workstation) ShowTableEditor() {
	if e := ws.newTableEditor(); e != nil {
		ws.showDialog(e.dialog)
	}
}

func (ws *Workstation) newTableEditor() *tableEditor {
	if ws.result == nil {
		return nil
	}
	sweep := ws.result.Recipe.Sweep
	e := &tableEditor{ws: ws, text: widget.NewMultiLineEntry(), message: widget.NewLabel(""), plot: newTablePlot(sweep)}
	e.text.SetMinRowsVisible(10)
	e.text.SetPlaceHolder("0, -120\n0.5, 0\n1, 120")
	e.message.Wrapping = fyne.TextWrapWord
	e.text.OnChanged = func(string) { e.check() }
	table := ws.cur.Recipe.Sweep.Table
	if len(table) < 2 {
		table = uniformTable(sweep, 10)
	}
	e.text.SetText(formatSweepTable(table))
	help := widget.NewLabel("One pair a line: the fraction of the line (0 at its start, 1 at its end) and where the beam is then, in mm from the centre. Paste them from a spreadsheet or load a CSV; the dotted curve is the uniform law of the field and distance set now.")
	help.Wrapping = fyne.TextWrapWord
	buttons := container.NewHBox(
		widget.NewButton("Load…", e.load),
		widget.NewButton("Start from the uniform law", func() { e.text.SetText(formatSweepTable(uniformTable(sweep, 10))) }),
	)
	left := container.NewBorder(nil, buttons, nil, nil, e.text)
	body := container.NewBorder(help, e.message, nil, nil, container.NewGridWithColumns(2, left, e.plot))
	e.dialog = dialog.NewCustomConfirm("Measured sweep table", "Use this table", "Cancel", body, func(ok bool) {
		if ok {
			e.apply()
		} else {
			ws.render() // the law list shows the law in use again
		}
	}, ws.win)
	e.dialog.Resize(fyne.NewSize(860, 520))
	return e
}

// check validates the text, plots what it can and says what is wrong.
func (e *tableEditor) check() ([][2]float64, error) {
	pairs, err := parseSweepTable(e.text.Text)
	if err != nil {
		e.message.SetText(err.Error() + ".")
		e.message.Importance = widget.DangerImportance
	} else {
		e.message.SetText(fmt.Sprintf("%d pairs, from %g mm to %g mm.", len(pairs), pairs[0][1], pairs[len(pairs)-1][1]))
		e.message.Importance = widget.MediumImportance
		e.plot.setPairs(pairs)
	}
	e.message.Refresh()
	return pairs, err
}

// apply builds with the table, or brings the editor back saying why not.
func (e *tableEditor) apply() {
	pairs, err := e.check()
	if err != nil {
		e.ws.problemOver(e.dialog, "Cannot use this table", err.Error()+".", "correct the line named and press Use this table again.")
		return
	}
	e.ws.change("sweep table", func(r *recipe.Recipe) {
		r.Sweep.Law = recipe.LawTable
		r.Sweep.Table = pairs
	})
}

// load reads pairs from a text or CSV file into the editor.
func (e *tableEditor) load() {
	d := dialog.NewFileOpen(func(rc fyne.URIReadCloser, err error) {
		if err != nil || rc == nil {
			return
		}
		path := rc.URI().Path()
		rc.Close()
		e.loadFile(path)
	}, e.ws.win)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".csv", ".txt", ".tsv"}))
	e.ws.startIn(d, e.ws.sourcePath)
	d.Resize(fyne.NewSize(820, 560))
	d.Show()
}

func (e *tableEditor) loadFile(path string) {
	data, err := os.ReadFile(path)
	if err != nil {
		e.message.SetText(fmt.Sprintf("Cannot read %s: %v.", filepath.Base(path), err))
		e.message.Refresh()
		return
	}
	e.text.SetText(string(data))
}
