package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/sampledata"
)

// snapshotDir lists a folder's files with their contents.
func snapshotDir(t *testing.T, dir string) map[string]string {
	t.Helper()
	files := map[string]string{}
	err := filepath.Walk(dir, func(p string, info os.FileInfo, err error) error {
		if err != nil {
			return err
		}
		if info.Mode().IsRegular() {
			b, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			files[p] = string(b)
		} else if info.Mode()&os.ModeSymlink != 0 {
			files[p] = "link"
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return files
}

// TestNoOutputIsAnInput: an output that is the capture, its layout, the
// recipe, or another output of the same command (by name, through a
// symbolic or hard link, "..", or a linked folder, existing or not) is
// refused with exit 1 and one line, even with --force, and every file is
// left as it was.
func TestNoOutputIsAnInput(t *testing.T) {
	dir, wav, recipePath := demoFiles(t)
	j := func(name string) string { return filepath.Join(dir, name) }
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	must(os.Mkdir(j("sub"), 0o755))
	must(os.Symlink(dir, j("alias")))      // a second way to the folder
	must(os.Symlink(wav, j("image.tiff"))) // a link to the capture
	must(os.Link(wav, j("hard.json")))     // the capture under a second name
	must(os.WriteFile(j("f.recipe.json"), []byte(sampleRecipeJSON(t, recipePath)), 0o644))
	must(os.WriteFile(j("dump.bin"), make([]byte, 64), 0o644))
	must(os.WriteFile(j("dump.bin.layout.json"), []byte(`{"sample_type":"int16","channels":2,"sample_rate_hz":1000}`), 0o644))
	must(os.WriteFile(j("rig.json"), []byte("{}"), 0o644))
	before := snapshotDir(t, dir)

	build := []string{"build", wav, "--recipe", recipePath, "--force"}
	cases := []struct {
		args []string
		want string
	}{
		{append(build, "--out", j("f.tiff"), "--report", wav), "--report " + wav + " is the capture"},
		{append(build, "--out", j("f.tiff"), "--report", j("sub/../demo.wav")), "is the capture"},
		{append(build, "--out", j("f.tiff"), "--report", j("hard.json")), "is the capture"},
		{append(build, "--out", j("image.tiff")), "is the capture"},
		{append(build, "--out", j("demo.recipe-in.tiff"), "--report", recipePath), "is the recipe"},
		{append(build, "--out", j("f.tiff"), "--report", j("f.tiff")), "is the same file as --out"},
		{append(build, "--out", j("new.tiff"), "--report", j("alias/new.recipe.json")), "is the same file as the sidecar"},
		{[]string{"build", wav, "--recipe", j("f.recipe.json"), "--out", j("f.png"), "--force"}, "the sidecar " + j("f.recipe.json") + " is the recipe"},
		{[]string{"build", j("dump.bin"), "--recipe", recipePath, "--out", j("d.tiff"), "--report", j("dump.bin.layout.json"), "--force"}, "is the layout"},
		{[]string{"recipe", wav, "--out", wav, "--force"}, "--out " + wav + " is the capture"},
		{[]string{"recipe", wav, "--from", recipePath, "--out", j("alias/demo.recipe-in.json"), "--force"}, "is --from"},
		{[]string{"open", wav, "--snapshot", j("alias/demo.wav"), "--force"}, "is the capture"},
		{[]string{"open", wav, "--recipe", recipePath, "--snapshot", recipePath, "--force"}, "is the recipe"},
		{[]string{"simulate", "--scene", "bars", "--out", j("s.wav"), "--truth", j("t.json"), "--recipe", j("t.json")}, "--recipe " + j("t.json") + " is the same file as --truth"},
		{[]string{"simulate", "--scene", "bars", "--out", j("s.wav"), "--truth", j("t.json"), "--recipe", j("t.png")}, "is the same file as the truth image"},
		{[]string{"simulate", "--scene", "bars", "--rig", j("rig.json"), "--out", j("s.wav"), "--recipe", j("rig.json")}, "is --rig"},
	}
	for _, c := range cases {
		code, _, stderr := runCmd(c.args...)
		if code != 1 || !strings.Contains(stderr, c.want) || strings.Count(stderr, "\n") != 1 {
			t.Errorf("%q: exit %d, stderr %q; want exit 1 and one line with %q", c.args, code, stderr, c.want)
		}
	}
	after := snapshotDir(t, dir)
	for p, content := range before {
		if after[p] != content {
			t.Errorf("%s changed", p)
		}
	}
	for p := range after {
		if _, ok := before[p]; !ok {
			t.Errorf("a refused command left %s", p)
		}
	}
}

// sampleRecipeJSON is the recipe file's text.
func sampleRecipeJSON(t *testing.T, path string) string {
	t.Helper()
	return string(readForBuildTest(t, path))
}

// unwritableDir is a folder that exists but refuses new files, even to
// root (which ignores permission bits): a read-only folder, else /sys.
func unwritableDir(t *testing.T) string {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "locked")
	if err := os.Mkdir(dir, 0o555); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.Chmod(dir, 0o755) })
	if f, err := os.CreateTemp(dir, "probe"); err != nil {
		return dir
	} else {
		f.Close()
		os.Remove(f.Name())
	}
	if f, err := os.CreateTemp("/sys", "probe"); err != nil {
		if st, err := os.Stat("/sys"); err == nil && st.IsDir() {
			return "/sys"
		}
	} else {
		f.Close()
		os.Remove(f.Name())
	}
	t.Skip("no folder refuses new files here")
	return ""
}

