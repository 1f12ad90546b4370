package ui

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"runtime/debug"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"

	"spotloom/capture"
	"spotloom/recon/export"
	"spotloom/recon/recipe"
)

// TestVersionFromBuildInfo reads build information in the text form the Go
// toolchain prints (`go version -m`), parsed by the standard library's
// debug.ParseBuildInfo, with the versions of go.mod's requirements.
func TestVersionFromBuildInfo(t *testing.T) {
	mod, err := os.ReadFile("../../go.mod")
	if err != nil {
		t.Fatal(err)
	}
	required := func(path string) string {
		m := regexp.MustCompile(`(?m)^\s*` + regexp.QuoteMeta(path) + ` (v\S+)`).FindSubmatch(mod)
		if m == nil {
			t.Fatalf("go.mod does not require %s", path)
		}
		return string(m[1])
	}
	text := "path\tspotloom/app\nmod\tspotloom\t(devel)\t\n"
	for _, lib := range builtWith {
		text += "dep\t" + lib.path + "\t" + required(lib.path) + "\th1:x=\n"
	}
	text += "build\tvcs.revision=0123456789abcdef0123\nbuild\tvcs.time=2026-12-01T10:00:00Z\nbuild\tvcs.modified=true\n"
	info, err := debug.ParseBuildInfo(text)
	if err != nil {
		t.Fatal(err)
	}
	info.GoVersion = "go1.26.0" // ParseBuildInfo leaves it unset, as its documentation says
	got := versionFrom(info).String()
	want := "spotloom devel (commit 0123456789ab, 2026-12-01T10:00:00Z, with changes not committed) built with go1.26.0, fyne " +
		required("fyne.io/fyne/v2") + ", gonum " + required("gonum.org/v1/gonum") + ", gonum/plot " + required("gonum.org/v1/plot") +
		", x/image " + required("golang.org/x/image") + ", malgo " + required("github.com/gen2brain/malgo") +
		", go-audio/wav " + required("github.com/go-audio/wav")
	if got != want {
		t.Errorf("version\n got %s\nwant %s", got, want)
	}
}

