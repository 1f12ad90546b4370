package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
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
