package ui

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"spotloom/recon/export"
	"spotloom/recon/measure"
)

// reportForm is the Export report dialog: a folder and a name in it.
type reportForm struct {
	ws     *Workstation
	folder *widget.Entry
	name   *widget.Entry
	dialog *dialog.FormDialog
}

// ShowReport asks where to write the report sheet of the frame shown (the
// PDF "spotloom report" writes: the frame at its print scale, the facts,
// the recipe in short, the measurements with their plots, the warnings).
func (ws *Workstation) ShowReport() {
	if f := ws.newReportForm(); f != nil {
		ws.showDialog(f.dialog)
	}
}

func (ws *Workstation) newReportForm() *reportForm {
	if ws.result == nil || len(ws.result.Frames) == 0 {
		ws.showProblem("Nothing to report", "no frame has been built yet.", "open a capture first.")
		return nil
	}
	f := &reportForm{ws: ws, folder: widget.NewEntry(), name: widget.NewEntry()}
	dir, name := ws.defaultExportPlace()
	f.folder.SetText(dir)
	f.name.SetText(strings.TrimSuffix(name, filepath.Ext(name)) + "-report.pdf")
	pick := widget.NewButton("Folder…", func() { ws.chooseFolder(f.folder) })
	what := widget.NewLabel(fmt.Sprintf("Frame %d of %d with %d measurement(s), on A4.", ws.frameIndex+1, len(ws.result.Frames), len(ws.cur.Measurements)))
	items := []*widget.FormItem{
		widget.NewFormItem("Sheet", what),
		widget.NewFormItem("Folder", container.NewBorder(nil, nil, nil, pick, f.folder)),
		widget.NewFormItem("Name", f.name),
	}
	f.dialog = dialog.NewForm("Export report sheet", "Write", "Cancel", items, func(ok bool) {
		if ok {
			f.write()
		}
	}, ws.win)
	f.dialog.Resize(fyne.NewSize(620, 260))
	return f
}

// write checks the name and writes the sheet, or brings the dialog back
// with what was typed and says what is wrong.
func (f *reportForm) write() {
	path := inFolder(f.folder.Text, f.name.Text)
	switch {
	case strings.TrimSpace(f.name.Text) == "":
		f.ws.problemOver(f.dialog, "No name", "the report sheet needs a file name.", "type one ending in .pdf.")
		return
	case !strings.EqualFold(filepath.Ext(path), ".pdf"):
		f.ws.problemOver(f.dialog, "Not a PDF name", fmt.Sprintf("%s does not end in .pdf; the sheet is a PDF.", filepath.Base(path)), "name it NAME.pdf.")
		return
	}
	f.ws.writeReport(path, false)
}

// writeReport writes the sheet of the frame shown to path off the UI
// goroutine. A file there is replaced only once the user agrees.
func (ws *Workstation) writeReport(path string, replace bool) {
	if ws.result == nil || len(ws.result.Frames) == 0 {
		return
	}
	frame := ws.result.Frames[ws.frameIndex]
	shapes := measure.CloneList(ws.cur.Measurements)
	source := ws.sourceName
	ws.busy("Writing the report sheet " + filepath.Base(path))
	submit(ws.work, false, func(ctx context.Context, progress progressFunc) (export.SheetLayout, error) {
		progress("writing the report sheet", 0)
		if !replace {
			if _, err := os.Lstat(path); err == nil {
				return export.SheetLayout{}, fmt.Errorf("%s %w", path, export.ErrExists)
			}
		}
		return export.WriteSheet(path, export.MeasuredSheet(frame, source, shapes, time.Now()), replace)
	}, func(layout export.SheetLayout, err error, _ bool) {
		switch {
		case err == nil:
			ws.stage.SetText(fmt.Sprintf("Wrote the report sheet %s (%d page(s), frame at %s)", filepath.Base(path), layout.Pages, export.PrintScaleText(layout.PrintScale)))
		case errors.Is(err, export.ErrExists):
			d := dialog.NewConfirm("Replace the report sheet?", path+" already exists.\nReplace it?", func(yes bool) {
				if yes {
					ws.writeReport(path, true)
				} else {
					ws.stage.SetText("Report sheet not written; the file exists")
				}
			}, ws.win)
			ws.showDialog(d)
		default:
			ws.showProblem("Cannot write the report sheet", windowWords(err.Error())+".",
				"choose a folder you can write to; a frame far larger than a sheet at 1:100 cannot be printed on one.")
		}
	})
}
