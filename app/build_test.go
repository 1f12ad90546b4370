package main

import (
	"bytes"
	"encoding/json"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/image/tiff"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// demoFiles writes the built-in demo capture as a float WAV and its rig's
// recipe into a temporary folder.
func demoFiles(t *testing.T) (dir, wav, recipePath string) {
	t.Helper()
	dir = t.TempDir()
	rec, err := sampledata.Demo()
	if err != nil {
		t.Fatal(err)
	}
	wav = filepath.Join(dir, "demo.wav")
	var buf bytes.Buffer
	if err := capture.WriteWAV(&buf, rec, "float32"); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(wav, buf.Bytes(), 0o644)
	recipePath = filepath.Join(dir, "demo.recipe-in.json")
	os.WriteFile(recipePath, sampledata.DemoRecipe().JSON(), 0o644)
	return dir, wav, recipePath
}

func runCmd(args ...string) (int, string, string) {
	var stdout, stderr bytes.Buffer
	code := run(args, &stdout, &stderr)
	return code, stdout.String(), stderr.String()
}

// TestBuildWritesCalibratedFiles runs "spotloom build" on the demo capture
// to a 16-bit PNG with a scale bar and caption, and to an LZW 16-bit TIFF,
// and reads them back with the independent decoders image/png and
// golang.org/x/image/tiff; the PNG's pHYs is 1000 / pitch_mm pixels per
// metre (PNG §11.3.5.3).
func TestBuildWritesCalibratedFiles(t *testing.T) {
	dir, wav, recipePath := demoFiles(t)
	out := filepath.Join(dir, "demo.png")
	report := filepath.Join(dir, "demo.report.json")
	code, stdout, stderr := runCmd("build", wav, "--recipe", recipePath, "--out", out, "--report", report, "--scale-bar", "--caption", "demo parcel")
	if code != 0 {
		t.Fatalf("exit %d\nstdout: %s\nstderr: %s", code, stdout, stderr)
	}
	if !strings.Contains(stdout, "wrote "+out) {
		t.Errorf("stdout %q", stdout)
	}
	data, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(data))
	if err != nil {
		t.Fatalf("image/png: %v", err)
	}
	if _, ok := img.(*image.Gray16); !ok {
		t.Errorf("PNG decodes as %T, want 16-bit gray", img)
	}
	var rep recon.Report
	if err := json.Unmarshal(readForBuildTest(t, report), &rep); err != nil {
		t.Fatalf("report: %v", err)
	}
	if rep.Columns != img.Bounds().Dx() || rep.Rows != img.Bounds().Dy() || rep.Lines == 0 {
		t.Errorf("report %d×%d, %d lines; image %v", rep.Columns, rep.Rows, rep.Lines, img.Bounds())
	}
	i := bytes.Index(data, []byte("pHYs"))
	if i < 0 {
		t.Fatal("no pHYs chunk")
	}
	ppm := uint32(data[i+4])<<24 | uint32(data[i+5])<<16 | uint32(data[i+6])<<8 | uint32(data[i+7])
	if want := math.Round(1000 / rep.PitchMM); float64(ppm) != want {
		t.Errorf("pHYs %d px/m, want %g for %g mm", ppm, want, rep.PitchMM)
	}
	if _, err := os.Stat(filepath.Join(dir, "demo.recipe.json")); err != nil {
		t.Errorf("no sidecar: %v", err)
	}

	// 16-bit TIFF decoded by x/image/tiff.
	tif := filepath.Join(dir, "demo16.tiff")
	if code, _, stderr := runCmd("build", wav, "--recipe", recipePath, "--out", tif, "--depth", "16", "--compress", "lzw"); code != 0 {
		t.Fatalf("tiff: exit %d: %s", code, stderr)
	}
	timg, err := tiff.Decode(bytes.NewReader(readForBuildTest(t, tif)))
	if err != nil || timg.Bounds() != img.Bounds() {
		t.Fatalf("x/image/tiff: %v, bounds %v", err, timg)
	}
}

