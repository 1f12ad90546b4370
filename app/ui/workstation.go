package ui

import (
	"fmt"
	"image/color"
	"io"
	"path/filepath"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
	"spotloom/capture/live"
	"spotloom/recon"
	"spotloom/recon/recipe"
)

// Options configure a Workstation. The zero value uses the real engine,
// capture.Open and the application's preferences.
type Options struct {
	Open      OpenFunc   // reads a capture; nil means capture.Open
	NewEngine EngineFunc // makes the engine for a capture; nil means recon.NewSession
	Icon      fyne.Resource
	// Capture says how to read the file named on the command line (its
	// rate, a raw layout); files opened later from the window are read
	// with their own settings.
	Capture capture.Options
	// SessionFile is where the session is autosaved and offered back from
	// on the next start ("" keeps none; DefaultSessionFile is the usual).
	SessionFile string
	// Devices and OpenDevice list and open capture devices for Record…;
	// nil means the sound cards (capture/live). Tests give replays.
	Devices    func() ([]live.DeviceInfo, error)
	OpenDevice func(name string, want live.Format) (live.Source, error)
	// CreateWAV makes the WAV a recording writes (live.Options.Create);
	// nil means a new file on disk. Tests give one on a disk that fills.
	CreateWAV func(path string, f capture.WAVStreamFormat) (*capture.WAVStream, error)
}

// Workstation is the Spotloom window: the source and controls on the
// left, the image with the trace strip below it in the middle, the facts
// on the right and the build status at the bottom.
//
// Its state belongs to the UI goroutine; engine work runs on a worker
// goroutine and comes back through fyne.Do.
type Workstation struct {
	app  fyne.App
	win  fyne.Window
	opts Options
	work *worker

	// The state of the capture shown; render puts it into the panels.
	state
	drawn drawn // what render last put in

	followLine  bool // the trace strip follows the pointer
	problem     string
	buildSeq    int
	lastBuild   time.Duration
	afterBuild  string // a note to show with the next finished build
	settled     string // what the status line said after the last open or build
	resume      *savedSession
	sessionNote string
	saveTimer   *time.Timer

	view     *ImageView
	strip    *TraceStrip
	controls *controlPanel
	facts    *factsPanel
	measures *measurePanel
	marking  *markTools // measureTools: the tool menu, the selected mark
	source   *sourcePanel

	readout     *widget.Label
	zoomLabel   *widget.Label
	frameLabel  *widget.Label
	prevFrame   *widget.Button
	nextFrame   *widget.Button
	lineEntry   *widget.Entry
	followCheck *toggle
	progress    *widget.ProgressBar
	progressBox *fyne.Container // the progress bar, shown while work runs
	stage       *widget.Label
	cancel      *widget.Button
	undoButton  *widget.Button
	redoButton  *widget.Button
	menuUndo    *fyne.MenuItem
	menuRedo    *fyne.MenuItem
	menuStop    *fyne.MenuItem
	recentMenu  *fyne.MenuItem
	mainMenu    *fyne.MainMenu
	leftBox     *fyne.Container
	topBar      fyne.CanvasObject   // the window's toolbar
	viewBar     fyne.CanvasObject   // the image's toolbar
	stripBar    fyne.CanvasObject   // the trace strip's toolbar
	legend      []fyne.CanvasObject // the trace strip's legend entries
	statusBar   fyne.CanvasObject
	middle      fyne.CanvasObject
	rightScroll fyne.CanvasObject
	leftScroll  *container.Scroll
	dialogs     []dialog.Dialog // messages shown, newest last
	lv          liveState       // a recording or replay forming its image
}

// state is what the window shows: the capture, the settings being tuned
// and the build they made. It belongs to the UI goroutine; every change of
// it ends in render.
type state struct {
	rec         *capture.Recording
	engine      Engine
	sourcePath  string // "" for the built-in demo
	sourceName  string
	cur         settings // what the controls show
	good        settings // what the image was built with
	clean       settings // the settings as opened or last saved
	result      *Result
	frameIndex  int // the frame of result shown
	hist        *history
	tonedInvert bool // the detector polarity the tone was fitted for
	// place is where the next render puts the view: nil leaves it where
	// the user put it, a zero place fits the next frame (a new capture),
	// another zoom and centre are put back (a session resumed, a live view
	// become an ordinary capture).
	place *viewPlace
	// liveUpdate says the build shown is a live view's update between two
	// full ones: the next render puts in only the image (and the facts
	// when liveFacts says they are due, liveTextRate times a second), and
	// leaves the panels that rescan the capture or redraw many widgets (the
	// trace strip, the measurements, the controls) for the next full one.
	liveUpdate, liveFacts bool
}

