package ui

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon"
	"spotloom/recon/export"
)

// exportRequest is one export the user asked for.
type exportRequest struct {
	path   string
	frames []*recon.Frame
	opts   export.Options
}

// exportPlan turns "all frames" into the files to write: TIFF holds every
// frame as a page of one file; PNG holds one frame, so each frame gets its
// own file, numbered from 1.
func exportPlan(path string, frames []*recon.Frame, opts export.Options) []exportRequest {
	ext := strings.ToLower(filepath.Ext(path))
	if ext == ".png" && len(frames) > 1 {
		base := strings.TrimSuffix(path, filepath.Ext(path))
		var out []exportRequest
		for i, f := range frames {
			out = append(out, exportRequest{path: fmt.Sprintf("%s-%d%s", base, i+1, filepath.Ext(path)), frames: []*recon.Frame{f}, opts: opts})
		}
		return out
	}
	return []exportRequest{{path: path, frames: frames, opts: opts}}
}

// ShowExport asks what to export and writes it with export.Write, asking
// before replacing a file.
func (ws *Workstation) ShowExport() {
	if ws.result == nil || len(ws.result.Frames) == 0 {
		ws.showProblem("Nothing to export", "no frame has been built yet.", "open a capture first.")
		return
	}
	which := widget.NewRadioGroup([]string{"The frame shown", "All frames"}, nil)
	which.SetSelected("The frame shown")
	if len(ws.result.Frames) < 2 {
		which.Disable()
	}
	pathEntry := widget.NewEntry()
	pathEntry.SetText(ws.defaultExportPath())
	format := widget.NewSelect([]string{"TIFF", "PNG"}, func(f string) {
		p := pathEntry.Text
		ext := ".tiff"
		if f == "PNG" {
			ext = ".png"
		}
		pathEntry.SetText(strings.TrimSuffix(p, filepath.Ext(p)) + ext)
	})
	format.SetSelected("TIFF")
	browse := widget.NewButton("Folder…", func() {
		d := dialog.NewFolderOpen(func(dir fyne.ListableURI, err error) {
			if err != nil || dir == nil {
				return
			}
			pathEntry.SetText(filepath.Join(dir.Path(), filepath.Base(pathEntry.Text)))
		}, ws.win)
		d.Resize(fyne.NewSize(820, 560))
		d.Show()
	})
	depth := widget.NewSelect([]string{"16-bit grey (tone applied)", "8-bit grey (tone applied)", "32-bit float (frame values, TIFF)"}, nil)
	depth.SetSelected("16-bit grey (tone applied)")
	compression := widget.NewSelect([]string{"deflate", "lzw", "none"}, nil)
	compression.SetSelected("deflate")
	useTone := widget.NewCheck("use the tone of the view (else automatic per frame)", nil)
	useTone.SetChecked(true)
	scaleBar := widget.NewEntry()
	scaleBar.SetText("auto")
	scaleBar.SetPlaceHolder("mm, auto or none")
	caption := widget.NewEntry()
	caption.SetPlaceHolder("text burned into the corner (optional)")
	noData := widget.NewEntry()
	noData.SetText("0")
	items := []*widget.FormItem{
		widget.NewFormItem("Frames", which),
		widget.NewFormItem("File", container.NewBorder(nil, nil, nil, browse, pathEntry)),
		widget.NewFormItem("Format", format),
		widget.NewFormItem("Samples", depth),
		widget.NewFormItem("Compression", compression),
		widget.NewFormItem("Tone", useTone),
		widget.NewFormItem("Scale bar", scaleBar),
		widget.NewFormItem("Caption", caption),
		widget.NewFormItem("No-data value", noData),
	}
	d := dialog.NewForm("Export frames", "Export", "Cancel", items, func(ok bool) {
		if !ok {
			return
		}
		opts := export.Options{Compression: compression.Selected, Caption: strings.TrimSpace(caption.Text)}
		switch depth.Selected {
		case "8-bit grey (tone applied)":
			opts.Depth = 8
		case "32-bit float (frame values, TIFF)":
			opts.Depth, opts.Raw = 32, true
		default:
			opts.Depth = 16
		}
		if useTone.Checked {
			opts.Tone = ws.cur.Tone
		}
		switch s := strings.ToLower(strings.TrimSpace(scaleBar.Text)); s {
		case "auto", "":
			opts.ScaleBarMM = -1
		case "none", "0":
			opts.ScaleBarMM = 0
		default:
			v, err := parseNumber(s)
			if err != nil || v <= 0 {
				ws.showProblem("Cannot export", fmt.Sprintf("scale bar %q is not a length in mm.", scaleBar.Text), "type a length such as 50, or auto, or none.")
				return
			}
			opts.ScaleBarMM = v
		}
		if opts.Raw {
			opts.ScaleBarMM = 0
			opts.Caption = ""
		}
		nd, err := strconv.ParseFloat(strings.TrimSpace(noData.Text), 64)
		if err != nil {
			ws.showProblem("Cannot export", fmt.Sprintf("no-data value %q is not a number.", noData.Text), "type 0 for black, 1 for white, or NaN for a 32-bit float export.")
			return
		}
		opts.NoData = nd
		frames := []*recon.Frame{ws.result.Frames[ws.frameIndex]}
		if which.Selected == "All frames" {
			frames = ws.result.Frames
		}
		ws.runExport(exportPlan(strings.TrimSpace(pathEntry.Text), frames, opts))
	}, ws.win)
	d.Resize(fyne.NewSize(620, 560))
	d.Show()
}

