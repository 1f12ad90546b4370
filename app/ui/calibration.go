package ui

import (
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"
)

// inlinePairs is the most calibration points edited in the panel's own
// text box; longer calibrations (a measured run can hold 100 000 points)
// are shown as a count and a list that draws only the rows on screen.
const inlinePairs = 40

// calibrationEditor shows rows.calibration: a short one as editable text,
// a long one as a count with a list, and either can be replaced by
// loading a file of pairs.
type calibrationEditor struct {
	apply   func(points [][2]float64)
	problem func(title, what, try string)
	// load asks for a file and hands its text back (the panel's loadPairs).
	load func(done func(text, name string))
	// list shows a long calibration in a dialog (the panel's showList).
	list func(title string, body fyne.CanvasObject)

	points  [][2]float64
	summary *widget.Label
	text    *widget.Entry
	applyB  *widget.Button
	loadB   *widget.Button
	listB   *widget.Button
	box     fyne.CanvasObject
}

func newCalibrationEditor(apply func([][2]float64), problem func(title, what, try string)) *calibrationEditor {
	e := &calibrationEditor{apply: apply, problem: problem}
	e.summary = widget.NewLabel("")
	e.summary.Wrapping = fyne.TextWrapWord
	e.text = widget.NewMultiLineEntry()
	e.text.SetMinRowsVisible(3)
	e.text.SetPlaceHolder("level  mm\n0.5  0\n4.5  400")
	e.applyB = widget.NewButton("Apply", func() { e.applyText(e.text.Text, "the calibration box") })
	e.loadB = widget.NewButton("Load pairs…", func() {
		if e.load != nil {
			e.load(func(text, name string) { e.applyText(text, name) })
		}
	})
	e.listB = widget.NewButton("List points…", e.showList)
	e.box = container.NewVBox(
		widget.NewLabel("Calibration: position level → mm"),
		e.summary, e.text,
		e.applyB,
		container.NewGridWithColumns(2, e.loadB, e.listB),
	)
	return e
}

// show puts points into the editor; on says whether the rows source uses
// a calibration at all.
// show puts points into the editor, enabled or not; it returns whether
// they changed (and with them, maybe, the editor's height).
func (e *calibrationEditor) show(points [][2]float64, on bool) bool {
	changed := !samePairs(points, e.points) || e.summary.Text == ""
	e.points = points
	long := len(points) > inlinePairs
	if changed {
		e.summary.SetText(pairsSummary(points))
		if long {
			e.text.SetText("")
		} else {
			e.text.SetText(formatPairs(points))
		}
	}
	if long {
		e.text.Hide()
		e.applyB.Hide()
	} else {
		e.text.Show()
		e.applyB.Show()
	}
	enable(e.text, on)
	enable(e.applyB, on)
	enable(e.loadB, on)
	enable(e.listB, len(points) > 0)
	return changed
}

func samePairs(a, b [][2]float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// pairsSummary says how many points there are and what they span.
func pairsSummary(points [][2]float64) string {
	if len(points) == 0 {
		return "none yet"
	}
	lo, hi := points[0], points[0]
	for _, p := range points {
		lo[0], hi[0] = min(lo[0], p[0]), max(hi[0], p[0])
		lo[1], hi[1] = min(lo[1], p[1]), max(hi[1], p[1])
	}
	return fmt.Sprintf("%s points, level %.4g…%.4g → %.4g…%.4g mm", groupDigits(len(points)), lo[0], hi[0], lo[1], hi[1])
}

// groupDigits writes n with thin spaces between groups of three digits.
func groupDigits(n int) string {
	s := fmt.Sprint(n)
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "\u202f" + s[i:]
	}
	return s
}

// parsePairs reads "level mm" pairs, one a line; spaces, tabs, commas
// between the numbers, semicolons or arrows separate them.
func parsePairs(text, where string) ([][2]float64, error) {
	var points [][2]float64
	n := 0
	for len(text) > 0 {
		n++
		line, rest, _ := strings.Cut(text, "\n")
		text = rest
		fields := strings.FieldsFunc(line, func(r rune) bool {
			return r == ' ' || r == '\t' || r == ';' || r == '→' || r == '\r' || r == ','
		})
		if len(fields) == 0 || strings.HasPrefix(fields[0], "#") {
			continue
		}
		if len(fields) != 2 {
			return nil, fmt.Errorf("%s, line %d holds %q; each line needs two numbers: a position level and its millimetres", where, n, line)
		}
		var p [2]float64
		bad := ""
		for k, f := range fields {
			v, err := parseNumber(f)
			if err != nil {
				bad = f
				break
			}
			p[k] = v
		}
		switch {
		case bad == "":
			points = append(points, p)
		case n == 1:
			// A first line of column names.
		default:
			return nil, fmt.Errorf("%s, line %d: %q is not a number", where, n, bad)
		}
	}
	if len(points) < 2 {
		return nil, fmt.Errorf("%s holds %d point(s); at least two are needed", where, len(points))
	}
	return points, nil
}

func (e *calibrationEditor) applyText(text, where string) {
	points, err := parsePairs(text, where)
	if err != nil {
		e.problem("Cannot use the calibration", err.Error()+".", "write one pair a line, e.g. \"0.5 0\" and \"4.5 400\".")
		return
	}
	e.apply(points)
}

// showList lists every point; the list only draws the rows on screen, so
// a long calibration opens at once.
func (e *calibrationEditor) showList() {
	if e.list == nil {
		return
	}
	points := e.points
	l := widget.NewList(func() int { return len(points) },
		func() fyne.CanvasObject {
			t := widget.NewLabel("000000  -0.000000  -0.000000")
			t.TextStyle = fyne.TextStyle{Monospace: true}
			return t
		},
		func(i widget.ListItemID, o fyne.CanvasObject) {
			o.(*widget.Label).SetText(fmt.Sprintf("%6d  %.6g → %.6g mm", i+1, points[i][0], points[i][1]))
		})
	body := container.NewBorder(widget.NewLabel(pairsSummary(points)), nil, nil, nil, l)
	e.list("Calibration points", container.NewGridWrap(fyne.NewSize(420, 360), body))
}