// drawn is what render last put into the panels, so it puts in again only
// what changed: a build's image, traces, facts and measurements cost far
// more than the controls.
type drawn struct {
	result    *Result
	tone      recon.Tone
	rec       *capture.Recording
	indexSpan channelSpan // the index channel's range, for its control
	// frameRange is the frame's covered range, for the tone's controls.
	frameRange struct {
		frame *recon.Frame
		span  [2]float64
	}
}

// channelSpan is the lowest and highest sample of channel ch of rec.
type channelSpan struct {
	rec  *capture.Recording
	ch   int
	span [2]float64
}

// relayout lays the side panels out again after their texts changed
// height (wrapped labels, a new number of aperture controls).
func (ws *Workstation) relayout() {
	if ws.leftBox != nil {
		ws.leftBox.Refresh()
		ws.leftScroll.Refresh()
	}
}

// New builds the window's content in win. Call OpenDemo or OpenFile next.
func New(a fyne.App, win fyne.Window, opts Options) *Workstation {
	ws := &Workstation{app: a, win: win, opts: opts, state: state{hist: newHistory()}, followLine: true}
	ws.work = newWorker(ws.reportProgress, uiDo)
	ws.work.settled = ws.settledWork
	ws.build()
	return ws
}

// Window returns the window the workstation lives in.
func (ws *Workstation) Window() fyne.Window { return ws.win }

// Wait blocks until no engine work is running or queued. It is for tests
// and the snapshot, which must not call it from the UI goroutine.
func (ws *Workstation) Wait() { ws.work.wait() }

// Problem returns the text of the last problem shown in a dialog ("" when
// none), for tests.
func (ws *Workstation) Problem() string { return ws.problem }

// columns lays out the left panel, the middle and the right panel: the
// side panels take a share of the window's width within bounds, so a
// small screen keeps room for the image and a large one does not waste it.
type columns struct{}

// Bounds of the side columns' widths, and their share of the window.
const (
	leftMin, leftMax, leftShare    = 270, 340, 0.25
	rightMin, rightMax, rightShare = 245, 270, 0.19
)

func sideWidths(total float32) (left, right float32) {
	left = min(max(leftShare*total, leftMin), leftMax)
	right = min(max(rightShare*total, rightMin), rightMax)
	return left, right
}

// MinSize: objects are left, middle, right.
func (columns) MinSize(objects []fyne.CanvasObject) fyne.Size {
	h := float32(0)
	for _, o := range objects {
		h = max(h, o.MinSize().Height)
	}
	return fyne.NewSize(leftMin+rightMin+objects[1].MinSize().Width, h)
}

func (columns) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	l, r := sideWidths(size.Width)
	objects[0].Move(fyne.NewPos(0, 0))
	objects[0].Resize(fyne.NewSize(l, size.Height))
	objects[1].Move(fyne.NewPos(l, 0))
	objects[1].Resize(fyne.NewSize(max(size.Width-l-r, 0), size.Height))
	objects[2].Move(fyne.NewPos(size.Width-r, 0))
	objects[2].Resize(fyne.NewSize(r, size.Height))
}

