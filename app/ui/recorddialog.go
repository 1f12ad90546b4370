package ui

import (
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
	"spotloom/capture/live"
)

// The choices of the Record… dialog.
const deviceOwn = "the device's own"

var (
	recordRates    = []string{deviceOwn, "44100", "48000", "96000", "192000"}
	recordChannels = []string{deviceOwn, "1", "2", "3", "4"}
	recordFormats  = []string{"s16 (16-bit)", "s24 (24-bit)", "f32 (32-bit float)"}
	formatTypes    = map[string]string{recordFormats[0]: "int16", recordFormats[1]: "int24", recordFormats[2]: "float32"}
	noSoundAdvice  = "start the sound server (PulseAudio or PipeWire) or plug in the sound card, then press Record… again; to watch an image form without hardware, replay a capture: spotloom open FILE --replay."
)

// recordForm is the Record… dialog's fields.
type recordForm struct {
	ws       *Workstation
	devices  []live.DeviceInfo
	device   *widget.Select
	rate     *widget.SelectEntry
	channels *widget.SelectEntry
	format   *widget.Select
	folder   *widget.Entry
	name     *widget.Entry
	dialog   *dialog.FormDialog
}

func (ws *Workstation) devicesFunc() func() ([]live.DeviceInfo, error) {
	if ws.opts.Devices != nil {
		return ws.opts.Devices
	}
	return live.Devices
}

func (ws *Workstation) openDeviceFunc() func(string, live.Format) (live.Source, error) {
	if ws.opts.OpenDevice != nil {
		return ws.opts.OpenDevice
	}
	return func(name string, want live.Format) (live.Source, error) { return live.OpenDevice(name, want) }
}

// ShowRecord lists the capture devices (off the UI goroutine: a sound
// server may take a moment) and asks what to record and where.
func (ws *Workstation) ShowRecord() {
	if ws.Live() {
		ws.showProblem("A live view is running", ws.lv.run.name+" is still being captured.", "press Stop first.")
		return
	}
	list := ws.devicesFunc()
	ws.askDiscard("record a new capture", func() {
		ws.stage.SetText("Looking for capture devices…")
		go func() {
			devices, err := list()
			uiDo(func() { ws.showRecordForm(devices, err) })
		}()
	})
}

func (ws *Workstation) showRecordForm(devices []live.DeviceInfo, err error) *recordForm {
	ws.stage.SetText(ws.settled)
	switch {
	case err != nil:
		ws.showProblem("Cannot list the capture devices", windowWords(err.Error())+".", noSoundAdvice)
		return nil
	case len(devices) == 0:
		ws.showProblem("No capture device", "the sound system offers no device to record from.", noSoundAdvice)
		return nil
	}
	f := &recordForm{ws: ws, devices: devices}
	var names []string
	chosen := ""
	for _, d := range devices {
		names = append(names, deviceLabel(d))
		if d.Default || chosen == "" {
			chosen = deviceLabel(d)
		}
	}
	f.device = widget.NewSelect(names, nil)
	f.device.SetSelected(chosen)
	f.rate = widget.NewSelectEntry(recordRates)
	f.rate.SetText(deviceOwn)
	f.channels = widget.NewSelectEntry(recordChannels)
	f.channels.SetText(deviceOwn)
	f.format = widget.NewSelect(recordFormats, nil)
	f.format.SetSelected(recordFormats[0])
	f.folder, f.name = widget.NewEntry(), widget.NewEntry()
	dir, _ := ws.defaultExportPlace()
	f.folder.SetText(dir)
	f.name.SetText("recording-" + time.Now().Format("20060102-150405") + ".wav")
	browse := widget.NewButton("Folder…", func() { ws.chooseFolder(f.folder) })
	items := []*widget.FormItem{
		widget.NewFormItem("Device", f.device),
		widget.NewFormItem("Rate (Hz)", f.rate),
		widget.NewFormItem("Channels", f.channels),
		widget.NewFormItem("Samples", f.format),
		widget.NewFormItem("Folder", container.NewBorder(nil, nil, nil, browse, f.folder)),
		widget.NewFormItem("File", f.name),
	}
	f.dialog = dialog.NewForm("Record from a sound card", "Record", "Cancel", items, func(ok bool) {
		if ok {
			f.record()
		}
	}, ws.win)
	f.dialog.Resize(fyne.NewSize(600, 420))
	ws.showDialog(f.dialog)
	return f
}

