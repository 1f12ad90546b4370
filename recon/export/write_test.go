package export

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"image"
	"image/png"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotloom/recon"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
)

func listDir(t *testing.T, dir string) []string {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
	}
	return names
}

// TestFailedWriteLeavesNothing makes the file writer fail part way, as a
// full disk does, at several points of the TIFF and PNG streams and of the
// sidecar: the error says what happened and the folder stays empty.
func TestFailedWriteLeavesNothing(t *testing.T) {
	f := testFrame(200, 150, 0.5)
	for _, name := range []string{"f.tiff", "f.png"} {
		for _, limit := range []int{0, 7, 8, 40, 5000, 30000} {
			dir := t.TempDir()
			calls := 0
			wrap := func(w io.Writer) io.Writer {
				calls++
				return &failingWriter{w: w, limit: limit}
			}
			err := write(context.Background(), filepath.Join(dir, name), []*recon.Frame{f}, Options{}, fixedTime, wrap)
			if err == nil || !strings.Contains(err.Error(), "no space left") {
				t.Errorf("%s limit %d: error %v, want the writer's failure", name, limit, err)
			}
			if left := listDir(t, dir); len(left) != 0 {
				t.Errorf("%s limit %d: left behind %v", name, limit, left)
			}
		}
	}
	// The image completes and the sidecar fails: still nothing.
	dir := t.TempDir()
	n := 0
	wrap := func(w io.Writer) io.Writer {
		n++
		if n == 2 {
			return &failingWriter{w: w, limit: 10}
		}
		return w
	}
	if err := write(context.Background(), filepath.Join(dir, "f.tiff"), []*recon.Frame{f}, Options{}, fixedTime, wrap); err == nil {
		t.Error("sidecar failure not reported")
	}
	if left := listDir(t, dir); len(left) != 0 {
		t.Errorf("sidecar failure left %v", left)
	}
}

// TestNoSilentOverwrite: a second write without Force fails with
// ErrExists and leaves the first file as it was; with Force it replaces
// it. A stale sidecar alone also blocks.
func TestNoSilentOverwrite(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "f.png")
	a, b := testFrame(30, 20, 1), testFrame(40, 20, 1)
	if err := Write(path, []*recon.Frame{a}, Options{}); err != nil {
		t.Fatal(err)
	}
	first, _ := os.ReadFile(path)
	err := Write(path, []*recon.Frame{b}, Options{})
	if !errors.Is(err, ErrExists) || !strings.Contains(err.Error(), "f.png") {
		t.Fatalf("second write: %v, want ErrExists naming the file", err)
	}
	if now, _ := os.ReadFile(path); !bytes.Equal(now, first) {
		t.Fatal("the file changed without Force")
	}
	if err := Write(path, []*recon.Frame{b}, Options{Force: true}); err != nil {
		t.Fatalf("forced write: %v", err)
	}
	img, err := png.Decode(bytes.NewReader(must(os.ReadFile(path))))
	if err != nil || img.Bounds().Dx() != 40 {
		t.Fatalf("forced write did not replace the file: %v", err)
	}
	if left := listDir(t, dir); len(left) != 2 {
		t.Errorf("folder holds %v, want the PNG and its sidecar", left)
	}
	other := filepath.Join(dir, "g.tiff")
	os.WriteFile(SidecarPath(other), []byte("{}"), 0o644)
	if err := Write(other, []*recon.Frame{a}, Options{}); !errors.Is(err, ErrExists) {
		t.Errorf("stale sidecar: %v, want ErrExists", err)
	}
	if _, err := os.Stat(other); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("g.tiff written although its sidecar blocked")
	}
}