// TestOutputFoldersCheckedFirst: a missing or unwritable folder of any
// output, the report's too, is refused before the capture is even read
// (a broken capture would otherwise be the error), and nothing is written.
func TestOutputFoldersCheckedFirst(t *testing.T) {
	dir, wav, recipePath := demoFiles(t)
	locked := unwritableDir(t)
	bad := filepath.Join(captureFixtures, "bad", "truncated_header.wav")
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"build", wav, "--recipe", recipePath, "--out", filepath.Join(dir, "f.tiff"), "--report", filepath.Join(locked, "r.json")}, "cannot write in the folder " + locked},
		{[]string{"build", bad, "--recipe", recipePath, "--out", filepath.Join(locked, "f.tiff")}, "cannot write in the folder " + locked},
		{[]string{"build", bad, "--recipe", recipePath, "--out", filepath.Join(dir, "f.tiff"), "--report", filepath.Join(dir, "none", "r.json")}, "does not exist"},
		{[]string{"recipe", bad, "--out", filepath.Join(locked, "r.json")}, "cannot write in the folder " + locked},
		{[]string{"open", bad, "--snapshot", filepath.Join(locked, "s.png")}, "cannot write in the folder " + locked},
		{[]string{"simulate", "--scene", "bars", "--out", filepath.Join(dir, "s.wav"), "--truth", filepath.Join(locked, "t.json")}, "cannot write in the folder " + locked},
	}
	for _, c := range cases {
		code, _, stderr := runCmd(c.args...)
		if code != 1 || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want exit 1 with %q", c.args, code, stderr, c.want)
		}
	}
	for _, name := range []string{"f.tiff", "f.recipe.json", "s.wav"} {
		if _, err := os.Stat(filepath.Join(dir, name)); err == nil {
			t.Errorf("a refused command wrote %s", name)
		}
	}
}

