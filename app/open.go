package main

import (
	"bytes"
	"fmt"
	"image/png"
	"io"
	"log"
	"os"
	"runtime"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/app"

	"spotloom/app/ui"
	"spotloom/assets"
	"spotloom/recon/export"
	"spotloom/recon/recipe"
)

func init() {
	register(command{
		name:    "open",
		summary: "open the workstation window (on the built-in demo when no file is given)",
		run:     runOpen,
	})
}

const openDescription = `
Opens the Spotloom window on a capture (WAV, CSV or raw with a layout), or on
the built-in demo capture when no FILE is given. Without --recipe the window
uses FILE-without-extension.recipe.json when it exists, else settings with the
channel roles guessed from the capture.

The capture flags (--rate, --layout, --raw ...) say how to read FILE, as
for "spotloom inspect": a CSV without a time column needs --rate.

With --snapshot the window is rendered without a display (software renderer)
to a PNG once the first image is built, and the command exits: for
documentation and tests. --size WxH sets the window's size, for the real
window and the snapshot alike; without it the window opens at 1440x900, or
at the screen's work area when that is smaller, and the snapshot is
1440x900. An existing file is replaced only with --force.

With --replay the window plays FILE (or the built-in demo) at its real rate
(--replay-speed times faster) through the same live path as a sound card
and shows the image forming as it would while recording, with the controls
acting on it; Stop, or the end of the file, makes it an ordinary capture.
Nothing is written. The settings are --recipe, else the recipe beside FILE,
else a first look at it; their automatic values are found from the first
seconds of the replay.`

func runOpen(args []string, _, stderr io.Writer) error {
	fs := newFlagSet("open", "open [FILE] [--recipe R.json] [--rate HZ | --layout L.json | --raw TYPE ...] [--snapshot OUT.png [--size WxH] [--force] | --replay [--replay-speed X]]", openDescription, stderr)
	recipePath := fs.String("recipe", "", "build with this recipe `R.json`")
	snapshot := fs.String("snapshot", "", "render the window to `OUT.png` and exit")
	force := fs.Bool("force", false, "with --snapshot: replace an existing file")
	sizeText := fs.String("size", "", "the window's size `WxH` in units, e.g. 1366x768 (default: 1440x900, or the screen's work area when smaller)")
	replay := fs.Bool("replay", false, "play FILE at its real rate and watch the image form, as while recording")
	replaySpeed := fs.Float64("replay-speed", 1, "with --replay: play `X` times faster than real time")
	cf := addCaptureFlags(fs)
	positional, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	copts, err := cf.options()
	if err != nil {
		return err
	}
	if len(positional) > 1 {
		return usagef("open takes at most one capture file, got %d: %q", len(positional), positional)
	}
	file := ""
	if len(positional) == 1 {
		file = positional[0]
		if _, err := os.Stat(file); err != nil {
			return fmt.Errorf("%s: %w", file, unwrapStat(err))
		}
	}
	if *replay && *snapshot != "" {
		return usagef("--replay shows the image forming in the window; it cannot be combined with --snapshot")
	}
	if *replaySpeed != 1 && !*replay {
		return usagef("--replay-speed goes with --replay")
	}
	if !(*replaySpeed > 0) || *replaySpeed > 1000 {
		return usagef("--replay-speed %g: expected above 0, at most 1000", *replaySpeed)
	}
	size := ui.SnapshotSize
	if *sizeText != "" {
		if size, err = ui.ParseSize(*sizeText); err != nil {
			return usagef("%v", err)
		}
	}
	if *snapshot != "" {
		inputs := append(captureInputs(file, cf), export.Role{What: "the recipe", Path: *recipePath})
		if file != "" && *recipePath == "" {
			// The window reads the recipe beside the capture.
			inputs = append(inputs, export.Role{What: "the recipe", Path: export.SidecarPath(file)})
		}
		if err := export.CheckClashes(inputs, []export.Role{{What: "--snapshot", Path: *snapshot}}); err != nil {
			return err
		}
		if err := export.CheckFile(*snapshot, *force); err != nil {
			return forceHint(err)
		}
	}
	var r *recipe.Recipe
	if *recipePath != "" {
		loaded, err := recipe.Load(*recipePath)
		if err != nil {
			return err
		}
		r = &loaded
	}
	opts := ui.Options{Icon: assets.Icon, Capture: copts}
	if *snapshot != "" {
		img, err := ui.SnapshotAt(size, file, r, opts)
		if err != nil {
			if file == "" {
				return fmt.Errorf("snapshot of the built-in demo: %w", err)
			}
			return fmt.Errorf("snapshot of %s: %w", file, err)
		}
		var data bytes.Buffer
		if err := png.Encode(&data, img); err != nil {
			return fmt.Errorf("%s: %w", *snapshot, err)
		}
		return forceHint(export.SaveFile(*snapshot, data.Bytes(), *force))
	}

	if err := checkDisplay(); err != nil {
		return err
	}
	opts.SessionFile = ui.DefaultSessionFile()
	a, w, err := startWindow()
	if err != nil {
		return err
	}
	ws := ui.New(a, w, opts)
	if *sizeText != "" {
		w.Resize(size)
	} else {
		w.Resize(fitScreen(w, fyne.NewSize(1440, 900)))
	}
	switch {
	case *replay:
		ws.Replay(file, copts, r, *replaySpeed)
	case file == "" && r == nil:
		// Started bare: offer back tuning the last session did not save.
		ws.Start(ws.OpenDemo)
	case file == "":
		ws.OpenDemoWithRecipe(r)
	default:
		ws.OpenFileWith(file, copts, r)
	}
	w.ShowAndRun()
	return nil
}

// noDisplayAdvice ends every "no display" error.
const noDisplayAdvice = "use --snapshot OUT.png to render without one"

// checkDisplay refuses, before the window toolkit starts, a session that
// has no display at all, where the toolkit would log and panic.
func checkDisplay() error {
	switch runtime.GOOS {
	case "windows", "darwin", "android", "ios", "js":
		return nil
	}
	if os.Getenv("DISPLAY") == "" && os.Getenv("WAYLAND_DISPLAY") == "" {
		return fmt.Errorf("no display: neither DISPLAY nor WAYLAND_DISPLAY is set; %s", noDisplayAdvice)
	}
	return nil
}

// startWindow makes the application and its window. A display that is
// named but cannot be used (no server, no permission) makes the toolkit
// log a platform error and panic: that becomes one "no display" error,
// and what the toolkit logged at start-up is shown only if it started.
func startWindow() (a fyne.App, w fyne.Window, err error) {
	var logged bytes.Buffer
	out := log.Writer()
	log.SetOutput(&logged)
	defer func() {
		log.SetOutput(out)
		if p := recover(); p != nil {
			why := strings.TrimSpace(fmt.Sprint(p))
			if first, _, _ := strings.Cut(strings.TrimSpace(logged.String()), "\n"); first != "" {
				// "2026/12/02 04:19:02 PlatformError: X11: ..." without the time.
				if f := strings.Fields(first); len(f) > 2 {
					why = strings.Join(f[2:], " ")
				}
			}
			a, w, err = nil, nil, fmt.Errorf("no display: %s; %s", why, noDisplayAdvice)
			return
		}
		out.Write(logged.Bytes())
	}()
	a = app.NewWithID("org.spotloom.workstation")
	a.SetIcon(assets.Icon)
	a.Settings().SetTheme(ui.Theme())
	w = a.NewWindow("Spotloom")
	w.SetIcon(assets.Icon)
	return a, w, nil
}

// unwrapStat drops the path that os.Stat repeats in its error.
func unwrapStat(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}
