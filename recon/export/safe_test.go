package export

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

// readAll maps every file of dir to its content.
func readAll(t *testing.T, dir string) map[string]string {
	t.Helper()
	files := map[string]string{}
	for _, name := range listDir(t, dir) {
		files[name] = string(must(os.ReadFile(filepath.Join(dir, name))))
	}
	return files
}

// failRename makes renameFile fail when a temporary is renamed onto
// target, and restores it when the test ends.
func failRename(t *testing.T, target string) {
	t.Helper()
	t.Cleanup(func() { renameFile = os.Rename })
	renameFile = func(from, to string) error {
		if to == target && strings.HasSuffix(from, partialSuffix) {
			return &os.LinkError{Op: "rename", Old: from, New: to, Err: errors.New("injected failure")}
		}
		return os.Rename(from, to)
	}
}

// TestForcedWriteFailureKeepsPrevious: a forced write whose image,
// sidecar or extra file cannot be placed leaves the previous image,
// sidecar and report exactly as they were, and no temporary file.
func TestForcedWriteFailureKeepsPrevious(t *testing.T) {
	for _, failing := range []string{"f.tiff", "f.recipe.json", "report.json"} {
		dir := t.TempDir()
		path := filepath.Join(dir, "f.tiff")
		report := filepath.Join(dir, "report.json")
		old := Options{Also: []File{{Path: report, Data: []byte("old report")}}}
		if err := Write(path, []*recon.Frame{testFrame(30, 20, 1)}, old); err != nil {
			t.Fatal(err)
		}
		before := readAll(t, dir)
		failRename(t, filepath.Join(dir, failing))
		next := Options{Force: true, Depth: 8, Also: []File{{Path: report, Data: []byte("new report")}}}
		err := Write(path, []*recon.Frame{testFrame(44, 28, 0.5)}, next)
		if err == nil || !strings.Contains(err.Error(), "injected failure") {
			t.Errorf("%s failing: %v, want the rename's failure", failing, err)
		}
		after := readAll(t, dir)
		if len(after) != len(before) {
			t.Errorf("%s failing: folder holds %v, want %d files", failing, slices.Sorted(maps.Keys(after)), len(before))
		}
		for name, content := range before {
			if after[name] != content {
				t.Errorf("%s failing: %s changed", failing, name)
			}
		}
	}
}

