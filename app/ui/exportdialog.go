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
	"spotloom/recon/measure"
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

// exportForm is the export dialog's fields. The file lands where the
// folder field points; a relative name is relative to that folder.
type exportForm struct {
	ws          *Workstation
	which       *widget.RadioGroup
	folder      *widget.Entry
	name        *widget.Entry
	format      *widget.Select
	depth       *widget.Select
	compression *widget.Select
	useTone     *widget.Check
	scaleBar    *widget.Entry
	caption     *widget.Entry
	noData      *widget.Entry
	dialog      *dialog.FormDialog
}

// ShowExport asks what to export and writes it with export.Write, asking
// before replacing a file.
func (ws *Workstation) ShowExport() {
	if f := ws.newExportForm(); f != nil {
		ws.showDialog(f.dialog)
	}
}

func (ws *Workstation) newExportForm() *exportForm {
	if ws.result == nil || len(ws.result.Frames) == 0 {
		ws.showProblem("Nothing to export", "no frame has been built yet.", "open a capture first.")
		return nil
	}
	f := &exportForm{ws: ws, folder: widget.NewEntry(), name: widget.NewEntry()}
	f.which = widget.NewRadioGroup([]string{"The frame shown", "All frames"}, nil)
	f.which.SetSelected("The frame shown")
	if len(ws.result.Frames) < 2 {
		f.which.Disable()
	}
	dir, name := ws.defaultExportPlace()
	f.folder.SetText(dir)
	f.name.SetText(name)
	f.format = widget.NewSelect([]string{"TIFF", "PNG"}, func(format string) {
		ext := ".tiff"
		if format == "PNG" {
			ext = ".png"
		}
		n := f.name.Text
		f.name.SetText(strings.TrimSuffix(n, filepath.Ext(n)) + ext)
	})
	f.format.SetSelected("TIFF")
	browse := widget.NewButton("Folder…", func() { ws.chooseFolder(f.folder) })
	f.depth = widget.NewSelect([]string{"16-bit grey (tone applied)", "8-bit grey (tone applied)", "32-bit float (frame values, TIFF)"}, nil)
	f.depth.SetSelected("16-bit grey (tone applied)")
	f.compression = widget.NewSelect([]string{"deflate", "lzw", "none"}, nil)
	f.compression.SetSelected("deflate")
	f.useTone = widget.NewCheck("use the tone of the view (else automatic per frame)", nil)
	f.useTone.SetChecked(true)
	f.scaleBar = widget.NewEntry()
	f.scaleBar.SetText("auto")
	f.scaleBar.SetPlaceHolder("mm, auto or none")
	f.caption = widget.NewEntry()
	f.caption.SetPlaceHolder("text burned into the corner (optional)")
	f.noData = widget.NewEntry()
	f.noData.SetText("0")
	items := []*widget.FormItem{
		widget.NewFormItem("Frames", f.which),
		widget.NewFormItem("Folder", container.NewBorder(nil, nil, nil, browse, f.folder)),
		widget.NewFormItem("Name", f.name),
		widget.NewFormItem("Format", f.format),
		widget.NewFormItem("Samples", f.depth),
		widget.NewFormItem("Compression", f.compression),
		widget.NewFormItem("Tone", f.useTone),
		widget.NewFormItem("Scale bar", f.scaleBar),
		widget.NewFormItem("Caption", f.caption),
		widget.NewFormItem("No-data value", f.noData),
	}
	f.dialog = dialog.NewForm("Export frames", "Export", "Cancel", items, func(ok bool) {
		if ok {
			f.export()
		}
	}, ws.win)
	f.dialog.Resize(fyne.NewSize(620, 600))
	return f
}

// path is where the export lands: the name inside the folder field.
func (f *exportForm) path() string { return inFolder(f.folder.Text, f.name.Text) }