func must[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

// TestBadInput: every refusal names the problem and writes nothing.
func TestBadInput(t *testing.T) {
	dir := t.TempDir()
	f := testFrame(40, 30, 1)
	notDir := filepath.Join(dir, "plain-file")
	os.WriteFile(notDir, []byte("x"), 0o644)
	cases := []struct {
		name   string
		path   string
		frames []*recon.Frame
		opts   Options
		want   string
	}{
		{"missing folder", filepath.Join(dir, "no", "such", "f.tiff"), nil, Options{}, "does not exist"},
		{"parent is a file", filepath.Join(notDir, "f.tiff"), nil, Options{}, "not a folder"},
		{"unknown extension", filepath.Join(dir, "f.jpg"), nil, Options{}, `unknown extension ".jpg"`},
		{"no extension", filepath.Join(dir, "f"), nil, Options{}, "no extension"},
		{"png 32", filepath.Join(dir, "f.png"), nil, Options{Depth: 32}, "PNG holds at most 16 bits"},
		{"png raw", filepath.Join(dir, "f.png"), nil, Options{Raw: true}, "PNG holds at most 16 bits"},
		{"raw 16", filepath.Join(dir, "f.tiff"), nil, Options{Raw: true, Depth: 16}, "need depth 32"},
		{"depth 12", filepath.Join(dir, "f.tiff"), nil, Options{Depth: 12}, "depth 12"},
		{"bar on float", filepath.Join(dir, "f.tiff"), nil, Options{Depth: 32, ScaleBarMM: -1}, "overwrite measured values"},
		{"png lzw", filepath.Join(dir, "f.png"), nil, Options{Compression: "lzw"}, `compression "lzw"`},
		{"tiff jpeg", filepath.Join(dir, "f.tiff"), nil, Options{Compression: "jpeg"}, `compression "jpeg"`},
		{"no-data 2", filepath.Join(dir, "f.tiff"), nil, Options{NoData: 2}, "outside 0"},
		{"png two frames", filepath.Join(dir, "f.png"), []*recon.Frame{f, f}, Options{}, "PNG holds one frame"},
		{"no frames", filepath.Join(dir, "f.tiff"), []*recon.Frame{}, Options{}, "no frame"},
		{"nil frame", filepath.Join(dir, "f.tiff"), []*recon.Frame{nil}, Options{}, "missing"},
		{"short pixels", filepath.Join(dir, "f.tiff"), []*recon.Frame{{Width: 3, Height: 3, Pix: make([]float32, 8), Covered: make([]bool, 9), PitchXMM: 1, PitchYMM: 1}}, Options{}, "holds 8 values"},
		{"zero pitch", filepath.Join(dir, "f.tiff"), []*recon.Frame{{Width: 1, Height: 1, Pix: make([]float32, 1), Covered: make([]bool, 1), PitchYMM: 1}}, Options{}, "pitch"},
		{"bar too long", filepath.Join(dir, "f.png"), nil, Options{ScaleBarMM: 100}, "choose a shorter bar"},
		{"caption too long", filepath.Join(dir, "f.png"), nil, Options{Caption: strings.Repeat("long caption ", 20)}, "shorten it"},
		{"NaN gamma", filepath.Join(dir, "f.png"), nil, Options{Tone: recon.Tone{Window: 1, Gamma: math.NaN()}}, "finite"},
	}
	for _, c := range cases {
		frames := c.frames
		if frames == nil {
			frames = []*recon.Frame{f}
		}
		err := Write(c.path, frames, c.opts)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	if left := listDir(t, dir); len(left) != 1 {
		t.Errorf("bad input left files: %v", left)
	}
}

// TestUnwritableFolder: a folder without write permission. Root ignores
// permissions, so the test needs an ordinary user.
func TestUnwritableFolder(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("running as root, which may write into any folder: permission refusal not testable here")
	}
	dir := t.TempDir()
	ro := filepath.Join(dir, "read-only")
	os.Mkdir(ro, 0o555)
	defer os.Chmod(ro, 0o755)
	err := Write(filepath.Join(ro, "f.tiff"), []*recon.Frame{testFrame(10, 10, 1)}, Options{})
	if err == nil || !strings.Contains(err.Error(), "cannot create a file in") {
		t.Fatalf("error %v, want a refusal naming the folder", err)
	}
}

// TestSidecar: F.recipe.json holds the recipe (recipe.Parse reads it back
// equal to the frame's) and the report, plus the page geometry in mm.
func TestSidecar(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "scan.tiff")
	f := testFrame(120, 80, 0.25)
	f.Report.RPMMean = 333.3
	f.Report.Warnings = []string{"3 index pulses were missing and were filled in"}
	if err := write(context.Background(), path, []*recon.Frame{f}, Options{Depth: 8, ScaleBarMM: -1}, fixedTime, nil); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(filepath.Join(dir, "scan.recipe.json"))
	if err != nil {
		t.Fatalf("no sidecar: %v", err)
	}
	var sc struct {
		Format string          `json:"format"`
		File   string          `json:"file"`
		Recipe json.RawMessage `json:"recipe"`
		Report recon.Report    `json:"report"`
		Pages  []sidecarPage   `json:"pages"`
		Export sidecarExport   `json:"export"`
	}
	if err := json.Unmarshal(data, &sc); err != nil {
		t.Fatal(err)
	}
	r, err := recipe.Parse(sc.Recipe)
	if err != nil {
		t.Fatalf("sidecar recipe: %v", err)
	}
	if !bytes.Equal(r.JSON(), f.Recipe.JSON()) {
		t.Errorf("recipe differs:\n%s\nwant\n%s", r.JSON(), f.Recipe.JSON())
	}
	// The whole sidecar is also a recipe file: recipe.Parse takes the
	// recipe out of it, so "build --recipe F.recipe.json" rebuilds F.
	whole, err := recipe.Parse(data)
	if err != nil {
		t.Fatalf("sidecar as a recipe file: %v", err)
	}
	if !bytes.Equal(whole.JSON(), f.Recipe.JSON()) {
		t.Errorf("recipe read from the whole sidecar differs:\n%s\nwant\n%s", whole.JSON(), f.Recipe.JSON())
	}
	if sc.Format != SidecarFormat || sc.File != "scan.tiff" || sc.Report.RPMMean != 333.3 || len(sc.Report.Warnings) != 1 {
		t.Errorf("sidecar %+v", sc)
	}
	p := sc.Pages[0]
	// 120 px × 0.25 mm = 30 mm; a quarter is 7.5 mm → round bar 5 mm.
	if p.WidthMM != 30 || p.HeightMM != 20 || p.ScaleBarMM != 5 || p.Tone == nil || sc.Export.Depth != 8 {
		t.Errorf("page %+v export %+v", p, sc.Export)
	}
}