// deviceLabel names a device in the list.
func deviceLabel(d live.DeviceInfo) string {
	if d.Default {
		return d.Name + " (default)"
	}
	return d.Name
}

// recordChoice is what the dialog asks for, read and checked.
type recordChoice struct {
	device     string // name or ID for live.OpenDevice
	want       live.Format
	sampleType string
	path       string
}

// read checks the fields; a field that cannot be used is named in problem.
func (f *recordForm) read() (c recordChoice, problem, try string) {
	for _, d := range f.devices {
		if deviceLabel(d) == f.device.Selected {
			c.device = d.Name
			if d.ID != "" {
				c.device = d.ID
			}
		}
	}
	var ok bool
	if c.want.RateHz, ok = positiveOrOwn(f.rate.Text, 1<<22); !ok {
		return c, fmt.Sprintf("rate %q is not a whole number of hertz.", f.rate.Text), "pick a rate from the list, or " + deviceOwn + "."
	}
	if c.want.Channels, ok = positiveOrOwn(f.channels.Text, capture.MaxChannels); !ok {
		return c, fmt.Sprintf("%q is not a number of channels.", f.channels.Text), fmt.Sprintf("give 1 to %d, or %s.", capture.MaxChannels, deviceOwn)
	}
	c.sampleType = formatTypes[f.format.Selected]
	name := strings.TrimSpace(f.name.Text)
	if name == "" {
		return c, "the recording needs a file name.", "type one ending in .wav."
	}
	if !strings.EqualFold(filepath.Ext(name), ".wav") {
		name += ".wav"
	}
	c.path = inFolder(f.folder.Text, name)
	if st, err := os.Stat(filepath.Dir(c.path)); err != nil || !st.IsDir() {
		return c, fmt.Sprintf("the folder %s does not exist.", filepath.Dir(c.path)), "choose a folder with Folder…."
	}
	return c, existing(c.path), "a recording never replaces a file: choose another name."
}

// existing says which of a recording's files already exists ("" for none).
func existing(path string) string {
	for _, p := range []string{path, live.SidecarPath(path)} {
		if _, err := os.Lstat(p); err == nil {
			return p + " already exists."
		}
	}
	return ""
}

// positiveOrOwn reads a whole number from 1 to most, or the device's own
// (0).
func positiveOrOwn(text string, most int) (int, bool) {
	text = strings.TrimSpace(text)
	if text == "" || text == deviceOwn {
		return 0, true
	}
	n, err := strconv.Atoi(text)
	return n, err == nil && n >= 1 && n <= most
}

// record opens the device (off the UI goroutine) and starts the live view,
// or brings the dialog back with what was typed and says what is wrong.
func (f *recordForm) record() {
	ws := f.ws
	c, problem, try := f.read()
	if problem != "" {
		ws.problemOver(f.dialog, "Cannot record", problem, try)
		return
	}
	openDevice := ws.openDeviceFunc()
	ws.stage.SetText("Opening the capture device…")
	go func() {
		src, err := openDevice(c.device, c.want)
		uiDo(func() {
			if err != nil {
				ws.problemOver(f.dialog, "Cannot open the capture device", windowWords(err.Error())+".", "pick another device, rate or number of channels; "+noSoundAdvice)
				return
			}
			if !ws.beginRecording(src, c) {
				src.Stop()
			}
		})
	}()
}

// beginRecording starts the live view of a device just opened, unless the
// file appeared meanwhile or a live view started.
func (ws *Workstation) beginRecording(src live.Source, c recordChoice) bool {
	if ws.Live() {
		return false
	}
	if p := existing(c.path); p != "" {
		ws.showProblem("Cannot record", p, "a recording never replaces a file: choose another name.")
		return false
	}
	ws.RecordFrom(src, c.path, c.sampleType)
	return true
}