// plan reads the fields; a field that cannot be used is named in problem.
func (f *exportForm) plan() (plan []exportRequest, problem, try string) {
	ws := f.ws
	if strings.TrimSpace(f.name.Text) == "" {
		return nil, "the export needs a file name.", "type one ending in .tiff or .png."
	}
	// The sidecar lists the measurements of the window, none too.
	opts := export.Options{Compression: f.compression.Selected, Caption: strings.TrimSpace(f.caption.Text),
		Measurements: append([]measure.Shape{}, measure.CloneList(ws.cur.Measurements)...)}
	switch f.depth.Selected {
	case "8-bit grey (tone applied)":
		opts.Depth = 8
	case "32-bit float (frame values, TIFF)":
		opts.Depth, opts.Raw = 32, true
	default:
		opts.Depth = 16
	}
	if f.useTone.Checked {
		opts.Tone = ws.cur.Tone
	}
	switch s := strings.ToLower(strings.TrimSpace(f.scaleBar.Text)); s {
	case "auto", "":
		opts.ScaleBarMM = -1
	case "none", "0":
		opts.ScaleBarMM = 0
	default:
		v, err := parseNumber(s)
		if err != nil || v <= 0 {
			return nil, fmt.Sprintf("scale bar %q is not a length in mm.", f.scaleBar.Text), "type a length such as 50, or auto, or none."
		}
		opts.ScaleBarMM = v
	}
	if opts.Raw {
		opts.ScaleBarMM = 0
		opts.Caption = ""
	}
	nd, err := strconv.ParseFloat(strings.TrimSpace(f.noData.Text), 64)
	if err != nil {
		return nil, fmt.Sprintf("no-data value %q is not a number.", f.noData.Text), "type 0 for black, 1 for white, or NaN for a 32-bit float export."
	}
	opts.NoData = nd
	frames := []*recon.Frame{ws.result.Frames[ws.frameIndex]}
	if f.which.Selected == "All frames" {
		frames = ws.result.Frames
	}
	return exportPlan(f.path(), frames, opts), "", ""
}

// export writes the plan, or brings the dialog back with what was typed
// and says which field is wrong.
func (f *exportForm) export() {
	plan, problem, try := f.plan()
	if problem != "" {
		f.ws.problemOver(f.dialog, "Cannot export", problem, try)
		return
	}
	f.ws.runExport(plan)
}

// defaultExportPlace is the folder and name the export dialog offers: the
// capture's folder and name (the working folder for the demo).
func (ws *Workstation) defaultExportPlace() (dir, name string) {
	name = "spotloom-demo"
	if ws.sourcePath != "" {
		dir = filepath.Dir(ws.sourcePath)
		name = strings.TrimSuffix(filepath.Base(ws.sourcePath), filepath.Ext(ws.sourcePath))
	} else if wd, err := os.Getwd(); err == nil {
		dir = wd
	}
	return dir, name + ".tiff"
}

// runExport writes the requests in turn off the UI goroutine. A file that
// exists stops the run and asks; yes continues with that file replaced.
func (ws *Workstation) runExport(plan []exportRequest) {
	if len(plan) == 0 {
		return
	}
	ws.busy("Exporting " + filepath.Base(plan[0].path))
	measured := measure.CloneList(plan[0].opts.Measurements)
	var notes []string // written on the worker, read once it is done
	submit(ws.work, false, func(ctx context.Context, progress progressFunc) ([]exportRequest, error) {
		for i, req := range plan {
			if ctx.Err() != nil {
				return plan[i:], ctx.Err()
			}
			progress("exporting "+filepath.Base(req.path), float64(i)/float64(len(plan)))
			name := filepath.Base(req.path)
			req.opts.Note = func(s string) { notes = append(notes, name+": "+s) }
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
			done := "Exported " + strings.Join(names, ", ") + " with the recipe beside it"
			if len(notes) > 0 {
				done += " (" + strings.Join(notes, "; ") + ")"
			}
			ws.stage.SetText(done)
			ws.measuresSaved(measured)
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
