package ui

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/widget"

	"spotloom/capture"
	"spotloom/recon/export"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
)

// jsonKind says what a JSON file of ours holds.
type jsonKind int

const (
	kindOther   jsonKind = iota // not one of ours (a recipe with errors lands here too)
	kindRecipe                  // a recipe (format spotloom-recipe/1)
	kindSidecar                 // the sidecar an export writes beside its image
	kindReport                  // a build report (spotloom build --report)
)

// reportKeys are keys every build report has and no recipe has.
var reportKeys = []string{"lines", "line_rate_hz", "coverage", "delay_deg"}

// classifyJSON tells a recipe from an export's sidecar and a build report.
// For a sidecar it also returns the image the sidecar describes.
func classifyJSON(data []byte) (kind jsonKind, image string) {
	var keys map[string]json.RawMessage
	if json.Unmarshal(data, &keys) != nil {
		return kindOther, ""
	}
	var format string
	if raw, ok := keys["format"]; ok {
		json.Unmarshal(raw, &format)
		switch format {
		case recipe.SidecarFormat:
			var file string
			json.Unmarshal(keys["file"], &file)
			return kindSidecar, file
		case recipe.RecipeFormat:
			return kindRecipe, ""
		}
		return kindOther, ""
	}
	for _, k := range reportKeys {
		if _, ok := keys[k]; !ok {
			return kindOther, ""
		}
	}
	return kindReport, ""
}

// exportImageExtensions are the images an export writes, each with its
// sidecar NAME.recipe.json beside it.
var exportImageExtensions = []string{".tiff", ".tif", ".png", ".TIFF", ".TIF", ".PNG"}

// sidecarOf returns the export image whose sidecar path is ("" when it is
// none): a file of sidecar format, or a NAME.recipe.json with an image
// NAME.tiff or NAME.png beside it, which an export would write again.
func sidecarOf(path string) string {
	if data, err := os.ReadFile(path); err == nil {
		if kind, image := classifyJSON(data); kind == kindSidecar {
			if image == "" {
				image = strings.TrimSuffix(filepath.Base(path), ".recipe.json")
			}
			return image
		}
	}
	if !strings.HasSuffix(strings.ToLower(path), ".recipe.json") {
		return ""
	}
	stem := path[:len(path)-len(".recipe.json")]
	for _, ext := range exportImageExtensions {
		if fileExists(stem + ext) {
			return filepath.Base(stem + ext)
		}
	}
	return ""
}

// proposedRecipeName is the name Save recipe… offers in dir for a capture
// named stem: never the sidecar of an export, so saving cannot part an
// exported image from the record of how it was made.
func proposedRecipeName(dir, stem string) string {
	name := stem + "-recipe.json"
	for n := 2; sidecarOf(filepath.Join(dir, name)) != ""; n++ {
		name = fmt.Sprintf("%s-recipe-%d.json", stem, n)
	}
	return name
}

// expandPath turns a typed path into one the file system knows: "~" is
// the home folder, and spaces around it are dropped.
func expandPath(typed string) string {
	p := strings.TrimSpace(typed)
	if p == "~" || strings.HasPrefix(p, "~/") {
		if home, err := os.UserHomeDir(); err == nil {
			p = filepath.Join(home, strings.TrimPrefix(p, "~"))
		}
	}
	return p
}

// inFolder is where name lands in folder: an absolute name stands as it
// is, a relative one is relative to the folder (itself relative to the
// working folder when typed so).
func inFolder(folder, name string) string {
	name = expandPath(name)
	if filepath.IsAbs(name) {
		return filepath.Clean(name)
	}
	folder = expandPath(folder)
	if abs, err := filepath.Abs(folder); err == nil {
		folder = abs
	}
	return filepath.Join(folder, name)
}

// captureFilter offers the files Open reads: WAV, text captures, raw
// dumps and files with a layout beside them.
type captureFilter struct{}

func (captureFilter) Matches(u fyne.URI) bool {
	return u.Scheme() == "file" && capture.LooksLikeCapture(u.Path())
}

// The choices of which files the capture chooser offers.
const (
	offerCaptures = "captures (WAV, CSV and text, raw with a layout)"
	offerAll      = "all files"
)

// captureChooser is the Open capture dialog: a typed path, or a file
// picked from a chooser that offers captures or all files.
type captureChooser struct {
	ws     *Workstation
	path   *widget.Entry
	offer  *widget.Select
	dialog *dialog.FormDialog
}