func (ws *Workstation) build() {
	ws.view = NewImageView()
	ws.view.OnPointer = ws.pointerMoved
	ws.view.OnTap = ws.imageTapped
	ws.view.OnZoom = func(z float32) { ws.showZoom(z) }
	ws.strip = NewTraceStrip()
	ws.controls = newControlPanel(panelActions{
		edit: ws.edit, gesture: ws.gesture, problem: func(title, what, try string) { ws.showProblem(title, what, try) },
		estimate: ws.EstimateOffsets, autoTone: ws.AutoTone, table: ws.ShowTableEditor,
		loadPairs: ws.choosePairs,
		showList: func(title string, body fyne.CanvasObject) {
			ws.showDialog(dialog.NewCustom(title, "Close", body, ws.win))
		},
	})
	ws.facts = newFactsPanel()
	ws.measures = newMeasurePanel(measureActions{add: ws.addMeasurement, remove: ws.removeMeasurement,
		choose: ws.selectMeasurement, pair: ws.pairMeasurement})
	ws.source = newSourcePanel(sourceActions{
		edit: ws.change,
		openRecent: func(path string) {
			ws.askDiscard("open "+filepath.Base(path), func() { ws.OpenFile(path, nil) })
		},
		choose: ws.ChooseCapture, rawLayout: func() { ws.askRawLayout("") },
		load: ws.ChooseRecipe, save: ws.SaveRecipe,
	}, ws.recent())

	ws.readout = widget.NewLabel("")
	ws.readout.TextStyle = fyne.TextStyle{Monospace: true}
	ws.zoomLabel = widget.NewLabel("")
	ws.frameLabel = widget.NewLabel("frame 1 of 1")
	ws.prevFrame = widget.NewButtonWithIcon("", theme.NavigateBackIcon(), func() { ws.showFrame(ws.frameIndex - 1) })
	ws.nextFrame = widget.NewButtonWithIcon("", theme.NavigateNextIcon(), func() { ws.showFrame(ws.frameIndex + 1) })
	fixed := func(w float32, o fyne.CanvasObject) fyne.CanvasObject {
		return container.NewGridWrap(fyne.NewSize(w, o.MinSize().Height), o)
	}
	viewBar := container.NewHBox(
		widget.NewButtonWithIcon("", theme.ZoomOutIcon(), func() { ws.view.ZoomBy(1 / 1.25) }),
		widget.NewButtonWithIcon("", theme.ZoomInIcon(), func() { ws.view.ZoomBy(1.25) }),
		widget.NewButtonWithIcon("Fit", theme.ZoomFitIcon(), ws.view.ZoomFit),
		widget.NewButton("1:1", ws.view.ZoomPixels),
		fixed(64, ws.zoomLabel),
		widget.NewSeparator(),
		ws.prevFrame, fixed(104, ws.frameLabel), ws.nextFrame,
		widget.NewSeparator(),
	)

	ws.lineEntry = widget.NewEntry()
	ws.lineEntry.SetPlaceHolder("line")
	ws.lineEntry.OnSubmitted = func(s string) { ws.chooseLineNumber(s) }
	ws.followCheck = newToggle("Follow pointer", func(on bool) { ws.followLine = on })
	ws.followCheck.SetChecked(true)
	stripBar := container.NewHBox(
		widget.NewLabelWithStyle("Traces", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		widget.NewButtonWithIcon("", theme.MoveUpIcon(), func() { ws.stepLine(-1) }),
		widget.NewButtonWithIcon("", theme.MoveDownIcon(), func() { ws.stepLine(1) }),
		container.NewGridWrap(fyne.NewSize(90, ws.lineEntry.MinSize().Height), ws.lineEntry),
		ws.followCheck,
	)
	// Two rows, so a narrow window keeps every button in sight; the legend
	// wraps beside them rather than scrolling or widening the window.
	stripBar = container.NewVBox(stripBar, ws.traceTools())
	imageArea := container.NewBorder(container.NewVBox(viewBar, ws.measureTools()), nil, nil, nil, ws.view)
	ws.legend = traceLegend()
	stripArea := newStripArea(stripBar, ws.legend, ws.strip)
	split := container.NewVSplit(imageArea, stripArea)
	middle := newStripShare(split)

	ws.controls.groups.Append(widget.NewAccordionItem("Source and channel roles", ws.source.object()))
	ws.leftBox = container.NewVBox(ws.controls.object())
	ws.leftScroll = container.NewVScroll(ws.leftBox)
	// The facts above, the measurements below: each scrolls on its own,
	// so neither hides the other.
	right := container.NewVSplit(container.NewVScroll(ws.facts.object()), ws.measures.object())
	right.Offset = 0.52

	ws.progress = widget.NewProgressBar()
	ws.stage = widget.NewLabel("Ready")
	ws.cancel = widget.NewButtonWithIcon("Cancel", theme.CancelIcon(), ws.Cancel)
	ws.cancel.Disable()
	ws.progressBox = container.NewGridWrap(fyne.NewSize(220, ws.progress.MinSize().Height), ws.progress)
	ws.progressBox.Hide()
	ws.stage.Truncation = fyne.TextTruncateEllipsis
	// The read-out is never cut: it takes its text's width (at least that
	// of a usual reading, so it does not jump as the pointer moves) and the
	// build's stage the rest; the progress bar takes room only while a
	// build runs.
	readout := container.New(atLeastWide{w: readoutWidth(ws.readout)}, ws.readout)
	status := container.NewBorder(nil, nil, nil,
		container.NewHBox(readout, ws.progressBox, ws.cancel), ws.stage)

	ws.undoButton = widget.NewButtonWithIcon("Undo", theme.ContentUndoIcon(), ws.Undo)
	ws.redoButton = widget.NewButtonWithIcon("Redo", theme.ContentRedoIcon(), ws.Redo)
	top := container.NewHBox(
		widget.NewButtonWithIcon("Open capture…", theme.FolderOpenIcon(), ws.ChooseCapture),
		widget.NewButtonWithIcon("Demo", theme.MediaPlayIcon(), ws.ChooseDemo),
		widget.NewButtonWithIcon("Record…", theme.MediaRecordIcon(), ws.ShowRecord),
		widget.NewSeparator(),
		widget.NewButtonWithIcon("Export…", theme.DocumentSaveIcon(), ws.ShowExport),
		widget.NewButtonWithIcon("Report…", theme.DocumentPrintIcon(), ws.ShowReport),
		widget.NewSeparator(),
		ws.undoButton, ws.redoButton,
		layout.NewSpacer(),
		widget.NewButtonWithIcon("About", theme.InfoIcon(), ws.ShowAbout),
	)
	line := canvas.NewRectangle(theme.Color(theme.ColorNameSeparator))
	line.SetMinSize(fyne.NewSize(1, 1))
	// The status bar is painted last over an opaque ground, so nothing of
	// a scrolled panel can show through it (the software painter of the
	// snapshot does not clip text).
	ws.lv.bar = newLiveBar(ws.StopLive)
	topBox := container.NewVBox(top, ws.lv.bar.object(), line)
	statusGround := canvas.NewRectangle(theme.Color(theme.ColorNameBackground))
	statusBox := container.NewStack(statusGround, container.NewVBox(widget.NewSeparator(), status))
	inner := container.New(columns{}, ws.leftScroll, middle, right)
	ws.topBar, ws.viewBar, ws.stripBar, ws.statusBar, ws.middle, ws.rightScroll = top, viewBar, stripBar, statusBox, middle, right
	content := container.New(layout.NewBorderLayout(topBox, statusBox, nil, nil), inner, topBox, statusBox)
	ws.win.SetContent(content)
	ws.buildMenu()
	ws.bindKeys()
	ws.win.SetOnDropped(ws.dropped)
	ws.updateUndo()
	ws.showFrameControls()
}

func (ws *Workstation) buildMenu() {
	short := func(key fyne.KeyName, mod fyne.KeyModifier) fyne.Shortcut {
		return &desktop.CustomShortcut{KeyName: key, Modifier: mod}
	}
	ctrl := fyne.KeyModifierShortcutDefault
	item := func(label string, sc fyne.Shortcut, action func()) *fyne.MenuItem {
		m := fyne.NewMenuItem(label, action)
		m.Shortcut = sc
		return m
	}
	quit := item("Quit", short(fyne.KeyQ, ctrl), ws.Quit)
	quit.IsQuit = true
	ws.win.SetCloseIntercept(ws.Quit)
	ws.recentMenu = fyne.NewMenuItem("Recent captures", nil)
	ws.refreshRecentMenu()
	ws.menuUndo = item("Undo", &fyne.ShortcutUndo{}, ws.Undo)
	ws.menuRedo = item("Redo", &fyne.ShortcutRedo{}, ws.Redo)
	ws.menuStop = item("Stop the build", short(fyne.KeyPeriod, ctrl), ws.Cancel)
	ws.menuStop.Disabled = true
	// The other common redo key works too, without a second menu entry.
	ws.win.Canvas().AddShortcut(short(fyne.KeyZ, ctrl|fyne.KeyModifierShift), func(fyne.Shortcut) { ws.Redo() })
	file := fyne.NewMenu("File",
		item("Open capture…", short(fyne.KeyO, ctrl), ws.ChooseCapture),
		ws.recentMenu,
		item("Open built-in demo", short(fyne.KeyD, ctrl), ws.ChooseDemo),
		item("Record…", short(fyne.KeyR, ctrl|fyne.KeyModifierShift), ws.ShowRecord),
		fyne.NewMenuItemSeparator(),
		item("Load recipe…", short(fyne.KeyL, ctrl), ws.ChooseRecipe),
		item("Save recipe…", short(fyne.KeyS, ctrl), ws.SaveRecipe),
		fyne.NewMenuItemSeparator(),
		item("Export…", short(fyne.KeyE, ctrl), ws.ShowExport),
		item("Export report…", short(fyne.KeyR, ctrl), ws.ShowReport),
		fyne.NewMenuItemSeparator(),
		quit,
	)
	edit := fyne.NewMenu("Edit",
		ws.menuUndo, ws.menuRedo,
		fyne.NewMenuItemSeparator(),
		item("Estimate aperture offsets", short(fyne.KeyK, ctrl), ws.EstimateOffsets),
		item("Automatic tone", short(fyne.KeyT, ctrl), ws.AutoTone),
		ws.menuStop,
	)
	view := fyne.NewMenu("View",
		item("Zoom in", short(fyne.KeyEqual, ctrl), func() { ws.view.ZoomBy(1.25) }),
		item("Zoom out", short(fyne.KeyMinus, ctrl), func() { ws.view.ZoomBy(1 / 1.25) }),
		item("Fit to view", short(fyne.Key0, ctrl), ws.view.ZoomFit),
		item("One pixel per point", short(fyne.Key1, ctrl), ws.view.ZoomPixels),
		fyne.NewMenuItemSeparator(),
		item("Next frame", short(fyne.KeyPageDown, ctrl), func() { ws.showFrame(ws.frameIndex + 1) }),
		item("Previous frame", short(fyne.KeyPageUp, ctrl), func() { ws.showFrame(ws.frameIndex - 1) }),
	)
	help := fyne.NewMenu("Help",
		item("Keys", nil, ws.ShowKeys),
		item("About Spotloom", nil, ws.ShowAbout),
	)
	ws.mainMenu = fyne.NewMainMenu(file, edit, view, help)
	ws.win.SetMainMenu(ws.mainMenu)
}

// bindKeys handles the keys that need no modifier, when no entry has the
// keyboard: arrows step the line shown in the trace strip, Page Up/Down
// browse frames, Escape stops the build.
func (ws *Workstation) bindKeys() {
	ws.win.Canvas().SetOnTypedKey(func(ev *fyne.KeyEvent) {
		switch ev.Name {
		case fyne.KeyUp:
			ws.stepLine(-1)
		case fyne.KeyDown:
			ws.stepLine(1)
		case fyne.KeyPageUp:
			ws.showFrame(ws.frameIndex - 1)
		case fyne.KeyPageDown:
			ws.showFrame(ws.frameIndex + 1)
		case fyne.KeyEscape:
			ws.escape()
		case fyne.KeyF1:
			ws.ShowKeys()
		case fyne.KeyDelete, fyne.KeyBackspace:
			ws.RemoveSelectedMeasurement()
		}
	})
	ws.win.Canvas().SetOnTypedRune(func(r rune) {
		switch r {
		case '+', '=':
			ws.view.ZoomBy(1.25)
		case '-':
			ws.view.ZoomBy(1 / 1.25)
		case '0':
			ws.view.ZoomFit()
		}
	})
}

// ShowKeys lists the keyboard shortcuts.
func (ws *Workstation) ShowKeys() {
	text := strings.Join([]string{
		"Ctrl+O\topen a capture", "Ctrl+D\topen the built-in demo", "Ctrl+Shift+R\trecord from a sound card",
		"Ctrl+L / Ctrl+S\tload / save the recipe", "Ctrl+E\texport frames", "Ctrl+R\texport a report sheet (PDF)",
		"Ctrl+Z\tundo", "Ctrl+Y or Ctrl+Shift+Z\tredo",
		"Ctrl+K\testimate aperture offsets", "Ctrl+T\tautomatic tone",
		"Esc or Ctrl+.\tstop the build (Esc first puts a drawing tool away)",
		"+ / − / 0\tzoom in / out / fit (also Ctrl+= Ctrl+- Ctrl+0)", "Ctrl+1\tone frame pixel per point",
		"Page Up / Page Down\tprevious / next frame", "↑ / ↓\tprevious / next line in the trace strip",
		"wheel\tzoom about the pointer", "drag\tmove the image, or draw with the tool chosen", "click\thold the line under the pointer, or select a measurement",
		"Delete\tremove the measurement selected",
	}, "\n")
	rows := container.New(layout.NewFormLayout())
	for _, l := range strings.Split(text, "\n") {
		k, v, _ := strings.Cut(l, "\t")
		rows.Add(widget.NewLabelWithStyle(k, fyne.TextAlignTrailing, fyne.TextStyle{Monospace: true}))
		rows.Add(widget.NewLabel(v))
	}
	ws.showDialog(dialog.NewCustom("Keys", "Close", rows, ws.win))
}

// showProblem tells the user what went wrong and what to try; nothing
// else changes. The status line names the problem while its message is
// up, and goes back to what it said before once the message is closed;
// then runs after that.
func (ws *Workstation) showProblem(title, what, try string, then ...func()) {
	ws.problem = title + ": " + what
	text := what
	if try != "" {
		text += "\n\nWhat to try: " + try
	}
	label := widget.NewLabel(text)
	label.Wrapping = fyne.TextWrapWord
	icon := widget.NewIcon(theme.WarningIcon())
	body := container.NewBorder(nil, nil, container.NewVBox(icon), nil, label)
	sized := container.New(&minWidth{w: 460}, body)
	d := dialog.NewCustom(title, "OK", sized, ws.win)
	ws.showDialog(d, append([]func(){func() {
		if ws.stage.Text == title {
			ws.stage.SetText(ws.settled)
		}
	}}, then...)...)
	ws.stage.SetText(title)
}

// showDialog shows d and remembers it, so Escape can close it; closed
// (when given) runs once it is closed.
func (ws *Workstation) showDialog(d dialog.Dialog, closed ...func()) {
	ws.dialogs = append(ws.dialogs, d)
	d.SetOnClosed(func() {
		for _, f := range closed {
			f()
		}
		for i, o := range ws.dialogs {
			if o == d {
				ws.dialogs = append(ws.dialogs[:i], ws.dialogs[i+1:]...)
				break
			}
		}
	})
	d.Show()
}

// escape closes the newest message, or else stops the build.
func (ws *Workstation) escape() {
	if n := len(ws.dialogs); n > 0 {
		ws.dialogs[n-1].Hide()
		return
	}
	if ws.dropTool() {
		return
	}
	ws.Cancel()
}

// minWidth makes its content at least w wide (so long messages wrap at a
// readable width inside dialogs).
type minWidth struct{ w float32 }

func (m *minWidth) MinSize(objects []fyne.CanvasObject) fyne.Size {
	s := fyne.NewSize(m.w, 0)
	for _, o := range objects {
		o.Resize(fyne.NewSize(m.w, o.MinSize().Height))
		s.Height = max(s.Height, o.MinSize().Height)
	}
	return s
}

// atLeastWide makes its content as wide as it needs, and at least w.
type atLeastWide struct{ w float32 }

func (a atLeastWide) MinSize(objects []fyne.CanvasObject) fyne.Size {
	s := fyne.NewSize(a.w, 0)
	for _, o := range objects {
		s = s.Max(o.MinSize())
	}
	return s
}

func (atLeastWide) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	for _, o := range objects {
		o.Move(fyne.NewPos(0, 0))
		o.Resize(size)
	}
}