// TestSidecarFolderKeepsImage: when the sidecar's name is taken by a
// folder, a forced write is refused before anything is written; the
// message names a free path, and writing there works.
func TestSidecarFolderKeepsImage(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "f.tiff")
	if err := os.WriteFile(path, []byte("previous image"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Mkdir(SidecarPath(path), 0o755); err != nil {
		t.Fatal(err)
	}
	frames := []*recon.Frame{testFrame(8, 6, 1)}
	err := Write(path, frames, Options{Force: true})
	if err == nil || !strings.Contains(err.Error(), "is a folder") {
		t.Fatalf("%v, want a refusal naming the folder", err)
	}
	if got := string(must(os.ReadFile(path))); got != "previous image" {
		t.Errorf("the image became %q", got)
	}
	suggested := regexp.MustCompile(`such as (\S+)$`).FindStringSubmatch(err.Error())
	if suggested == nil {
		t.Fatalf("no suggestion in %q", err)
	}
	if err := Write(suggested[1], frames, Options{}); err != nil {
		t.Errorf("the suggested %s does not work: %v", suggested[1], err)
	}
}

// TestFolderAdviceWorks: for an output that is a folder the suggested
// path can be written, also when the obvious one inside is taken.
func TestFolderAdviceWorks(t *testing.T) {
	dir := t.TempDir()
	folder := filepath.Join(dir, "out.png")
	os.Mkdir(folder, 0o755)
	// The obvious names inside are taken.
	os.WriteFile(filepath.Join(folder, "out.png"), nil, 0o644)
	os.WriteFile(filepath.Join(folder, "frame.png"), nil, 0o644)
	frames := []*recon.Frame{testFrame(8, 6, 1)}
	err := Write(folder, frames, Options{Depth: 8})
	suggested := regexp.MustCompile(`such as (\S+)$`).FindStringSubmatch(fmt.Sprint(err))
	if suggested == nil {
		t.Fatalf("%v: no suggestion", err)
	}
	if err := Write(suggested[1], frames, Options{Depth: 8}); err != nil {
		t.Errorf("the suggested %s does not work: %v", suggested[1], err)
	}
}

// TestConcurrentForcedWrites: forced writes of different frames to one
// name at the same time always leave an image beside its own sidecar and
// report. The rename is slowed so that, without the lock, another writer
// would place its files between the image and the sidecar.
func TestConcurrentForcedWrites(t *testing.T) {
	t.Cleanup(func() { renameFile = os.Rename })
	renameFile = func(from, to string) error {
		err := os.Rename(from, to)
		if strings.HasSuffix(to, ".png") {
			time.Sleep(20 * time.Millisecond)
		}
		return err
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "f.png")
	report := filepath.Join(dir, "f.report")
	for round := 0; round < 3; round++ {
		var wg sync.WaitGroup
		errs := make([]error, 6)
		for k := range errs {
			wg.Add(1)
			go func() {
				defer wg.Done()
				f := testFrame(20+k, 10, 1)
				errs[k] = Write(path, []*recon.Frame{f}, Options{Depth: 8, Force: true,
					Also: []File{{Path: report, Data: fmt.Appendf(nil, "%d", f.Width)}}})
			}()
		}
		wg.Wait()
		for _, err := range errs {
			if err != nil {
				t.Fatal(err)
			}
		}
		width := pngWidth(t, path)
		var sc sidecarFile
		if err := json.Unmarshal(must(os.ReadFile(SidecarPath(path))), &sc); err != nil {
			t.Fatal(err)
		}
		if sc.Pages[0].Columns != width || string(must(os.ReadFile(report))) != fmt.Sprint(width) {
			t.Errorf("round %d: image %d px wide, sidecar says %d, report %s", round, width, sc.Pages[0].Columns, must(os.ReadFile(report)))
		}
	}
	if left := listDir(t, dir); len(left) != 3 {
		t.Errorf("folder holds %v, want the image, its sidecar and the report", left)
	}
}

// pngWidth reads the width from the IHDR chunk (PNG §11.2.2: bytes 16-19).
func pngWidth(t *testing.T, path string) int {
	b := must(os.ReadFile(path))
	if len(b) < 24 {
		t.Fatalf("%s: %d bytes", path, len(b))
	}
	return int(b[16])<<24 | int(b[17])<<16 | int(b[18])<<8 | int(b[19])
}

// TestStaleTemporariesRemoved: the temporaries a killed run left for a
// name are removed by the next write to it; files that only look alike
// are kept, and the lock file goes when the write ends.
func TestStaleTemporariesRemoved(t *testing.T) {
	dir := t.TempDir()
	stale := []string{".f.tiff.123" + partialSuffix, ".f.recipe.json.98765" + previousSuffix, ".r.json.4" + partialSuffix}
	kept := []string{".f.tiff.x" + partialSuffix, ".f.tiff.x.1" + partialSuffix, "f.tiff.123" + partialSuffix, ".g.tiff.1" + partialSuffix}
	for _, name := range append(slices.Clone(stale), kept...) {
		os.WriteFile(filepath.Join(dir, name), []byte("x"), 0o644)
	}
	err := Write(filepath.Join(dir, "f.tiff"), []*recon.Frame{testFrame(8, 6, 1)},
		Options{Also: []File{{Path: filepath.Join(dir, "r.json"), Data: []byte("{}")}}})
	if err != nil {
		t.Fatal(err)
	}
	want := append(slices.Clone(kept), "f.tiff", "f.recipe.json", "r.json")
	slices.Sort(want)
	if got := listDir(t, dir); !slices.Equal(got, want) {
		t.Errorf("folder holds %v, want %v", got, want)
	}
}

// TestWriteStopsWhenCancelled: cancelling part way through the image
// stops the write with the context's error, keeps the previous files and
// leaves no temporary.
func TestWriteStopsWhenCancelled(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "f.tiff")
	if err := Write(path, []*recon.Frame{testFrame(30, 20, 1)}, Options{}); err != nil {
		t.Fatal(err)
	}
	before := readAll(t, dir)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	wrap := func(w io.Writer) io.Writer { return &cancelAfter{w: w, n: 100, cancel: cancel} }
	err := write(ctx, path, []*recon.Frame{testFrame(300, 200, 1)}, Options{Force: true}, fixedTime, wrap)
	if !errors.Is(err, context.Canceled) {
		t.Errorf("%v, want context.Canceled", err)
	}
	if after := readAll(t, dir); len(after) != len(before) || after["f.tiff"] != before["f.tiff"] || after["f.recipe.json"] != before["f.recipe.json"] {
		t.Errorf("folder holds %v after the cancelled write", slices.Sorted(maps.Keys(after)))
	}
}

