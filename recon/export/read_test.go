package export

import (
	"bytes"
	"image"
	"math"
	"os"
	"path/filepath"
	"testing"

	xtiff "golang.org/x/image/tiff"

	"spotloom/recon"
)

func TestReadBackEveryExport(t *testing.T) {
	// Every export Write makes reads back with its pitch, origin and
	// values: float frames exactly (IEEE 754 bits, TIFF 6.0 Section 19),
	// tone-mapped ones as the samples golang.org/x/image/tiff or
	// image/png (independent decoders) see.
	f := testFrame(37, 23, 0.3)
	f.PitchYMM = 0.45
	f.Report.OriginXMM, f.Report.OriginYMM = f.OriginXMM, f.OriginYMM
	for _, c := range []struct {
		name string
		opts Options
	}{
		{"f.tiff", Options{Raw: true, NoData: math.NaN()}},
		{"f-lzw.tiff", Options{Raw: true, NoData: math.NaN(), Compression: "lzw"}},
		{"f-deflate.tiff", Options{Depth: 16, Compression: "deflate"}},
		{"f8.tiff", Options{Depth: 8}},
		{"f16.png", Options{Depth: 16}},
		{"f8.png", Options{Depth: 8}},
	} {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), c.name)
			if err := Write(path, []*recon.Frame{f}, c.opts); err != nil {
				t.Fatal(err)
			}
			l, err := Read(path)
			if err != nil {
				t.Fatal(err)
			}
			g := l.Frames[0]
			if g.Width != f.Width || g.Height != f.Height || math.Abs(g.PitchXMM-0.3) > 1e-9 || math.Abs(g.PitchYMM-0.45) > 1e-9 {
				t.Fatalf("%d × %d at %g × %g mm, wrote %d × %d at 0.3 × 0.45", g.Width, g.Height, g.PitchXMM, g.PitchYMM, f.Width, f.Height)
			}
			if !l.Origin || g.OriginXMM != f.OriginXMM || g.OriginYMM != f.OriginYMM {
				t.Errorf("origin %v %g, %g mm, wrote %g, %g", l.Origin, g.OriginXMM, g.OriginYMM, f.OriginXMM, f.OriginYMM)
			}
			if !l.Recipe || g.Recipe.Image.PitchMM != f.Recipe.Image.PitchMM {
				t.Errorf("recipe found %v, pitch %g", l.Recipe, g.Recipe.Image.PitchMM)
			}
			if l.Raw != c.opts.Raw {
				t.Errorf("raw %v, wrote raw %v", l.Raw, c.opts.Raw)
			}
			if c.opts.Raw {
				for i := range f.Pix {
					if g.Covered[i] != f.Covered[i] || (f.Covered[i] && g.Pix[i] != f.Pix[i]) {
						t.Fatalf("pixel %d: %g (%v), wrote %g (%v)", i, g.Pix[i], g.Covered[i], f.Pix[i], f.Covered[i])
					}
				}
				return
			}
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			var img image.Image
			if filepath.Ext(path) == ".tiff" {
				img, err = xtiff.Decode(bytes.NewReader(data))
			} else {
				img, _, err = image.Decode(bytes.NewReader(data))
			}
			if err != nil {
				t.Fatal(err)
			}
			for y := 0; y < f.Height; y++ {
				for x := 0; x < f.Width; x++ {
					var want float32
					switch im := img.(type) {
					case *image.Gray:
						want = float32(im.GrayAt(x, y).Y)
					case *image.Gray16:
						want = float32(im.Gray16At(x, y).Y)
					default:
						t.Fatalf("decoded as %T", img)
					}
					if got := g.Pix[y*f.Width+x]; got != want {
						t.Fatalf("(%d,%d) %g, the independent decoder %g", x, y, got, want)
					}
				}
			}
		})
	}
}

func TestReadWithoutSidecar(t *testing.T) {
	// A float TIFF alone: the pitch from its resolution tags, the origin
	// unknown and said so.
	dir := t.TempDir()
	path := filepath.Join(dir, "alone.tiff")
	if err := Write(path, []*recon.Frame{testFrame(10, 8, 0.5)}, Options{Raw: true}); err != nil {
		t.Fatal(err)
	}
	if err := os.Remove(SidecarPath(path)); err != nil {
		t.Fatal(err)
	}
	l, err := Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if l.Origin || l.Frames[0].OriginXMM != 0 || len(l.Notes) == 0 || l.Frames[0].PitchXMM != 0.5 {
		t.Errorf("origin %v at %g, notes %q, pitch %g", l.Origin, l.Frames[0].OriginXMM, l.Notes, l.Frames[0].PitchXMM)
	}
}

func TestReadSharedSidecar(t *testing.T) {
	// A TIFF and a PNG of one base name share F.recipe.json, whose "file"
	// names the later export: the earlier one still takes its origin
	// from the sidecar's list of exports.
	dir := t.TempDir()
	f := testFrame(12, 9, 0.5)
	f.Report.OriginXMM, f.Report.OriginYMM = f.OriginXMM, f.OriginYMM
	tiffPath, pngPath := filepath.Join(dir, "frame.tiff"), filepath.Join(dir, "frame.png")
	if err := Write(tiffPath, []*recon.Frame{f}, Options{Raw: true}); err != nil {
		t.Fatal(err)
	}
	if err := Write(pngPath, []*recon.Frame{f}, Options{Depth: 8}); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{tiffPath, pngPath} {
		l, err := Read(p)
		if err != nil {
			t.Fatal(err)
		}
		if !l.Origin || l.Frames[0].OriginXMM != f.OriginXMM || l.Frames[0].OriginYMM != f.OriginYMM {
			t.Errorf("%s: origin %v at %g, %g mm, wrote %g, %g", filepath.Base(p), l.Origin,
				l.Frames[0].OriginXMM, l.Frames[0].OriginYMM, f.OriginXMM, f.OriginYMM)
		}
	}
}

func TestReadRefusesBrokenFiles(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "g.tiff")
	if err := Write(good, []*recon.Frame{testFrame(10, 8, 0.5)}, Options{Raw: true}); err != nil {
		t.Fatal(err)
	}
	data, _ := os.ReadFile(good)
	for name, b := range map[string][]byte{
		"empty":     {},
		"text":      []byte("hello, world"),
		"truncated": data[:len(data)/2],
		"header":    data[:8],
	} {
		if _, err := readBytes(name, b, nil); err == nil {
			t.Errorf("%s: read without an error", name)
		}
	}
}

func FuzzRead(f *testing.F) {
	dir := f.TempDir()
	for _, c := range []struct {
		name string
		opts Options
	}{{"a.tiff", Options{Raw: true}}, {"b.tiff", Options{Depth: 8, Compression: "lzw"}}, {"c.png", Options{Depth: 16}}} {
		path := filepath.Join(dir, c.name)
		if err := Write(path, []*recon.Frame{testFrame(6, 5, 1)}, c.opts); err != nil {
			f.Fatal(err)
		}
		data, _ := os.ReadFile(path)
		f.Add(data)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		l, err := readBytes("fuzz", data, nil)
		if err != nil {
			return
		}
		for _, fr := range l.Frames {
			if len(fr.Pix) != fr.Width*fr.Height || !(fr.PitchXMM > 0) {
				t.Fatalf("frame %d × %d with %d values at %g mm", fr.Width, fr.Height, len(fr.Pix), fr.PitchXMM)
			}
		}
	})
}
