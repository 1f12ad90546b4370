package export

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"hash/crc32"
	"image/png"
	"math"
	"testing"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

type pngChunk struct {
	typ  string
	data []byte
}

// readChunks splits a PNG into chunks by hand (PNG §5.2 signature, §5.3
// layout) and checks every CRC with hash/crc32 (§5.5).
func readChunks(t *testing.T, file []byte) []pngChunk {
	t.Helper()
	if !bytes.HasPrefix(file, []byte("\x89PNG\r\n\x1a\n")) {
		t.Fatalf("no PNG signature")
	}
	var chunks []pngChunk
	for p := file[8:]; len(p) > 0; {
		if len(p) < 12 {
			t.Fatalf("truncated chunk: %d bytes left", len(p))
		}
		n := binary.BigEndian.Uint32(p)
		typ, data := string(p[4:8]), p[8:8+n]
		if crc := binary.BigEndian.Uint32(p[8+n:]); crc != crc32.ChecksumIEEE(p[4:8+n]) {
			t.Errorf("chunk %s: CRC %08x, want %08x", typ, crc, crc32.ChecksumIEEE(p[4:8+n]))
		}
		chunks = append(chunks, pngChunk{typ, data})
		p = p[12+n:]
	}
	return chunks
}

// TestPNGDecodedByImagePNG decodes 8- and 16-bit exports with the
// standard library's image/png and compares every pixel, then checks the
// pHYs chunk (PNG §11.3.5.3): a 1 mm pitch is 1000 pixels per metre, a
// 0.25 mm pitch 4000, unit 1 (metre), placed before the first IDAT.
func TestPNGDecodedByImagePNG(t *testing.T) {
	for _, pitch := range []float64{1, 0.25} {
		for _, depth := range []int{8, 16} {
			f := testFrame(97, 61, pitch)
			tone := recon.Tone{Window: 2, Level: 0.4, Gamma: 0.7, Invert: true}
			file := exportBytes(t, "f.png", []*recon.Frame{f}, Options{Depth: depth, Tone: tone, NoData: 1})
			img, err := png.Decode(bytes.NewReader(file))
			if err != nil {
				t.Fatalf("image/png: %v", err)
			}
			full := float64(uint(1)<<depth - 1)
			for i, v := range f.Pix {
				want := uint32(full)
				if f.Covered[i] {
					want = uint32(math.Round(tone.Map(v) * full))
				}
				col, row := i%f.Width, i/f.Width
				got := grayAt(t, img, col, row)
				if got != want {
					t.Fatalf("depth %d: pixel (%d,%d) = %d, want %d", depth, col, row, got, want)
				}
			}
			chunks := readChunks(t, file)
			if chunks[0].typ != "IHDR" || chunks[len(chunks)-1].typ != "IEND" {
				t.Fatalf("chunks %v", chunks)
			}
			if bitDepth := chunks[0].data[8]; int(bitDepth) != depth {
				t.Errorf("IHDR bit depth %d, want %d", bitDepth, depth)
			}
			physAt, idatAt := -1, -1
			for i, c := range chunks {
				if c.typ == "pHYs" && physAt < 0 {
					physAt = i
				}
				if c.typ == "IDAT" && idatAt < 0 {
					idatAt = i
				}
			}
			if physAt < 0 || physAt > idatAt {
				t.Fatalf("pHYs at chunk %d, first IDAT at %d: pHYs must come before IDAT", physAt, idatAt)
			}
			phys := chunks[physAt].data
			wantPPM := uint32(math.Round(1000 / pitch))
			if len(phys) != 9 || binary.BigEndian.Uint32(phys) != wantPPM || binary.BigEndian.Uint32(phys[4:]) != wantPPM || phys[8] != 1 {
				t.Errorf("pitch %g: pHYs % x, want %d px/m both axes, unit 1", pitch, phys, wantPPM)
			}
		}
	}
}

// TestPNGText: tEXt chunks (PNG §11.3.4.3) hold keyword NUL Latin-1 text;
// the recipe chunk parses back with recipe.Parse, the report chunk as JSON.
func TestPNGText(t *testing.T) {
	f := testFrame(80, 60, 0.5)
	f.Recipe.Channels.Index = "Index Ω" // outside Latin-1: escaped in the JSON
	f.Report.Warnings = []string{"12 rows have gaps"}
	file := exportBytes(t, "f.png", []*recon.Frame{f}, Options{Caption: "Parcel µ-test"})
	texts := map[string]string{}
	for _, c := range readChunks(t, file) {
		if c.typ != "tEXt" {
			continue
		}
		k, v, ok := bytes.Cut(c.data, []byte{0})
		if !ok {
			t.Fatalf("tEXt without NUL separator")
		}
		if err := checkKeyword(string(k)); err != nil {
			t.Error(err)
		}
		texts[string(k)] = string(v) // Latin-1 bytes; the JSON ones are ASCII
	}
	if texts["Software"] != Software {
		t.Errorf("Software = %q", texts["Software"])
	}
	if texts["Creation Time"] != "Sat, 14 Mar 2026 09:26:53 +0000" {
		t.Errorf("Creation Time = %q (RFC 1123 form expected)", texts["Creation Time"])
	}
	r, err := recipe.Parse([]byte(texts["spotloom-recipe"]))
	if err != nil {
		t.Fatalf("spotloom-recipe: %v", err)
	}
	if r.Channels.Index != "Index Ω" || r.Image.PitchMM != 0.5 {
		t.Errorf("recipe back: index %q pitch %g", r.Channels.Index, r.Image.PitchMM)
	}
	var rep recon.Report
	if err := json.Unmarshal([]byte(texts["spotloom-report"]), &rep); err != nil || len(rep.Warnings) != 1 {
		t.Errorf("spotloom-report: %v %+v", err, rep)
	}
	if want := "Frame of 80 x 60 pixels at 0.5 x 0.5 mm pitch: 40 x 30 mm. Parcel \xb5-test"; texts["Description"] != want {
		t.Errorf("Description = %q, want %q", texts["Description"], want)
	}
}

func TestKeywordRules(t *testing.T) {
	good := []string{"Software", "Creation Time", "spotloom-recipe", "x"}
	bad := []string{"", " lead", "trail ", "two  spaces", string(make([]byte, 80)), "tab\there"}
	for _, k := range good {
		if err := checkKeyword(k); err != nil {
			t.Errorf("%q: %v", k, err)
		}
	}
	for _, k := range bad {
		if err := checkKeyword(k); err == nil {
			t.Errorf("%q accepted", k)
		}
	}
}