// TestRoundScaleBar: the largest 1-2-5 × 10^k at most a quarter of the
// width (hand-computed).
func TestRoundScaleBar(t *testing.T) {
	cases := map[float64]float64{100: 20, 37: 5, 4: 1, 0.9: 0.2, 400: 100, 2000: 500, 8: 2}
	for width, want := range cases {
		if got := roundScaleBarMM(width); math.Abs(got-want) > 1e-12*want {
			t.Errorf("roundScaleBarMM(%g) = %g, want %g", width, got, want)
		}
	}
}

// TestScaleBarLength: a 10 mm bar at 0.25 mm pitch is 10/0.25 = 40 px.
// The longest run of full white in the lower left quarter is the bar.
func TestScaleBarLength(t *testing.T) {
	f := testFrame(400, 300, 0.25)
	for i := range f.Pix {
		f.Pix[i], f.Covered[i] = 0.5, true // flat grey: only the overlay is white
	}
	file := exportBytes(t, "bar.png", []*recon.Frame{f}, Options{Depth: 16, ScaleBarMM: 10, Caption: "bar test", Tone: recon.Tone{Window: 2, Level: 0.5, Gamma: 1}})
	img := must(png.Decode(bytes.NewReader(file))).(*image.Gray16)
	longest, barRows := 0, 0
	for row := 150; row < 300; row++ {
		run := 0
		rowLongest := 0
		for col := 0; col < 200; col++ {
			if img.Gray16At(col, row).Y == 0xffff {
				run++
				rowLongest = max(rowLongest, run)
			} else {
				run = 0
			}
		}
		if rowLongest > longest {
			longest, barRows = rowLongest, 0
		}
		if rowLongest == longest {
			barRows++
		}
	}
	if longest != 40 || barRows < 2 {
		t.Errorf("scale bar %d px long on %d rows, want 40 px on ≥ 2 rows", longest, barRows)
	}
	// The caption box is black and holds white text in the upper left.
	white, black := 0, 0
	for row := 0; row < 40; row++ {
		for col := 0; col < 100; col++ {
			switch img.Gray16At(col, row).Y {
			case 0xffff:
				white++
			case 0:
				black++
			}
		}
	}
	if white < 20 || black < 200 {
		t.Errorf("caption box: %d white and %d black pixels", white, black)
	}
}