// readoutWidth is the width of label holding a usual pointer reading.
func readoutWidth(label *widget.Label) float32 {
	usual := widget.NewLabelWithStyle("value -0.0000 · x -000.0 y -000.0 mm · px 0000,0000", fyne.TextAlignLeading, label.TextStyle)
	return usual.MinSize().Width
}

func (m *minWidth) Layout(objects []fyne.CanvasObject, size fyne.Size) {
	for _, o := range objects {
		o.Move(fyne.NewPos(0, 0))
		o.Resize(size)
	}
}

// modified reports whether the settings differ from those opened or last
// saved.
func (ws *Workstation) modified() bool {
	return ws.result != nil && !sameSettings(ws.cur, ws.clean)
}

// Modified reports whether the window holds tuning that is not saved.
func (ws *Workstation) Modified() bool { return ws.modified() }

func (ws *Workstation) setTitle() {
	name := ws.sourceName
	if name == "" {
		name = "no capture"
	}
	if ws.modified() {
		name = "● " + name + " (not saved)"
	}
	ws.win.SetTitle("Spotloom — " + name)
}

// tuningSaved notes that the settings shown are kept in a recipe file,
// which holds no measurements (an export's sidecar does: measuresSaved).
func (ws *Workstation) tuningSaved() {
	kept := ws.clean.Measurements
	ws.clean = ws.cur.clone()
	ws.clean.Measurements = kept
	ws.setTitle()
	ws.saveSession()
}