// TestSnapshotNeverReplacesWithoutForce: --snapshot onto an existing file
// is refused before rendering and leaves the file alone.
func TestSnapshotNeverReplacesWithoutForce(t *testing.T) {
	dir := t.TempDir()
	shot := filepath.Join(dir, "shot.png")
	if err := os.WriteFile(shot, []byte("keep"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runCmd("open", "--snapshot", shot)
	if code != 1 || !strings.Contains(stderr, "add --force") {
		t.Errorf("exit %d, stderr %q; want exit 1 asking for --force", code, stderr)
	}
	if got := string(readForBuildTest(t, shot)); got != "keep" {
		t.Errorf("the existing file became %q", got)
	}
}

// TestConcurrentForcedBuilds: forced builds of two different recipes to
// one output at the same time leave an image, a sidecar and a report of
// one and the same build.
func TestConcurrentForcedBuilds(t *testing.T) {
	dir, wav, _ := demoFiles(t)
	var recipes []string
	for i, pitch := range []float64{0.9, 1.4} {
		r := sampledata.DemoRecipe()
		r.Image.PitchMM = pitch
		p := filepath.Join(dir, fmt.Sprintf("r%d.json", i))
		if err := os.WriteFile(p, r.JSON(), 0o644); err != nil {
			t.Fatal(err)
		}
		recipes = append(recipes, p)
	}
	out, report := filepath.Join(dir, "f.png"), filepath.Join(dir, "f.report.json")
	var wg sync.WaitGroup
	codes := make([]int, 4)
	for k := range codes {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var stdout, stderr bytes.Buffer
			codes[k] = run([]string{"build", wav, "--recipe", recipes[k%2], "--out", out, "--report", report, "--force"}, &stdout, &stderr)
			if codes[k] != 0 {
				t.Errorf("build %d: %s", k, stderr.String())
			}
		}()
	}
	wg.Wait()
	cfg, err := png.DecodeConfig(bytes.NewReader(readForBuildTest(t, out)))
	if err != nil {
		t.Fatal(err)
	}
	var sidecar struct {
		Pages  []struct{ Columns, Rows int }
		Recipe struct {
			Image struct {
				PitchMM float64 `json:"pitch_mm"`
			}
		}
	}
	var rep recon.Report
	if err := json.Unmarshal(readForBuildTest(t, export.SidecarPath(out)), &sidecar); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(readForBuildTest(t, report), &rep); err != nil {
		t.Fatal(err)
	}
	if sidecar.Pages[0].Columns != cfg.Width || sidecar.Pages[0].Rows != cfg.Height || rep.Columns != cfg.Width || rep.PitchMM != sidecar.Recipe.Image.PitchMM {
		t.Errorf("image %d×%d, sidecar %+v at %g mm, report %d×%d at %g mm: from different builds",
			cfg.Width, cfg.Height, sidecar.Pages[0], sidecar.Recipe.Image.PitchMM, rep.Columns, rep.Rows, rep.PitchMM)
	}
	for _, e := range must2(os.ReadDir(dir)) {
		if strings.HasPrefix(e.Name(), ".") {
			t.Errorf("left %s", e.Name())
		}
	}
}

func must2[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

// TestTIFFAndPNGShareTheSidecar: a TIFF and a PNG of one base name from
// the same recipe need no --force and share F.recipe.json, which lists
// both; a build of another recipe to that base name is refused before the
// reconstruction, naming the sidecar and both files.
func TestTIFFAndPNGShareTheSidecar(t *testing.T) {
	dir, wav, recipePath := demoFiles(t)
	tif, pngPath := filepath.Join(dir, "frame.tiff"), filepath.Join(dir, "frame.png")
	for _, out := range []string{tif, pngPath} {
		if code, _, stderr := runCmd("build", wav, "--recipe", recipePath, "--out", out); code != 0 {
			t.Fatalf("%s: exit %d: %s", out, code, stderr)
		}
	}
	var sc struct {
		Exports []struct {
			File, Format string
			Depth        int
			Tone         []struct{ Window float64 }
		}
	}
	sidecar := filepath.Join(dir, "frame.recipe.json")
	if err := json.Unmarshal(readForBuildTest(t, sidecar), &sc); err != nil {
		t.Fatal(err)
	}
	if len(sc.Exports) != 2 || sc.Exports[0].File != "frame.tiff" || sc.Exports[0].Depth != 32 || sc.Exports[1].Format != "png" || sc.Exports[1].Depth != 16 || len(sc.Exports[1].Tone) != 1 {
		t.Errorf("exports %+v, want the 32-bit TIFF and the 16-bit PNG", sc.Exports)
	}
	r := sampledata.DemoRecipe()
	r.Image.PitchMM *= 2
	other := filepath.Join(dir, "other.json")
	os.WriteFile(other, r.JSON(), 0o644)
	sentinel := false
	hook := func(stage string, _ float64) { sentinel = sentinel || stage == "gridding" }
	stageHook.Store(&hook)
	code, _, stderr := runCmd("build", wav, "--recipe", other, "--out", filepath.Join(dir, "frame.tif"))
	stageHook.Store(nil)
	if code != 1 || !strings.Contains(stderr, sidecar) || !strings.Contains(stderr, "frame.tiff and frame.png") || !strings.Contains(stderr, "frame.tif:") || !strings.Contains(stderr, "--force") {
		t.Errorf("other recipe: exit %d, stderr %q; want exit 1 naming the sidecar and the files, and --force", code, stderr)
	}
	if sentinel {
		t.Error("the refusal came after gridding")
	}
}