func (ws *Workstation) defaultExportPath() string {
	dir, name := "", "spotloom-demo"
	if ws.sourcePath != "" {
		dir = filepath.Dir(ws.sourcePath)
		name = strings.TrimSuffix(filepath.Base(ws.sourcePath), filepath.Ext(ws.sourcePath))
	} else if wd, err := os.Getwd(); err == nil {
		dir = wd
	}
	return filepath.Join(dir, name+".tiff")
}

// runExport writes the requests in turn off the UI goroutine. A file that
// exists stops the run and asks; yes continues with that file replaced.
func (ws *Workstation) runExport(plan []exportRequest) {
	if len(plan) == 0 {
		return
	}
	ws.busy("Exporting " + filepath.Base(plan[0].path))
	submit(ws.work, false, func(ctx context.Context, progress progressFunc) ([]exportRequest, error) {
		for i, req := range plan {
			if ctx.Err() != nil {
				return plan[i:], ctx.Err()
			}
			progress("exporting "+filepath.Base(req.path), float64(i)/float64(len(plan)))
			if err := export.Write(req.path, req.frames, req.opts); err != nil {
				return plan[i:], err
			}
		}
		return nil, nil
	}, func(rest []exportRequest, err error, _ bool) {
		switch {
		case err == nil:
			names := make([]string, len(plan))
			for i, p := range plan {
				names[i] = filepath.Base(p.path)
			}
			ws.stage.SetText("Exported " + strings.Join(names, ", ") + " with the recipe beside it")
		case errors.Is(err, context.Canceled):
			ws.stage.SetText("Export stopped")
		case errors.Is(err, export.ErrExists) && len(rest) > 0:
			first := rest[0]
			dialog.ShowConfirm("Replace the file?",
				fmt.Sprintf("%s (or its recipe sidecar %s) already exists.\nReplace it?", first.path, filepath.Base(export.SidecarPath(first.path))),
				func(yes bool) {
					if !yes {
						ws.stage.SetText("Export not written; the file exists")
						return
					}
					rest[0].opts.Force = true
					ws.runExport(rest)
				}, ws.win)
		default:
			ws.showProblem("Cannot export", err.Error()+".",
				"choose a folder you can write to and a name ending in .tiff or .png; a 32-bit float export needs .tiff. Nothing was written for this file.")
		}
	})
}