// askDiscard runs then at once when nothing is unsaved, else after the
// user agrees to leave the tuning (which the session file still keeps).
func (ws *Workstation) askDiscard(what string, then func()) {
	if !ws.modified() {
		then()
		return
	}
	text := fmt.Sprintf("The settings of %s have changed since they were opened or saved.\nLeave them and %s? (Save recipe… keeps them.)", ws.sourceName, what)
	if sameRecipe(ws.cur.Recipe, ws.clean.Recipe) && ws.cur.Tone == ws.clean.Tone {
		text = fmt.Sprintf("The measurements drawn on %s are in no export's sidecar yet.\nLeave them and %s? (Export… keeps them beside the frame.)", ws.sourceName, what)
	}
	d := dialog.NewConfirm("Leave the tuning?", text,
		func(yes bool) {
			if yes {
				then()
			}
		}, ws.win)
	d.SetConfirmText("Leave them")
	d.SetDismissText("Keep tuning")
	ws.showDialog(d)
}

// ChooseDemo opens the built-in demo, asking first if tuning would be lost.
func (ws *Workstation) ChooseDemo() { ws.askDiscard("open the built-in demo", ws.OpenDemo) }

// Quit closes the window, asking first if tuning would be lost.
func (ws *Workstation) Quit() {
	ws.askDiscard("quit", func() {
		ws.closeLive()
		ws.saveSession()
		ws.win.SetCloseIntercept(nil)
		ws.win.Close()
		if ws.app != nil {
			ws.app.Quit()
		}
	})
}