func TestASCIIJSON(t *testing.T) {
	in := []byte(`{"name":"µm Ω 😀","n":1}`)
	out := asciiJSON(in)
	for _, c := range out {
		if c >= 0x80 {
			t.Fatalf("non-ASCII byte in %s", out)
		}
	}
	var a, b map[string]any
	if err := json.Unmarshal(in, &a); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(out, &b); err != nil {
		t.Fatalf("%s: %v", out, err)
	}
	if a["name"] != b["name"] {
		t.Errorf("escaped %q, read back %q", a["name"], b["name"])
	}
}

// TestCheck refuses what Write would refuse, before any frame exists.
func TestCheck(t *testing.T) {
	dir := t.TempDir()
	if err := Check(filepath.Join(dir, "a.png"), Options{Depth: 8}); err != nil {
		t.Errorf("good options: %v", err)
	}
	if err := Check(filepath.Join(dir, "a.png"), Options{Depth: 32}); err == nil {
		t.Error("PNG 32 accepted")
	}
	if err := Check(filepath.Join(dir, "missing", "a.tiff"), Options{}); err == nil {
		t.Error("missing folder accepted")
	}
	os.WriteFile(filepath.Join(dir, "b.tiff"), nil, 0o644)
	if err := Check(filepath.Join(dir, "b.tiff"), Options{}); !errors.Is(err, ErrExists) {
		t.Errorf("existing file: %v", err)
	}
	if err := Check(filepath.Join(dir, "b.tiff"), Options{Force: true}); err != nil {
		t.Errorf("existing file with force: %v", err)
	}
}

func TestSaveFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "report.json")
	if err := SaveFile(path, []byte("one"), false); err != nil {
		t.Fatal(err)
	}
	if err := SaveFile(path, []byte("two"), false); !errors.Is(err, ErrExists) {
		t.Errorf("second save: %v", err)
	}
	if err := SaveFile(path, []byte("three"), true); err != nil {
		t.Fatal(err)
	}
	if got := string(must(os.ReadFile(path))); got != "three" {
		t.Errorf("content %q", got)
	}
	if left := listDir(t, dir); len(left) != 1 {
		t.Errorf("folder holds %v", left)
	}
}

