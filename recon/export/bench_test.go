package export

import (
	"image/png"
	"io"
	"testing"
	"time"

	"spotloom/recon"
)

// benchPages makes one 2000×1500 frame (a 500 × 375 mm field at 0.25 mm)
// ready for the TIFF encoder at the given depth.
func benchPages(depth int) ([]tiffPage, *recon.Frame) {
	f := testFrame(2000, 1500, 0.25)
	p := tiffPage{width: f.Width, height: f.Height, bitsPerSample: depth, sampleFormat: sampleFormatUInt,
		pixelsPerCMX: 40, pixelsPerCMY: 40, description: string(f.Recipe.JSON())}
	if depth == 32 {
		p.sampleFormat = sampleFormatIEEEFP
		p.samples = floatSamples(f, 0)
	} else {
		p.samples = tiffSamples(toneImage(f, recon.AutoTone(f), depth, 0))
	}
	return []tiffPage{p}, f
}

func benchmarkTIFF(b *testing.B, depth int, compression uint16) {
	pages, _ := benchPages(depth)
	b.SetBytes(int64(len(pages[0].samples)))
	for b.Loop() {
		if err := encodeTIFF(io.Discard, pages, tiffFile{compression: compression, software: Software, created: time.Now()}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkTIFF16None(b *testing.B)    { benchmarkTIFF(b, 16, compressionNone) }
func BenchmarkTIFF16LZW(b *testing.B)     { benchmarkTIFF(b, 16, compressionLZW) }
func BenchmarkTIFF16Deflate(b *testing.B) { benchmarkTIFF(b, 16, compressionDeflate) }
func BenchmarkTIFF32None(b *testing.B)    { benchmarkTIFF(b, 32, compressionNone) }
func BenchmarkTIFF32Deflate(b *testing.B) { benchmarkTIFF(b, 32, compressionDeflate) }

func benchmarkPNG(b *testing.B, depth int) {
	_, f := benchPages(depth)
	img := toneImage(f, recon.AutoTone(f), depth, 0)
	b.SetBytes(int64(f.Width * f.Height * depth / 8))
	for b.Loop() {
		if err := encodePNG(io.Discard, img, 4000, 4000, []pngText{{keywordRecipe, string(f.Recipe.JSON())}}, png.DefaultCompression); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkPNG8(b *testing.B)  { benchmarkPNG(b, 8) }
func BenchmarkPNG16(b *testing.B) { benchmarkPNG(b, 16) }

// BenchmarkWriteTIFF16 is the whole export of one frame: tone, encode,
// sidecar, temporary file, sync and rename.
func BenchmarkWriteTIFF16(b *testing.B) {
	f := testFrame(2000, 1500, 0.25)
	path := b.TempDir() + "/bench.tiff"
	b.SetBytes(int64(2 * f.Width * f.Height))
	for b.Loop() {
		if err := Write(path, []*recon.Frame{f}, Options{Depth: 16, Force: true}); err != nil {
			b.Fatal(err)
		}
	}
}
