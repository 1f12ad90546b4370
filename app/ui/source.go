package ui

import (
	"errors"
	"fmt"
	"path/filepath"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// sourcePanel shows the capture, its channel roles, recent captures and
// the recipe buttons. It knows the window only through its actions.
type sourcePanel struct {
	act      sourceActions
	rec      *capture.Recording // the capture whose channels the lists offer
	info     *widget.Label
	note     *widget.Label
	recent   *choice
	detector *choice
	index    *choice
	position *choice
	options  []string // "N · name (unit)" per channel
	box      fyne.CanvasObject
}

// sourceActions are what the source panel may ask of the window.
type sourceActions struct {
	// edit changes the recipe as the control name says, as the window's
	// other controls do (rebuild, undo step).
	edit       func(name string, f func(*recipe.Recipe))
	openRecent func(path string) // opens a recent capture, asking first if tuning would be lost
	choose     func()            // Open capture…
	rawLayout  func()            // Raw layout…
	load, save func()            // Load recipe…, Save recipe…
}

const noChannel = "none"

func newSourcePanel(act sourceActions, recent []string) *sourcePanel {
	p := &sourcePanel{act: act}
	p.info = widget.NewLabel("No capture")
	p.info.Wrapping = fyne.TextWrapWord
	p.note = widget.NewLabel("")
	p.note.Wrapping = fyne.TextWrapWord
	p.note.Importance = widget.LowImportance
	p.recent = newChoice(nil, func(path string) {
		if path != "" {
			act.openRecent(path)
		}
	})
	p.recent.PlaceHolder = "Recent captures"
	p.detector = newChoice(nil, func(o string) { p.roleChosen(roleDetector, o) })
	p.index = newChoice(nil, func(o string) { p.roleChosen(roleIndex, o) })
	p.position = newChoice(nil, func(o string) { p.roleChosen(rolePosition, o) })
	roles := container.New(layout.NewFormLayout(),
		roleLabel(0, "Detector"), p.detector,
		roleLabel(1, "Index pulse"), p.index,
		roleLabel(2, "Position"), p.position,
	)
	p.box = container.NewVBox(
		widget.NewLabelWithStyle("Source", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		p.info,
		container.NewGridWithColumns(2,
			widget.NewButton("Open capture…", act.choose),
			widget.NewButton("Raw layout…", act.rawLayout)),
		p.recent,
		widget.NewLabel("Channel roles"),
		roles,
		p.note,
		container.NewGridWithColumns(2,
			widget.NewButton("Load recipe…", act.load),
			widget.NewButton("Save recipe…", act.save)),
	)
	p.showRecent(recent)
	return p
}

func (p *sourcePanel) object() fyne.CanvasObject { return p.box }

func (p *sourcePanel) showRecent(list []string) {
	p.recent.Options, p.recent.Selected = list, ""
	p.recent.Refresh()
}

// showCapture describes rec and fills the role lists from its channels;
// showRoles then selects the roles of a recipe.
func (p *sourcePanel) showCapture(rec *capture.Recording, path, note string) {
	p.rec = rec
	src := "built-in demo (generated in memory)"
	if path != "" {
		src = filepath.Base(path)
	}
	format := rec.Source.Format
	if rec.Source.SampleType != "" {
		format += ", " + rec.Source.SampleType
	}
	p.info.SetText(fmt.Sprintf("%s\n%s · %d channels · %.6g Hz · %.3f s", src, format, len(rec.Channels), rec.SampleRateHz, rec.DurationS()))
	p.options = nil
	for i, c := range rec.Channels {
		p.options = append(p.options, channelOption(i, c))
	}
	withNone := append([]string{noChannel}, p.options...)
	p.detector.Options, p.index.Options, p.position.Options = withNone, withNone, withNone
	if note != "" {
		p.note.SetText("Settings: " + note + ".")
		p.note.Show()
	} else {
		p.note.SetText("")
		p.note.Hide()
	}
}

func channelOption(i int, c capture.Channel) string {
	name := c.Name
	if name == "" {
		name = "channel " + strconv.Itoa(i)
	}
	if c.Unit != "" {
		return fmt.Sprintf("%d · %s (%s)", i, name, c.Unit)
	}
	return fmt.Sprintf("%d · %s", i, name)
}

// showRoles selects the channels r names ("none" for a role without one).
func (p *sourcePanel) showRoles(r recipe.Recipe) {
	det, idx, pos := roleChannels(p.rec, r)
	pick := func(s *choice, i int) {
		if i >= 0 && i < len(p.options) {
			s.show(p.options[i])
		} else {
			s.show(noChannel)
		}
	}
	pick(p.detector, det)
	pick(p.index, idx)
	pick(p.position, pos)
}

func optionChannel(option string) (recipe.ChannelRef, bool) {
	if option == "" || option == noChannel {
		return "", false
	}
	num, _, _ := strings.Cut(option, " · ")
	if _, err := strconv.Atoi(num); err != nil {
		return "", false
	}
	return recipe.ChannelRef(num), true
}

// The channel roles, in the order of the role lists.
const (
	roleDetector = iota
	roleIndex
	rolePosition
)

// roleChosen gives role the channel option names. A channel another role
// holds moves to this role in one step, and that role takes this role's
// old channel (or none): roles swap rather than clash. The one exception
// is the position on the index channel with a tone source: both then
// share the channel (a two-input sound card; docs/pipeline.md).
func (p *sourcePanel) roleChosen(role int, option string) {
	ch, _ := optionChannel(option)
	p.act.edit("channel roles", func(r *recipe.Recipe) {
		det, idx, pos := roleChannels(p.rec, *r)
		refs := [3]recipe.ChannelRef{}
		for i, n := range [3]int{det, idx, pos} {
			if n >= 0 {
				refs[i] = recipe.ChannelRef(strconv.Itoa(n))
			}
		}
		old := refs[role]
		shares := role == rolePosition && r.Rows.Source == recipe.SourceTone
		for i := range refs {
			if i != role && ch != "" && refs[i] == ch && !(shares && i == roleIndex) {
				refs[i] = old
			}
		}
		refs[role] = ch
		r.Channels.Detector, r.Channels.Index = refs[roleDetector], refs[roleIndex]
		if r.Rows.Source == recipe.SourceSteps {
			r.Channels.Steps = refs[rolePosition]
		} else {
			r.Channels.Position = refs[rolePosition]
		}
	})
}

// rawLayoutForm is the raw-layout dialog's fields, in the order shown.
type rawLayoutForm struct {
	ws                                    *Workstation
	file                                  *widget.Entry
	sampleType, byteOrder                 *widget.Select
	channels, header, rate, scale, offset *widget.Entry
	interleaved                           *widget.Check
	dialog                                *dialog.FormDialog
}

// askRawLayout asks how a raw sample file is laid out and opens it with
// that layout. With path "" it first asks for the file.
func (ws *Workstation) askRawLayout(path string) { ws.showDialog(ws.newRawLayoutForm(path).dialog) }

func (ws *Workstation) newRawLayoutForm(path string) *rawLayoutForm {
	f := &rawLayoutForm{ws: ws}
	f.file = widget.NewEntry()
	f.file.SetText(path)
	f.file.SetPlaceHolder("/path/to/capture.bin")
	browse := widget.NewButton("Choose…", func() {
		d := dialog.NewFileOpen(func(rc fyne.URIReadCloser, err error) {
			if err != nil || rc == nil {
				return
			}
			f.file.SetText(rc.URI().Path())
			rc.Close()
		}, ws.win)
		d.Resize(fyne.NewSize(820, 560))
		d.Show()
	})
	f.sampleType = widget.NewSelect([]string{"int8", "uint8", "int16", "uint16", "int32", "uint32", "float32", "float64"}, nil)
	f.sampleType.SetSelected("int16")
	f.byteOrder = widget.NewSelect([]string{"little", "big"}, nil)
	f.byteOrder.SetSelected("little")
	f.channels = widget.NewEntry()
	f.channels.SetText("3")
	f.interleaved = widget.NewCheck("frame after frame (ch0 ch1 ch2 ch0 …)", nil)
	f.interleaved.SetChecked(true)
	f.header = widget.NewEntry()
	f.header.SetText("0")
	f.rate = widget.NewEntry()
	f.rate.SetPlaceHolder("e.g. 200000")
	f.scale = widget.NewEntry()
	f.scale.SetPlaceHolder("volts per count, blank = full scale ±1")
	f.offset = widget.NewEntry()
	f.offset.SetPlaceHolder("volts, blank = 0")
	items := []*widget.FormItem{
		widget.NewFormItem("File", container.NewBorder(nil, nil, nil, browse, f.file)),
		widget.NewFormItem("Sample type", f.sampleType),
		widget.NewFormItem("Byte order", f.byteOrder),
		widget.NewFormItem("Channels", f.channels),
		widget.NewFormItem("Interleaved", f.interleaved),
		widget.NewFormItem("Header bytes", f.header),
		widget.NewFormItem("Sample rate (Hz)", f.rate),
		widget.NewFormItem("Scale", f.scale),
		widget.NewFormItem("Offset", f.offset),
	}
	if path != "" {
		why := widget.NewLabel(filepath.Base(path) + " holds bare samples and no " +
			strings.TrimSuffix(filepath.Base(path), filepath.Ext(path)) + ".layout.json lies beside it. " +
			"Say how the samples are stored; the ADC's manual or the program that wrote the file has these numbers.")
		why.Wrapping = fyne.TextWrapWord
		items = append([]*widget.FormItem{widget.NewFormItem("", why)}, items...)
	}
	f.dialog = dialog.NewForm("Raw sample layout", "Open", "Cancel", items, func(ok bool) {
		if ok {
			f.open()
		}
	}, ws.win)
	f.dialog.Resize(fyne.NewSize(560, 520))
	return f
}

// check reads the fields in the order they appear and names the first
// one that cannot be used.
func (f *rawLayoutForm) check() (string, capture.RawLayout, error) {
	path := expandPath(f.file.Text)
	if path == "" {
		return "", capture.RawLayout{}, errors.New("file: type the raw file's path or press Choose…")
	}
	layout, err := readLayoutForm(f.sampleType.Selected, f.byteOrder.Selected, f.channels.Text, f.interleaved.Checked, f.header.Text, f.rate.Text, f.scale.Text, f.offset.Text)
	return path, layout, err
}

// open opens the file with the layout typed; after an error the dialog
// comes back with everything as it was typed.
func (f *rawLayoutForm) open() {
	path, layout, err := f.check()
	if err != nil {
		f.ws.problemOver(f.dialog, "Cannot use this layout", err.Error()+".", "correct the field and open again.")
		return
	}
	f.ws.openWith(path, capture.Options{Layout: &layout}, nil)
}

func readLayoutForm(sampleType, byteOrder, channels string, interleaved bool, header, rate, scale, offset string) (capture.RawLayout, error) {
	l := capture.RawLayout{SampleType: sampleType, ByteOrder: byteOrder, Interleaved: interleaved}
	n, err := strconv.Atoi(strings.TrimSpace(channels))
	if err != nil || n < 1 || n > capture.MaxRawChannels {
		return l, fmt.Errorf("channels %q: give a whole number from 1 to %d", channels, capture.MaxRawChannels)
	}
	l.Channels = n
	h, err := strconv.ParseInt(strings.TrimSpace(header), 10, 64)
	if err != nil || h < 0 {
		return l, fmt.Errorf("header bytes %q: give a whole number from 0", header)
	}
	l.HeaderBytes = h
	hz, err := parseNumber(rate)
	if err != nil || hz <= 0 {
		return l, fmt.Errorf("sample rate %q: give the rate in hertz, above 0", rate)
	}
	l.SampleRateHz = hz
	if strings.TrimSpace(scale) != "" {
		v, err := parseNumber(scale)
		if err != nil || v == 0 {
			return l, fmt.Errorf("scale %q: give volts per count (not 0), or leave it blank", scale)
		}
		l.Scale = []float64{v}
	}
	if strings.TrimSpace(offset) != "" {
		v, err := parseNumber(offset)
		if err != nil {
			return l, fmt.Errorf("offset %q: give volts, or leave it blank", offset)
		}
		l.Offset = []float64{v}
	}
	return l, nil
}

// askSampleRate asks for the sample rate of a text capture that has no
// time column and names no rate, then opens it again with that rate.
func (ws *Workstation) askSampleRate(path string) {
	rate := widget.NewEntry()
	rate.SetPlaceHolder("e.g. 200000")
	why := widget.NewLabel(filepath.Base(path) + " has no time column and names no sample interval, " +
		"so the time between samples is unknown. Give the rate the logger or scope sampled at.")
	why.Wrapping = fyne.TextWrapWord
	items := []*widget.FormItem{
		widget.NewFormItem("", why),
		widget.NewFormItem("Sample rate (Hz)", rate),
	}
	d := dialog.NewForm("Sample rate", "Open", "Cancel", items, func(ok bool) {
		if !ok {
			return
		}
		hz, err := parseNumber(rate.Text)
		if err != nil || hz <= 0 || hz > capture.MaxSampleRateHz {
			ws.showProblem("Cannot use this rate", fmt.Sprintf("%q is not a rate above 0 Hz and at most %g Hz.", rate.Text, capture.MaxSampleRateHz), "type the rate in hertz and open again.")
			return
		}
		ws.openWith(path, capture.Options{SampleRateHz: hz}, nil)
	}, ws.win)
	d.Resize(fyne.NewSize(520, 260))
	d.Show()
}