// TestAutoWindowKeepsGamma: a Tone with only Gamma set takes the window
// from recon.AutoTone and applies the gamma: the sidecar records it and a
// pixel at the automatic level maps to 0.5^(1/2) (closed form).
func TestAutoWindowKeepsGamma(t *testing.T) {
	f := testFrame(64, 64, 1)
	f.Pix[0], f.Covered[0] = 0, true
	auto := recon.AutoTone(f)
	f.Pix[0] = float32(auto.Level) // a median-ish value: the percentiles stay put
	if recon.AutoTone(f) != auto {
		t.Fatal("moving one pixel changed the automatic tone")
	}
	path := filepath.Join(t.TempDir(), "g.png")
	if err := Write(path, []*recon.Frame{f}, Options{Depth: 16, Tone: recon.Tone{Gamma: 2}}); err != nil {
		t.Fatal(err)
	}
	img := must(png.Decode(bytes.NewReader(must(os.ReadFile(path))))).(*image.Gray16)
	want := uint16(math.Round(math.Sqrt(0.5) * 65535))
	if got := img.Gray16At(0, 0).Y; int(got)-int(want) > 1 || int(want)-int(got) > 1 {
		t.Errorf("pixel at the automatic level = %d, want %d", got, want)
	}
}

// TestOutputThatIsAFolder: an output path naming an existing folder is
// refused with a plain message, with or without Force, and the folder is
// left as it was.
func TestOutputThatIsAFolder(t *testing.T) {
	dir := t.TempDir()
	folder := filepath.Join(dir, "out.png")
	if err := os.Mkdir(folder, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, force := range []bool{false, true} {
		err := Write(folder, []*recon.Frame{testFrame(8, 6, 1)}, Options{Depth: 8, Force: force})
		if err == nil || !strings.Contains(err.Error(), "is a folder") {
			t.Errorf("force %v: %v, want a refusal naming the folder", force, err)
		}
		if st, err := os.Stat(folder); err != nil || !st.IsDir() {
			t.Fatalf("force %v: the folder is gone: %v", force, err)
		}
	}
}

func TestSidecarMeasurements(t *testing.T) {
	// The shapes given are written as the sidecar's "measurements" and
	// read back by measure.ParseList (the window's and the report's
	// reader); a later export of the same recipe that gives none keeps
	// them, one that gives an empty list drops them, and a list that
	// cannot be taken is refused before anything is written.
	dir := t.TempDir()
	tiffPath, pngPath := filepath.Join(dir, "scan.tiff"), filepath.Join(dir, "scan.png")
	f := testFrame(120, 80, 0.25)
	shapes := []measure.Shape{
		{Kind: measure.KindEdge, Label: "E1", Rect: &measure.Rect{X0: 1, Y0: 2, X1: 11, Y1: 12}},
		{Kind: measure.KindProfile, Label: "P1", Line: &measure.Line{X0: 0, Y0: 5, X1: 20, Y1: 5}, BandMM: 1.5},
	}
	read := func() ([]measure.Shape, error) {
		return measure.LoadList(SidecarPath(tiffPath))
	}
	if err := Write(tiffPath, []*recon.Frame{f}, Options{Raw: true, Measurements: shapes}); err != nil {
		t.Fatal(err)
	}
	got, err := read()
	if err != nil || !measure.SameList(got, shapes) {
		t.Fatalf("sidecar measurements %+v (%v), want %+v", got, err, shapes)
	}
	if err := Write(pngPath, []*recon.Frame{f}, Options{Depth: 8}); err != nil {
		t.Fatal(err)
	}
	if got, err := read(); err != nil || !measure.SameList(got, shapes) {
		t.Errorf("after a PNG export with no list: %+v (%v), want the list kept", got, err)
	}
	if err := Write(pngPath, []*recon.Frame{f}, Options{Depth: 8, Force: true, Measurements: []measure.Shape{}}); err != nil {
		t.Fatal(err)
	}
	if _, err := read(); !errors.Is(err, measure.ErrNoList) {
		t.Errorf("after an export with an empty list: %v, want no list", err)
	}
	bad := []measure.Shape{{Kind: measure.KindDots}}
	other := filepath.Join(dir, "other.tiff")
	if err := Write(other, []*recon.Frame{f}, Options{Raw: true, Measurements: bad}); err == nil || !strings.Contains(err.Error(), "spacing") {
		t.Errorf("a dot grid without spacing: %v", err)
	}
	if _, err := os.Stat(other); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("a refused export left %s", other)
	}
}