// sessionChanged saves the session a moment after the last change, so a
// drag does not write the file at every step.
func (ws *Workstation) sessionChanged() {
	ws.setTitle()
	if ws.opts.SessionFile == "" {
		return
	}
	if ws.saveTimer != nil {
		ws.saveTimer.Stop()
	}
	ws.saveTimer = time.AfterFunc(time.Second, func() { fyne.Do(ws.saveSession) })
}

// choosePairs asks for a text file of calibration pairs.
func (ws *Workstation) choosePairs(done func(text, name string)) {
	d := dialog.NewFileOpen(func(rc fyne.URIReadCloser, err error) {
		if err != nil || rc == nil {
			return
		}
		defer rc.Close()
		data, err := io.ReadAll(io.LimitReader(rc, 64<<20))
		if err != nil {
			ws.showProblem("Cannot read the calibration", err.Error(), "pick the file again.")
			return
		}
		done(string(data), rc.URI().Name())
	}, ws.win)
	ws.startIn(d, ws.sourcePath)
	d.Resize(fyne.NewSize(820, 560))
	d.Show()
}

func (ws *Workstation) showZoom(unitsPerMM float32) {
	f := ws.view.Frame()
	if f == nil || f.PitchXMM <= 0 {
		ws.zoomLabel.SetText("")
		return
	}
	ws.zoomLabel.SetText(fmt.Sprintf("%.0f %%", 100*float64(unitsPerMM)*f.PitchXMM))
}

