package export

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"fmt"
	"image"
	"io"
	"math"
	"testing"

	"golang.org/x/image/tiff/lzw"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

// testFrame makes a w×h frame with a smooth ramp plus a few negative and
// large values, no data in a corner block, and the default recipe.
func testFrame(w, h int, pitchMM float64) *recon.Frame {
	f := &recon.Frame{
		Width: w, Height: h,
		Pix: make([]float32, w*h), Covered: make([]bool, w*h),
		PitchXMM: pitchMM, PitchYMM: pitchMM,
		OriginXMM: 12.5, OriginYMM: 80,
		Recipe: recipe.Default(),
		Report: recon.Report{Lines: h, Columns: w, Rows: h, PitchMM: pitchMM, Warnings: []string{}},
	}
	f.Recipe.Image.PitchMM = pitchMM
	for row := 0; row < h; row++ {
		for col := 0; col < w; col++ {
			i := row*w + col
			f.Pix[i] = float32(col)*0.01 - float32(row)*0.003 + float32(math.Sin(float64(i)))*0.2
			f.Covered[i] = !(row < h/5 && col < w/5)
		}
	}
	return f
}

// ifdField is one field as read back by the test's own parser.
type ifdField struct {
	typ    uint16
	count  uint32
	values []uint64 // SHORT, LONG, FLOAT bits; RATIONAL as numerator, denominator pairs
	text   string   // ASCII without the final NUL
}

// parsedPage is one IFD and its decoded strip bytes.
type parsedPage struct {
	fields  map[uint16]ifdField
	samples []byte // uncompressed, file byte order
}

// parseTIFF reads a little-endian TIFF by hand, following TIFF 6.0
// Section 2 (header, IFD entries, value offsets) and Section 8 (strips),
// independently of the writer: it decompresses LZW with
// golang.org/x/image/tiff/lzw and Deflate with compress/zlib.
func parseTIFF(t *testing.T, file []byte) []parsedPage {
	t.Helper()
	le := binary.LittleEndian
	if len(file) < 8 || string(file[:2]) != "II" || le.Uint16(file[2:]) != 42 {
		t.Fatalf("not a little-endian TIFF header: % x", file[:min(8, len(file))])
	}
	var pages []parsedPage
	seen := map[uint32]bool{}
	for off := le.Uint32(file[4:]); off != 0; {
		if seen[off] || int(off)+2 > len(file) {
			t.Fatalf("IFD offset %d loops or is past the end (%d bytes)", off, len(file))
		}
		if off%2 != 0 {
			t.Errorf("IFD at odd offset %d (Section 2: word boundary)", off)
		}
		seen[off] = true
		n := int(le.Uint16(file[off:]))
		p := parsedPage{fields: map[uint16]ifdField{}}
		prevTag := -1
		for e := 0; e < n; e++ {
			b := file[int(off)+2+12*e:]
			tag, typ, count := le.Uint16(b), le.Uint16(b[2:]), le.Uint32(b[4:])
			if int(tag) <= prevTag {
				t.Errorf("tag %d after %d: Section 2 requires ascending order", tag, prevTag)
			}
			prevTag = int(tag)
			size := map[uint16]uint32{2: 1, 3: 2, 4: 4, 5: 8, 11: 4}[typ]
			if size == 0 {
				t.Fatalf("tag %d has type %d", tag, typ)
			}
			data := b[8:12]
			if total := size * count; total > 4 {
				vo := le.Uint32(b[8:])
				if vo%2 != 0 {
					t.Errorf("tag %d values at odd offset %d", tag, vo)
				}
				data = file[vo : vo+total]
			}
			f := ifdField{typ: typ, count: count}
			switch typ {
			case 2:
				if data[count-1] != 0 {
					t.Errorf("ASCII tag %d does not end in NUL", tag)
				}
				f.text = string(data[:count-1])
			case 3:
				for i := uint32(0); i < count; i++ {
					f.values = append(f.values, uint64(le.Uint16(data[2*i:])))
				}
			case 4, 11: // LONG; FLOAT kept as its bits
				for i := uint32(0); i < count; i++ {
					f.values = append(f.values, uint64(le.Uint32(data[4*i:])))
				}
			case 5:
				for i := uint32(0); i < count; i++ {
					f.values = append(f.values, uint64(le.Uint32(data[8*i:])), uint64(le.Uint32(data[8*i+4:])))
				}
			}
			p.fields[tag] = f
		}
		offsets, counts := p.fields[273].values, p.fields[279].values
		if len(offsets) == 0 || len(offsets) != len(counts) {
			t.Fatalf("StripOffsets %d values, StripByteCounts %d", len(offsets), len(counts))
		}
		for s := range offsets {
			strip := file[offsets[s] : offsets[s]+counts[s]]
			var r io.Reader
			switch c := p.fields[259].values[0]; c {
			case 1:
				r = bytes.NewReader(strip)
			case 5:
				r = lzw.NewReader(bytes.NewReader(strip), lzw.MSB, 8)
			case 8:
				zr, err := zlib.NewReader(bytes.NewReader(strip))
				if err != nil {
					t.Fatalf("strip %d: %v", s, err)
				}
				r = zr
			default:
				t.Fatalf("compression %d", c)
			}
			raw, err := io.ReadAll(r)
			if err != nil {
				t.Fatalf("strip %d: %v", s, err)
			}
			p.samples = append(p.samples, raw...)
		}
		pages = append(pages, p)
		next := int(off) + 2 + 12*n
		off = le.Uint32(file[next:])
	}
	return pages
}

func (p parsedPage) one(t *testing.T, tag uint16) uint64 {
	t.Helper()
	f, ok := p.fields[tag]
	if !ok || len(f.values) == 0 {
		t.Fatalf("tag %d missing", tag)
	}
	return f.values[0]
}

// failingWriter accepts limit bytes, then fails as a full disk would.
type failingWriter struct {
	w     io.Writer
	limit int
}

func (f *failingWriter) Write(p []byte) (int, error) {
	if len(p) > f.limit {
		n, _ := f.w.Write(p[:f.limit])
		f.limit = 0
		return n, fmt.Errorf("no space left on device (simulated)")
	}
	f.limit -= len(p)
	return f.w.Write(p)
}

func decodeLZW(coded []byte) ([]byte, error) {
	r := lzw.NewReader(bytes.NewReader(coded), lzw.MSB, 8)
	defer r.Close()
	return io.ReadAll(r)
}

// grayAt is the sample at (col,row) of a decoded 8- or 16-bit gray image.
func grayAt(t *testing.T, img image.Image, col, row int) uint32 {
	t.Helper()
	switch m := img.(type) {
	case *image.Gray:
		return uint32(m.GrayAt(col, row).Y)
	case *image.Gray16:
		return uint32(m.Gray16At(col, row).Y)
	}
	t.Fatalf("decoded as %T, want 8- or 16-bit gray", img)
	return 0
}