// cancelAfter cancels after n bytes have gone through.
type cancelAfter struct {
	w      io.Writer
	n      int
	cancel func()
}

func (c *cancelAfter) Write(p []byte) (int, error) {
	c.n -= len(p)
	if c.n < 0 {
		c.cancel()
	}
	return c.w.Write(p)
}

// TestLockWaitStopsWhenCancelled: a write waiting for another writer's
// lock gives up when its context is cancelled.
func TestLockWaitStopsWhenCancelled(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "f.png")
	release, err := lock(context.Background(), location(path))
	if err != nil {
		t.Fatal(err)
	}
	defer release()
	ctx, cancel := context.WithTimeout(context.Background(), 100*time.Millisecond)
	defer cancel()
	err = WriteContext(ctx, path, []*recon.Frame{testFrame(8, 6, 1)}, Options{Depth: 8})
	if !errors.Is(err, context.DeadlineExceeded) {
		t.Errorf("%v, want the context's deadline", err)
	}
	if _, err := os.Stat(path); err == nil {
		t.Error("written although the lock was held")
	}
}

// TestSharedSidecar: a TIFF and a PNG of one base name made from the same
// recipe share F.recipe.json, which lists both (file, format, depth,
// tone) and is still a recipe file; a sidecar holding a different recipe
// is refused without Force, naming both files, and replaced with it.
func TestSharedSidecar(t *testing.T) {
	dir := t.TempDir()
	f := testFrame(40, 30, 0.5)
	tiffPath, pngPath := filepath.Join(dir, "frame.tiff"), filepath.Join(dir, "frame.png")
	if err := Write(tiffPath, []*recon.Frame{f}, Options{Raw: true}); err != nil {
		t.Fatal(err)
	}
	if err := Write(pngPath, []*recon.Frame{f}, Options{Depth: 8, Tone: recon.Tone{Window: 2, Level: 0.5, Gamma: 1.5}}); err != nil {
		t.Fatalf("PNG beside the TIFF of the same recipe: %v", err)
	}
	sidecar := SidecarPath(pngPath)
	data := must(os.ReadFile(sidecar))
	sc, ok := parseSidecar(data)
	if !ok {
		t.Fatalf("not a sidecar: %s", data)
	}
	if len(sc.Exports) != 2 {
		t.Fatalf("exports %+v, want the TIFF and the PNG", sc.Exports)
	}
	tif, png := sc.Exports[0], sc.Exports[1]
	if tif.File != "frame.tiff" || tif.Format != "tiff" || tif.Depth != 32 || tif.Tone != nil {
		t.Errorf("TIFF entry %+v", tif)
	}
	if png.File != "frame.png" || png.Format != "png" || png.Depth != 8 || len(png.Tone) != 1 || png.Tone[0].Window != 2 || png.Tone[0].Gamma != 1.5 {
		t.Errorf("PNG entry %+v", png)
	}
	if r, err := recipe.Parse(data); err != nil || !bytes.Equal(r.JSON(), f.Recipe.JSON()) {
		t.Errorf("the shared sidecar is no longer the recipe file: %v", err)
	}
	// Replacing the PNG keeps one entry for it.
	if err := Write(pngPath, []*recon.Frame{f}, Options{Depth: 16, Force: true}); err != nil {
		t.Fatal(err)
	}
	sc, _ = parseSidecar(must(os.ReadFile(sidecar)))
	if len(sc.Exports) != 2 || sc.Exports[0].File != "frame.tiff" || sc.Exports[1].Depth != 16 {
		t.Errorf("after replacing the PNG: %+v", sc.Exports)
	}

	// Another recipe under the same base name.
	g := testFrame(40, 30, 0.25)
	other := filepath.Join(dir, "frame.tif")
	before := string(must(os.ReadFile(sidecar)))
	err := Write(other, []*recon.Frame{g}, Options{})
	if !errors.Is(err, ErrExists) || !strings.Contains(err.Error(), sidecar) || !strings.Contains(err.Error(), "frame.tiff") || !strings.Contains(err.Error(), "frame.tif,") && !strings.Contains(err.Error(), "frame.tif ") && !strings.HasSuffix(err.Error(), "frame.tif") {
		t.Errorf("different recipe: %v, want ErrExists naming the sidecar and both files", err)
	}
	if err := CheckSidecar(other, g.Recipe, false); !errors.Is(err, ErrExists) {
		t.Errorf("CheckSidecar: %v, want ErrExists", err)
	}
	if err := CheckSidecar(other, f.Recipe, false); err != nil {
		t.Errorf("CheckSidecar of the same recipe: %v", err)
	}
	if string(must(os.ReadFile(sidecar))) != before {
		t.Error("the refused write changed the sidecar")
	}
	if err := Write(other, []*recon.Frame{g}, Options{Force: true}); err != nil {
		t.Fatal(err)
	}
	sc, _ = parseSidecar(must(os.ReadFile(sidecar)))
	if len(sc.Exports) != 1 || sc.Exports[0].File != "frame.tif" {
		t.Errorf("after the forced write of another recipe: %+v", sc.Exports)
	}
}

