package export

import (
	"bytes"
	"context"
	"image"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"golang.org/x/image/tiff"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

var fixedTime = time.Date(2026, 3, 14, 9, 26, 53, 0, time.UTC)

func exportBytes(t *testing.T, name string, frames []*recon.Frame, opts Options) []byte {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := write(context.Background(), path, frames, opts, fixedTime, nil); err != nil {
		t.Fatalf("write %s: %v", name, err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestTIFFIntegerDecodedByXImage writes 8- and 16-bit TIFFs with every
// compression and decodes them with golang.org/x/image/tiff, an
// independent reader; every pixel must be the tone-mapped value.
func TestTIFFIntegerDecodedByXImage(t *testing.T) {
	f := testFrame(301, 217, 0.5) // odd sizes: odd row bytes, several strips at 8 bits
	tone := recon.Tone{Window: 3, Level: 0.8, Gamma: 1.8}
	for _, depth := range []int{8, 16} {
		for _, comp := range []string{"none", "lzw", "deflate"} {
			file := exportBytes(t, "f.tiff", []*recon.Frame{f}, Options{Depth: depth, Tone: tone, NoData: 0.25, Compression: comp})
			img, err := tiff.Decode(bytes.NewReader(file))
			if err != nil {
				t.Fatalf("depth %d %s: x/image/tiff: %v", depth, comp, err)
			}
			if img.Bounds() != image.Rect(0, 0, f.Width, f.Height) {
				t.Fatalf("depth %d %s: bounds %v", depth, comp, img.Bounds())
			}
			full := float64(uint(1)<<depth - 1)
			bad := 0
			for row := 0; row < f.Height; row++ {
				for col := 0; col < f.Width; col++ {
					v, ok := f.At(col, row)
					want := uint32(math.Round(0.25 * full))
					if ok {
						want = uint32(math.Round(tone.Map(v) * full))
					}
					got := grayAt(t, img, col, row)
					if got != want && bad < 5 {
						bad++
						t.Errorf("depth %d %s: pixel (%d,%d) = %d, want %d", depth, comp, col, row, got, want)
					}
				}
			}
		}
	}
}

// TestTIFFFloatParsedByHand: x/image/tiff refuses SampleFormat 3 (it is a
// baseline reader), so the float file is parsed by the test's own reader
// following TIFF 6.0 Sections 2, 8 and 19, and the samples compared bit
// for bit with the frame (no-data as NaN).
func TestTIFFFloatParsedByHand(t *testing.T) {
	f := testFrame(123, 77, 0.25)
	for _, comp := range []string{"none", "lzw", "deflate"} {
		file := exportBytes(t, "f.tif", []*recon.Frame{f}, Options{Raw: true, NoData: math.NaN(), Compression: comp})
		if _, err := tiff.Decode(bytes.NewReader(file)); err == nil {
			t.Logf("note: x/image/tiff decoded a float TIFF; it used not to")
		}
		pages := parseTIFF(t, file)
		if len(pages) != 1 {
			t.Fatalf("%s: %d pages, want 1", comp, len(pages))
		}
		p := pages[0]
		checks := map[uint16]uint64{256: 123, 257: 77, 258: 32, 262: 1, 277: 1, 339: 3, 296: 3}
		for tag, want := range checks {
			if got := p.one(t, tag); got != want {
				t.Errorf("%s: tag %d = %d, want %d", comp, tag, got, want)
			}
		}
		wantComp := map[string]uint64{"none": 1, "lzw": 5, "deflate": 8}[comp]
		if got := p.one(t, 259); got != wantComp {
			t.Errorf("Compression = %d, want %d", got, wantComp)
		}
		lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
		for i, v := range f.Pix {
			if f.Covered[i] {
				lo, hi = min(lo, v), max(hi, v)
			}
		}
		if p.fields[340].typ != 11 || math.Float32frombits(uint32(p.one(t, 340))) != lo || math.Float32frombits(uint32(p.one(t, 341))) != hi {
			t.Errorf("%s: SMin/SMaxSampleValue %v %v, want FLOAT %g %g", comp, p.fields[340], p.fields[341], lo, hi)
		}
		if len(p.samples) != 4*len(f.Pix) {
			t.Fatalf("%s: %d sample bytes, want %d", comp, len(p.samples), 4*len(f.Pix))
		}
		for i, v := range f.Pix {
			got := math.Float32frombits(uint32(p.samples[4*i]) | uint32(p.samples[4*i+1])<<8 | uint32(p.samples[4*i+2])<<16 | uint32(p.samples[4*i+3])<<24)
			if !f.Covered[i] {
				if !math.IsNaN(float64(got)) {
					t.Fatalf("%s: no-data pixel %d = %g, want NaN", comp, i, got)
				}
				continue
			}
			if got != v {
				t.Fatalf("%s: pixel %d = %g, want %g", comp, i, got, v)
			}
		}
	}
}

// TestTIFFResolutionWorkedExample: a 0.25 mm pitch is 10/0.25 = 40 pixels
// per centimetre, so both RATIONAL resolution tags are 40/1 with
// ResolutionUnit 3 (TIFF 6.0 Section 8). Also checks the text fields:
// DateTime "YYYY:MM:DD HH:MM:SS" (20 bytes with the NUL), Software, and
// ImageDescription holding the recipe, which recipe.Parse reads back.
func TestTIFFResolutionWorkedExample(t *testing.T) {
	f := testFrame(40, 30, 0.25)
	f.Recipe.Channels.Detector = "Détecteur µ" // non-ASCII: must be escaped in the ASCII tag
	file := exportBytes(t, "f.tiff", []*recon.Frame{f}, Options{Depth: 16})
	p := parseTIFF(t, file)[0]
	for _, tag := range []uint16{282, 283} {
		got := p.fields[tag]
		if got.typ != 5 || len(got.values) != 2 || got.values[0] != 40 || got.values[1] != 1 {
			t.Errorf("tag %d = type %d %v, want RATIONAL 40/1", tag, got.typ, got.values)
		}
	}
	if u := p.one(t, 296); u != 3 {
		t.Errorf("ResolutionUnit = %d, want 3 (centimetre)", u)
	}
	if dt := p.fields[306]; dt.text != "2026:03:14 09:26:53" || dt.count != 20 {
		t.Errorf("DateTime = %q (count %d), want \"2026:03:14 09:26:53\" (20)", dt.text, dt.count)
	}
	if sw := p.fields[305].text; sw != Software {
		t.Errorf("Software = %q", sw)
	}
	desc := p.fields[270].text
	for i := 0; i < len(desc); i++ {
		if desc[i] >= 0x80 {
			t.Fatalf("ImageDescription byte %d is 0x%02x: not 7-bit ASCII", i, desc[i])
		}
	}
	back, err := recipe.Parse([]byte(desc))
	if err != nil {
		t.Fatalf("ImageDescription does not parse as a recipe: %v", err)
	}
	if back.Channels.Detector != f.Recipe.Channels.Detector || back.Image.PitchMM != 0.25 {
		t.Errorf("recipe read back: detector %q pitch %g", back.Channels.Detector, back.Image.PitchMM)
	}
}

func TestRational(t *testing.T) {
	cases := []struct {
		v        float64
		num, den uint32
	}{
		{40, 40, 1},    // 0.25 mm pitch
		{10, 10, 1},    // 1 mm
		{25.4, 127, 5}, // 1/0.3937 mm = 25.4 px/cm
		{10 / 0.3, 33333333, 1000000},
		{0.001, 1, 1000},  // a 10 m pitch
		{5e6, 5000000, 1}, // a 2 µm pitch
	}
	for _, c := range cases {
		num, den, err := rational(c.v)
		if err != nil || num != c.num || den != c.den {
			t.Errorf("rational(%g) = %d/%d %v, want %d/%d", c.v, num, den, err, c.num, c.den)
		}
		if got := float64(num) / float64(den); math.Abs(got-c.v) > 1e-6*c.v {
			t.Errorf("rational(%g) = %g", c.v, got)
		}
	}
	for _, bad := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if _, _, err := rational(bad); err == nil {
			t.Errorf("rational(%g): no error", bad)
		}
	}
}

// TestTIFFPages writes three frames (strokes) as pages of one file: an IFD
// chain with NewSubfileType 2, PageNumber n/3 and PageName (TIFF 6.0
// Sections 8 and 12), each page's own size and resolution, and the first
// page decoded by x/image/tiff.
func TestTIFFPages(t *testing.T) {
	frames := []*recon.Frame{testFrame(50, 40, 1), testFrame(64, 33, 0.5), testFrame(20, 90, 0.2)}
	for i, f := range frames {
		f.Stroke = i
	}
	file := exportBytes(t, "strokes.tiff", frames, Options{Depth: 16, Compression: "deflate"})
	pages := parseTIFF(t, file)
	if len(pages) != 3 {
		t.Fatalf("%d pages, want 3", len(pages))
	}
	for i, p := range pages {
		f := frames[i]
		if w, h := p.one(t, 256), p.one(t, 257); w != uint64(f.Width) || h != uint64(f.Height) {
			t.Errorf("page %d: %d×%d, want %d×%d", i, w, h, f.Width, f.Height)
		}
		if st := p.one(t, 254); st != 2 {
			t.Errorf("page %d: NewSubfileType %d, want 2", i, st)
		}
		if pn := p.fields[297].values; len(pn) != 2 || pn[0] != uint64(i) || pn[1] != 3 {
			t.Errorf("page %d: PageNumber %v, want [%d 3]", i, pn, i)
		}
		x := p.fields[282].values
		if got, want := float64(x[0])/float64(x[1]), 10/f.PitchXMM; math.Abs(got-want) > 1e-9 {
			t.Errorf("page %d: XResolution %g px/cm, want %g", i, got, want)
		}
		if len(p.samples) != 2*f.Width*f.Height {
			t.Errorf("page %d: %d sample bytes", i, len(p.samples))
		}
	}
	img, err := tiff.Decode(bytes.NewReader(file))
	if err != nil || img.Bounds().Dx() != 50 {
		t.Fatalf("x/image/tiff on page 1: %v %v", img, err)
	}
}

// TestLZWAgainstXImage encodes data that exercises every code width, the
// table-full Clear and long runs, and decodes it with
// golang.org/x/image/tiff/lzw (TIFF's MSB, early-change variant).
func TestLZWAgainstXImage(t *testing.T) {
	inputs := map[string][]byte{
		"empty": {}, "one byte": {7}, "two": {7, 7},
		"run":    bytes.Repeat([]byte{0xaa}, 200000),
		"ramp":   make([]byte, 70000),
		"random": make([]byte, 300000),
	}
	for i := range inputs["ramp"] {
		inputs["ramp"][i] = byte(i / 7)
	}
	state := uint32(12345)
	for i := range inputs["random"] {
		state = state*1664525 + 1013904223 // Numerical Recipes LCG
		inputs["random"][i] = byte(state >> 24)
	}
	var e lzwEncoder
	for name, in := range inputs {
		coded := e.encode(nil, in)
		got, err := decodeLZW(coded)
		if err != nil {
			t.Fatalf("%s: decode: %v", name, err)
		}
		if !bytes.Equal(got, in) {
			t.Fatalf("%s: round trip differs (%d bytes in, %d out)", name, len(in), len(got))
		}
	}
}

func FuzzLZWRoundTrip(f *testing.F) {
	f.Add([]byte("TOBEORNOTTOBEORTOBEORNOT"))
	f.Add(bytes.Repeat([]byte{1, 2, 3}, 5000))
	f.Fuzz(func(t *testing.T, in []byte) {
		var e lzwEncoder
		got, err := decodeLZW(e.encode(nil, in))
		if err != nil || !bytes.Equal(got, in) {
			t.Fatalf("round trip of %d bytes: %v", len(in), err)
		}
	})
}