// ChooseCapture asks for a capture file and opens it.
func (ws *Workstation) ChooseCapture() { ws.showDialog(ws.newCaptureChooser().dialog) }

func (ws *Workstation) newCaptureChooser() *captureChooser {
	c := &captureChooser{ws: ws, path: widget.NewEntry()}
	c.path.SetPlaceHolder("/path/to/capture.wav (or press Browse…)")
	if ws.sourcePath != "" {
		c.path.SetText(filepath.Dir(ws.sourcePath) + string(filepath.Separator))
	} else if wd, err := os.Getwd(); err == nil {
		c.path.SetText(wd + string(filepath.Separator))
	}
	c.path.OnSubmitted = func(string) { c.dialog.Hide(); c.open() }
	c.offer = widget.NewSelect([]string{offerCaptures, offerAll}, nil)
	c.offer.SetSelected(offerCaptures)
	browse := widget.NewButton("Browse…", c.browse)
	items := []*widget.FormItem{
		widget.NewFormItem("File", container.NewBorder(nil, nil, nil, browse, c.path)),
		widget.NewFormItem("Browse shows", c.offer),
	}
	c.dialog = dialog.NewForm("Open capture", "Open", "Cancel", items, func(ok bool) {
		if ok {
			c.open()
		}
	}, ws.win)
	c.dialog.Resize(fyne.NewSize(640, 200))
	return c
}

// open opens the typed path; a path that is no file brings the dialog
// back with it, and says why.
func (c *captureChooser) open() {
	path := expandPath(c.path.Text)
	st, err := os.Stat(path)
	switch {
	case path == "":
		c.again("No file named", "the dialog needs the capture's path.", "type it or press Browse….")
	case err != nil:
		c.again("No such file", fmt.Sprintf("%s does not exist.", path), "check the path, or press Browse… to pick the file.")
	case st.IsDir():
		c.again("This is a folder", fmt.Sprintf("%s is a folder, not a capture.", path), "add the file's name, or press Browse… to pick it.")
	default:
		c.ws.askDiscard("open "+filepath.Base(path), func() { c.ws.OpenFile(path, nil) })
	}
}

func (c *captureChooser) again(title, what, try string) { c.ws.problemOver(c.dialog, title, what, try) }

// problemOver shows the problem and then brings back the dialog d with
// everything typed in it, so the user corrects the field and goes on.
func (ws *Workstation) problemOver(d dialog.Dialog, title, what, try string) {
	ws.showProblem(title, what, try, func() { ws.showDialog(d) })
}

// browse picks a file with the toolkit's chooser and opens it.
func (c *captureChooser) browse() {
	d := dialog.NewFileOpen(func(rc fyne.URIReadCloser, err error) {
		if err != nil {
			c.ws.showProblem("Cannot open the file", err.Error(), "pick the file again.")
			return
		}
		if rc == nil {
			return
		}
		path := rc.URI().Path()
		rc.Close()
		c.path.SetText(path)
		c.dialog.Hide()
		c.ws.askDiscard("open "+filepath.Base(path), func() { c.ws.OpenFile(path, nil) })
	}, c.ws.win)
	if c.offer.Selected != offerAll {
		d.SetFilter(captureFilter{})
	}
	near := expandPath(c.path.Text)
	if st, err := os.Stat(near); err == nil && st.IsDir() {
		near = filepath.Join(near, "x")
	}
	c.ws.startIn(d, near)
	d.SetConfirmText("Open")
	d.Resize(fyne.NewSize(820, 560))
	d.Show()
}

// LoadRecipe applies the recipe in path, or the recipe inside an export's
// sidecar; a build report is refused with a word on what to load instead.
// If the recipe does not fit the capture the settings stay as they were.
func (ws *Workstation) LoadRecipe(path string) {
	data, err := os.ReadFile(path)
	if err != nil {
		ws.showProblem("Cannot read "+filepath.Base(path), err.Error()+".", "check the path; the settings are unchanged.")
		return
	}
	kind, image := classifyJSON(data)
	if kind == kindReport {
		ws.showProblem("This is a build report, not a recipe",
			filepath.Base(path)+" holds what a build found (lines, rev/min, coverage, warnings), not the settings that made it.",
			"load the sidecar the export wrote beside its image (NAME.recipe.json), or a recipe saved with Save recipe…. The settings are unchanged.")
		return
	}
	r, err := recipe.Parse(data)
	if err != nil {
		ws.showProblem("Cannot use "+filepath.Base(path), err.Error()+".",
			"fix the key named above (the recipe format is spotloom-recipe/1) or save a fresh recipe with Save recipe… and edit that. The settings are unchanged.")
		return
	}
	reason := "The recipe " + filepath.Base(path)
	var list []measure.Shape
	if kind == kindSidecar {
		reason = "The recipe of the export " + image
		// The shapes measured on that export come back with its recipe.
		if list, err = measure.ParseList(data, filepath.Base(path)); err != nil && !errors.Is(err, measure.ErrNoList) {
			ws.showProblem("Cannot use the measurements of "+filepath.Base(path), windowWords(err.Error())+".",
				"fix or remove its \"measurements\" list (docs/pipeline.md lists the keys). The settings are unchanged.")
			return
		}
	}
	ws.applyRecipeWith(r, list, reason)
}