func (ws *Workstation) pointerMoved(p Pointer) {
	if !p.Inside {
		ws.readout.SetText("")
		return
	}
	value := "no data"
	if p.Covered {
		value = fmt.Sprintf("%.4g", p.Value)
	}
	ws.readout.SetText(fmt.Sprintf("value %s · x %.1f y %.1f mm · px %d,%d", value, p.XMM, p.YMM, p.Col, p.Row))
	if ws.followLine {
		ws.showLineAt(p.YMM)
	}
}

func (ws *Workstation) imageTapped(p Pointer) {
	if !p.Inside {
		return
	}
	ws.showLineAt(p.YMM)
	ws.followCheck.SetChecked(false)
}

// showLineAt shows in the trace strip the line of the shown frame whose
// cross-scan position is nearest y.
func (ws *Workstation) showLineAt(yMM float64) {
	if ws.result == nil {
		return
	}
	stroke := -1
	if len(ws.result.Frames) > 1 && ws.frameIndex < len(ws.result.Frames) {
		stroke = ws.result.Frames[ws.frameIndex].Stroke
	}
	best, bestD := -1, 0.0
	for i, l := range ws.result.Lines {
		if stroke >= 0 && l.Stroke != stroke {
			continue
		}
		d := l.YMM - yMM
		if d < 0 {
			d = -d
		}
		if best < 0 || d < bestD {
			best, bestD = i, d
		}
	}
	if best >= 0 {
		ws.strip.ShowLine(best)
		ws.showLineNumber()
	}
}