// TestBuildRefusals: exit 1 with one clear line and no file for outputs
// that cannot be written; exit 2 for bad usage.
func TestBuildRefusals(t *testing.T) {
	dir, wav, recipePath := demoFiles(t)
	existing := filepath.Join(dir, "taken.tiff")
	os.WriteFile(existing, []byte("keep"), 0o644)
	cases := []struct {
		args []string
		code int
		want string
	}{
		{[]string{"--out", filepath.Join(dir, "f.png"), "--depth", "32"}, 1, "PNG holds at most 16 bits"},
		{[]string{"--out", filepath.Join(dir, "f.bmp")}, 1, `unknown extension ".bmp"`},
		{[]string{"--out", filepath.Join(dir, "nowhere", "f.tiff")}, 1, "does not exist"},
		{[]string{"--out", existing}, 1, "add --force"},
		{[]string{"--out", filepath.Join(dir, "f.tiff"), "--depth", "32", "--caption", "x"}, 1, "overwrite measured values"},
		{[]string{"--out", filepath.Join(dir, "f.tiff"), "--window", "2"}, 2, "--window and --level go together"},
		{[]string{"--out", filepath.Join(dir, "f.tiff"), "--depth", "32", "--gamma", "2"}, 2, "--depth 32 writes"},
		{[]string{}, 2, "--out"},
	}
	for _, c := range cases {
		args := append([]string{"build", wav, "--recipe", recipePath}, c.args...)
		code, _, stderr := runCmd(args...)
		if code != c.code || !strings.Contains(stderr, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want exit %d mentioning %q", c.args, code, stderr, c.code, c.want)
		}
		if strings.Count(strings.TrimSpace(stderr), "\n") > 0 {
			t.Errorf("%v: more than one line on stderr: %q", c.args, stderr)
		}
	}
	if got := string(readForBuildTest(t, existing)); got != "keep" {
		t.Errorf("existing file changed to %q", got)
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		switch e.Name() {
		case "demo.wav", "demo.recipe-in.json", "taken.tiff":
		default:
			t.Errorf("refused builds left %s", e.Name())
		}
	}
	if code, _, _ := runCmd("build", "--recipe", recipePath, "--out", filepath.Join(dir, "f.tiff")); code != 2 {
		t.Errorf("no FILE: exit %d, want 2", code)
	}
}

func readForBuildTest(t *testing.T, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// A hostile recipe (a 44 KB calibration of one repeated level with a
// megabyte law name) gets one short line on stderr, exit 1, and so does a
// distance that would overflow the frame: the recipe check names the key
// before any work.
func TestBuildBoundedRecipeErrors(t *testing.T) {
	dir, wav, _ := demoFiles(t)
	r := sampledata.DemoRecipe()
	r.Rows.Calibration = make([][2]float64, 3000)
	for i := range r.Rows.Calibration {
		r.Rows.Calibration[i] = [2]float64{1, float64(i)}
	}
	r.Sweep.Law = recipe.Law(strings.Repeat("spiral", 200_000))
	bad := filepath.Join(dir, "bad.json")
	os.WriteFile(bad, r.JSON(), 0o644)
	far := sampledata.DemoRecipe()
	far.Sweep.DistanceMM = 1e308
	farPath := filepath.Join(dir, "far.json")
	os.WriteFile(farPath, far.JSON(), 0o644)
	for _, c := range []struct{ recipe, want string }{
		{bad, "(and 2,998 more points repeat a level)"},
		{farPath, `recipe key "sweep.distance_mm" is 1e+308`},
	} {
		code, _, stderr := runCmd("build", wav, "--recipe", c.recipe, "--out", filepath.Join(dir, "f.tiff"))
		if code != 1 || !strings.Contains(stderr, c.want) || len(stderr) > 2000 || strings.Count(strings.TrimSpace(stderr), "\n") > 0 {
			t.Errorf("%s: exit %d, %d bytes on stderr: %.400q; want exit 1, one short line with %q", filepath.Base(c.recipe), code, len(stderr), stderr, c.want)
		}
	}
}