// TestSharedSidecarReadsEarlierFormat: a sidecar written before the list
// of exports existed counts as listing its one file.
func TestSharedSidecarReadsEarlierFormat(t *testing.T) {
	dir := t.TempDir()
	f := testFrame(20, 10, 1)
	tiffPath := filepath.Join(dir, "a.tiff")
	if err := Write(tiffPath, []*recon.Frame{f}, Options{Depth: 16}); err != nil {
		t.Fatal(err)
	}
	var raw map[string]json.RawMessage
	json.Unmarshal(must(os.ReadFile(SidecarPath(tiffPath))), &raw)
	delete(raw, "exports")
	os.WriteFile(SidecarPath(tiffPath), must(json.Marshal(raw)), 0o644)
	if err := Write(filepath.Join(dir, "a.png"), []*recon.Frame{f}, Options{Depth: 8}); err != nil {
		t.Fatal(err)
	}
	sc, _ := parseSidecar(must(os.ReadFile(SidecarPath(tiffPath))))
	if len(sc.Exports) != 2 || sc.Exports[0].File != "a.tiff" || sc.Exports[0].Depth != 16 || len(sc.Exports[0].Tone) != 1 {
		t.Errorf("exports %+v", sc.Exports)
	}
}

// TestSameFile: paths that reach one file through "..", a linked folder
// or a hard link are one file, existing or not; different names are not.
func TestSameFile(t *testing.T) {
	dir := t.TempDir()
	os.Mkdir(filepath.Join(dir, "sub"), 0o755)
	os.Symlink(filepath.Join(dir, "sub"), filepath.Join(dir, "alias"))
	os.WriteFile(filepath.Join(dir, "a"), nil, 0o644)
	os.Link(filepath.Join(dir, "a"), filepath.Join(dir, "sub", "b"))
	same := [][2]string{
		{filepath.Join(dir, "a"), filepath.Join(dir, "sub", "..", "a")},
		{filepath.Join(dir, "a"), filepath.Join(dir, "alias", "b")},
		{filepath.Join(dir, "sub", "new"), filepath.Join(dir, "alias", "new")},
		{filepath.Join(dir, "alias", "gone", "x"), filepath.Join(dir, "sub", "gone", "x")},
	}
	for _, p := range same {
		if !SameFile(p[0], p[1]) {
			t.Errorf("%s and %s: not the same file", p[0], p[1])
		}
	}
	if SameFile(filepath.Join(dir, "a"), filepath.Join(dir, "sub", "a")) || SameFile(filepath.Join(dir, "new"), filepath.Join(dir, "sub", "new")) {
		t.Error("different files taken for one")
	}
}