// recipeSaver is the Save recipe dialog: a folder and a name in it.
type recipeSaver struct {
	ws     *Workstation
	data   []byte
	folder *widget.Entry
	name   *widget.Entry
	dialog *dialog.FormDialog
}

// SaveRecipe writes the recipe of the image shown, every automatic value
// filled in, so the frame can be rebuilt exactly. It never proposes, and
// refuses to replace, the sidecar of an export.
func (ws *Workstation) SaveRecipe() {
	if s := ws.newRecipeSaver(); s != nil {
		ws.showDialog(s.dialog)
	}
}

func (ws *Workstation) newRecipeSaver() *recipeSaver {
	if ws.result == nil {
		return nil
	}
	s := &recipeSaver{ws: ws, data: ws.result.Recipe.JSON(), folder: widget.NewEntry(), name: widget.NewEntry()}
	dir, stem := "", "spotloom"
	if ws.sourcePath != "" {
		dir = filepath.Dir(ws.sourcePath)
		stem = strings.TrimSuffix(filepath.Base(ws.sourcePath), filepath.Ext(ws.sourcePath))
	} else if wd, err := os.Getwd(); err == nil {
		dir = wd
	}
	s.folder.SetText(dir)
	s.name.SetText(proposedRecipeName(dir, stem))
	pick := widget.NewButton("Folder…", func() { ws.chooseFolder(s.folder) })
	items := []*widget.FormItem{
		widget.NewFormItem("Folder", container.NewBorder(nil, nil, nil, pick, s.folder)),
		widget.NewFormItem("Name", s.name),
	}
	s.dialog = dialog.NewForm("Save recipe", "Save", "Cancel", items, func(ok bool) {
		if ok {
			s.save()
		}
	}, ws.win)
	s.dialog.Resize(fyne.NewSize(620, 220))
	return s
}

// save writes the recipe where the fields point, asking before replacing
// a recipe and refusing an export's sidecar.
func (s *recipeSaver) save() {
	path := inFolder(s.folder.Text, s.name.Text)
	again := func(title, what, try string) { s.ws.problemOver(s.dialog, title, what, try) }
	if strings.TrimSpace(s.name.Text) == "" {
		again("No name", "the recipe needs a file name.", "type one, such as capture-recipe.json.")
		return
	}
	if image := sidecarOf(path); image != "" {
		again("This is an export's record", fmt.Sprintf("%s is the sidecar of the exported image %s: it records how that image was made, so Save recipe… does not replace it.", filepath.Base(path), image),
			"choose another name, such as "+proposedRecipeName(filepath.Dir(path), strings.TrimSuffix(filepath.Base(path), ".recipe.json"))+".")
		return
	}
	write := func(replace bool) {
		if err := export.SaveFile(path, s.data, replace); err != nil {
			again("Cannot save the recipe", err.Error()+".", "choose a folder you can write to.")
			return
		}
		s.ws.tuningSaved()
		s.ws.stage.SetText("Recipe saved to " + path)
	}
	if fileExists(path) {
		s.ws.showDialog(dialog.NewConfirm("Replace the recipe?", path+" already exists.\nReplace it?", func(yes bool) {
			if yes {
				write(true)
			} else {
				s.ws.showDialog(s.dialog)
			}
		}, s.ws.win))
		return
	}
	write(false)
}

// chooseFolder lets the user pick a folder for entry.
func (ws *Workstation) chooseFolder(entry *widget.Entry) {
	d := dialog.NewFolderOpen(func(dir fyne.ListableURI, err error) {
		if err != nil || dir == nil {
			return
		}
		entry.SetText(dir.Path())
	}, ws.win)
	if l, err := storage.ListerForURI(storage.NewFileURI(expandPath(entry.Text))); err == nil {
		d.SetLocation(l)
	}
	d.Resize(fyne.NewSize(820, 560))
	d.Show()
}