// writeDemoWAV writes the capture the window shows to dir/name as a WAV.
func writeDemoWAV(t *testing.T, ws *Workstation, dir, name string) string {
	t.Helper()
	var buf bytes.Buffer
	if err := capture.WriteWAV(&buf, ws.rec, "int16"); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// overlays counts the dialogs on the window.
func overlays(w fyne.Window) int { return len(w.Canvas().Overlays().List()) }

// comesBack closes the problem shown (as Escape does) and reports whether
// the dialog d is then shown again.
func comesBack(ws *Workstation, d dialog.Dialog) bool {
	if ws.Problem() == "" || len(ws.dialogs) == 0 {
		return false
	}
	ws.escape()
	return len(ws.dialogs) > 0 && ws.dialogs[len(ws.dialogs)-1] == d
}

// TestCaptureFilterOffersCaptures checks the chooser's filter against the
// formats capture.Open reads by name: WAV (RIFF/WAVE), delimited text, raw
// dumps, and any file with a NAME.layout.json beside it.
func TestCaptureFilterOffersCaptures(t *testing.T) {
	dir := t.TempDir()
	files := map[string]bool{
		"scan.wav": true, "scope.CSV": true, "log.txt": true, "adc.bin": true,
		"rig.cap": true, "rig.layout.json": false, // rig.cap has its layout beside it
		"notes.pdf": false, "photo.jpeg": false, "frame.tiff": false,
	}
	for name := range files {
		if err := os.WriteFile(filepath.Join(dir, name), []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	for name, want := range files {
		if got := (captureFilter{}).Matches(storage.NewFileURI(filepath.Join(dir, name))); got != want {
			t.Errorf("the capture filter offers %s: %v, want %v", name, got, want)
		}
	}
}

// TestOpenCaptureTakesATypedPath types a path into the Open capture dialog;
// a path with no file brings the dialog back with the typing kept.
func TestOpenCaptureTakesATypedPath(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	dir := t.TempDir()
	path := writeDemoWAV(t, ws, dir, "typed.wav")

	c := ws.newCaptureChooser()
	c.path.SetText(filepath.Join(dir, "missing.wav"))
	c.open() // as the Open button does
	if !strings.Contains(ws.Problem(), "No such file") || !comesBack(ws, c.dialog) {
		t.Errorf("a missing file: problem %q; want a message, then the dialog back", ws.Problem())
	}
	if c.path.Text != filepath.Join(dir, "missing.wav") {
		t.Errorf("the typed path became %q", c.path.Text)
	}
	ws.problem = ""
	c.path.SetText("  " + path + " ")
	c.open()
	ws.Wait()
	if ws.sourcePath != path || ws.Problem() != "" {
		t.Errorf("opened %q (problem %q), want %s", ws.sourcePath, ws.Problem(), path)
	}
}

// exportDemo writes the frame shown to dir/name with its sidecar and
// returns the sidecar's path.
func exportDemo(t *testing.T, ws *Workstation, dir, name string) string {
	t.Helper()
	path := filepath.Join(dir, name)
	if err := export.Write(path, ws.result.Frames[:1], export.Options{Depth: 16, Tone: ws.cur.Tone, Compression: "deflate"}); err != nil {
		t.Fatal(err)
	}
	return export.SidecarPath(path)
}

// TestLoadRecipeReadsSidecarsAndRefusesReports loads an export's sidecar
// (its recipe comes back) and a build report written as spotloom build
// --report writes it (refused in the window's words).
func TestLoadRecipeReadsSidecarsAndRefusesReports(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	dir := t.TempDir()
	want := ws.result.Recipe.JSON()
	sidecar := exportDemo(t, ws, dir, "shot.tiff")
	ws.change("delay", func(r *recipe.Recipe) { r.Sweep.DelayDeg = recipe.Float(3) })
	ws.Wait()

	ws.LoadRecipe(sidecar)
	ws.Wait()
	if ws.Problem() != "" {
		t.Fatalf("loading the sidecar: %s", ws.Problem())
	}
	if got := ws.result.Recipe.JSON(); !bytes.Equal(got, want) {
		t.Errorf("the sidecar's recipe did not come back:\n%s\nwant\n%s", got, want)
	}

	report, err := json.MarshalIndent(ws.result.Report, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	reportPath := filepath.Join(dir, "shot.report.json")
	if err := os.WriteFile(reportPath, report, 0o644); err != nil {
		t.Fatal(err)
	}
	before := ws.cur.clone()
	ws.LoadRecipe(reportPath)
	ws.Wait()
	if !strings.Contains(ws.Problem(), "This is a build report, not a recipe") {
		t.Errorf("loading a report: problem %q", ws.Problem())
	}
	if !sameSettings(ws.cur, before) {
		t.Error("loading a report changed the settings")
	}
}

// TestSaveRecipeLeavesSidecarsAlone: Save recipe… proposes no sidecar's
// name and refuses to write over one, and writes a recipe that loads back.
func TestSaveRecipeLeavesSidecarsAlone(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	dir := t.TempDir()
	path := writeDemoWAV(t, ws, dir, "grid.wav")
	ws.OpenFile(path, nil)
	ws.Wait()
	sidecar := exportDemo(t, ws, dir, "grid.tiff") // grid.recipe.json
	kept, err := os.ReadFile(sidecar)
	if err != nil {
		t.Fatal(err)
	}
	// A copy of the sidecar under the name otherwise proposed moves the
	// proposal on.
	if err := os.WriteFile(filepath.Join(dir, "grid-recipe.json"), kept, 0o644); err != nil {
		t.Fatal(err)
	}
	s := ws.newRecipeSaver()
	if s.folder.Text != dir || s.name.Text != "grid-recipe-2.json" {
		t.Errorf("proposed %s in %s, want grid-recipe-2.json in %s", s.name.Text, s.folder.Text, dir)
	}

	s.name.SetText("grid.recipe.json")
	s.save()
	if !strings.Contains(ws.Problem(), "export") || !comesBack(ws, s.dialog) {
		t.Errorf("saving over the sidecar: problem %q; want a message, then the dialog back", ws.Problem())
	}
	if now, _ := os.ReadFile(sidecar); !bytes.Equal(now, kept) {
		t.Error("the sidecar was changed")
	}
	// Nor over a NAME.recipe.json slot whose image exists but whose
	// sidecar was deleted: the next export would write it.
	os.Remove(sidecar)
	ws.problem = ""
	s.save()
	if fileExists(sidecar) || ws.Problem() == "" {
		t.Errorf("wrote the sidecar slot of grid.tiff (problem %q)", ws.Problem())
	}

	// A relative name lands in the folder field's folder.
	ws.problem = ""
	s.name.SetText(filepath.Join("sub", "..", "mine.json"))
	s.save()
	r, err := recipe.Load(filepath.Join(dir, "mine.json"))
	if err != nil || ws.Problem() != "" {
		t.Fatalf("saving mine.json: %v (problem %q)", err, ws.Problem())
	}
	if !bytes.Equal(r.JSON(), ws.result.Recipe.JSON()) {
		t.Error("the saved recipe does not load back as the recipe of the image")
	}
}

// TestExportWritesWhereTheFolderFieldPoints exports with a relative name
// and with a folder picked, and finds the files with the standard library.
func TestExportWritesWhereTheFolderFieldPoints(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	dir := t.TempDir()
	f := ws.newExportForm()
	f.folder.SetText(dir)
	f.name.SetText(filepath.Join("deeper", "..", "here.tiff"))
	f.export()
	ws.Wait()
	if _, err := os.Stat(filepath.Join(dir, "here.tiff")); err != nil {
		t.Errorf("the export did not land in the folder field's folder: %v (problem %q)", err, ws.Problem())
	}
	// Choosing PNG changes the name's extension, not its folder.
	f.format.SetSelected("PNG")
	if f.name.Text != filepath.Join("deeper", "..", "here.png") || f.path() != filepath.Join(dir, "here.png") {
		t.Errorf("PNG makes the name %q and the path %q", f.name.Text, f.path())
	}
	// An absolute name stands as it is.
	other := t.TempDir()
	f.name.SetText(filepath.Join(other, "abs.tiff"))
	if f.path() != filepath.Join(other, "abs.tiff") {
		t.Errorf("an absolute name went to %q", f.path())
	}
}

// TestRawLayoutKeepsTypingAndChecksInOrder: the dialog names the first
// wrong field in the order shown (file before channels before rate) and
// comes back with what was typed.
func TestRawLayoutKeepsTypingAndChecksInOrder(t *testing.T) {
	ws, _ := newTestWorkstation(t)
	f := ws.newRawLayoutForm("")
	f.channels.SetText("lots")
	f.rate.SetText("fast")
	if _, _, err := f.check(); err == nil || !strings.HasPrefix(err.Error(), "file") {
		t.Errorf("with no file, bad channels and a bad rate: %v, want the file named first", err)
	}
	f.file.SetText(filepath.Join(t.TempDir(), "dump.bin"))
	if _, _, err := f.check(); err == nil || !strings.HasPrefix(err.Error(), "channels") {
		t.Errorf("with bad channels and a bad rate: %v, want channels named first", err)
	}
	f.channels.SetText("2")
	if _, _, err := f.check(); err == nil || !strings.HasPrefix(err.Error(), "sample rate") {
		t.Errorf("with a bad rate: %v, want the sample rate named", err)
	}
	f.open()
	if !comesBack(ws, f.dialog) || f.rate.Text != "fast" || f.channels.Text != "2" {
		t.Errorf("after the error: rate %q, channels %q; want the dialog back as typed", f.rate.Text, f.channels.Text)
	}
}