func (ws *Workstation) stepLine(delta int) {
	if ws.result == nil || len(ws.result.Lines) == 0 {
		return
	}
	i := min(max(ws.strip.Chosen()+delta, 0), len(ws.result.Lines)-1)
	ws.strip.ShowLine(i)
	ws.showLineNumber()
}

func (ws *Workstation) chooseLineNumber(text string) {
	if ws.result == nil {
		return
	}
	n, err := parseNumber(text)
	if err != nil {
		ws.showLineNumber()
		return
	}
	for i, l := range ws.result.Lines {
		if l.Number >= int(n) {
			ws.strip.ShowLine(i)
			break
		}
	}
	ws.followCheck.SetChecked(false)
	ws.showLineNumber()
}

func (ws *Workstation) showLineNumber() {
	i := ws.strip.Chosen()
	if ws.result == nil || i < 0 || i >= len(ws.result.Lines) {
		ws.lineEntry.SetText("")
		return
	}
	ws.lineEntry.SetText(fmt.Sprint(ws.result.Lines[i].Number))
}

// showFrame shows frame i of the result (strokes split into frames).
func (ws *Workstation) showFrame(i int) {
	if ws.result == nil || len(ws.result.Frames) == 0 {
		return
	}
	i = min(max(i, 0), len(ws.result.Frames)-1)
	ws.frameIndex = i
	ws.render()
}

func (ws *Workstation) showFrameControls() {
	n := 0
	if ws.result != nil {
		n = len(ws.result.Frames)
	}
	if n == 0 {
		ws.frameLabel.SetText("no frame")
	} else {
		ws.frameLabel.SetText(fmt.Sprintf("frame %d of %d", ws.frameIndex+1, n))
	}
	if ws.frameIndex > 0 {
		ws.prevFrame.Enable()
	} else {
		ws.prevFrame.Disable()
	}
	if ws.frameIndex+1 < n {
		ws.nextFrame.Enable()
	} else {
		ws.nextFrame.Disable()
	}
}

func (ws *Workstation) dropped(_ fyne.Position, uris []fyne.URI) {
	for _, u := range uris {
		if u.Scheme() != "file" {
			continue
		}
		path := u.Path()
		if strings.EqualFold(filepath.Ext(path), ".json") && strings.Contains(strings.ToLower(filepath.Base(path)), "recipe") {
			ws.LoadRecipe(path)
		} else {
			ws.OpenFile(path, nil)
		}
		return
	}
}

// swatch is a small coloured square for legends.
func swatch(c color.Color) fyne.CanvasObject {
	r := canvas.NewRectangle(c)
	r.SetMinSize(fyne.NewSize(12, 12))
	return container.NewCenter(r)
}

// ResolvedRecipe returns the recipe of the image shown with every
// automatic value resolved (what "spotloom recipe" prints for the same
// first look), or false when nothing is shown.
func (ws *Workstation) ResolvedRecipe() (recipe.Recipe, bool) {
	if ws.result == nil {
		return recipe.Recipe{}, false
	}
	return ws.result.Recipe.Clone(), true
}
