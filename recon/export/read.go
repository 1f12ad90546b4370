package export

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"golang.org/x/image/tiff/lzw"

	"spotloom/recon"
	"spotloom/recon/recipe"
)

// ReadFormatError says a file read back is not a valid TIFF or PNG.
type ReadFormatError struct {
	Path string
	Msg  string
}

func (e *ReadFormatError) Error() string { return e.Path + ": not a valid file: " + e.Msg }

// ReadUnsupportedError says a file is valid but uses something Read does
// not handle.
type ReadUnsupportedError struct {
	Path string
	Msg  string
}

func (e *ReadUnsupportedError) Error() string { return e.Path + ": not handled: " + e.Msg }

// Loaded is an exported frame read back: its pages as frames (pitch,
// origin, recipe and report from the file and its sidecar), and what
// could not be known.
type Loaded struct {
	Frames []*recon.Frame
	// Raw says the values are frame values (a 32-bit float TIFF); 8- and
	// 16-bit files hold tone-mapped values, and any burned-in scale bar
	// or caption.
	Raw bool
	// Origin says the origin came from the file or its sidecar; when it
	// did not, column 0 / row 0 are at 0 mm.
	Origin bool
	// Recipe says a recipe was found (in the file or the sidecar).
	Recipe bool
	// Notes are sentences about what was assumed.
	Notes []string
}

// maxReadPixels bounds the frames Read accepts, so a forged header cannot
// ask for gigabytes.
const maxReadPixels = recipe.MaxFramePixels

// Read reads a TIFF or PNG frame, as Write writes them, back into frames:
// 8/16-bit or 32-bit float gray TIFF (uncompressed, LZW or Deflate; either
// byte order) and 8/16-bit gray PNG. The pitch comes from the TIFF
// resolution tags or the PNG pHYs chunk, the recipe from ImageDescription
// or tEXt, and the origin and report from the PNG's report text or the
// sidecar (SidecarPath). NaN float values are no data.
func Read(path string) (*Loaded, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return readBytes(path, data, readSidecar(path))
}

// readBytes is Read on the file's bytes and its sidecar (nil when none).
func readBytes(path string, data []byte, sc *sidecarFile) (*Loaded, error) {
	var l *Loaded
	var err error
	switch {
	case bytes.HasPrefix(data, []byte(pngSignature)):
		l, err = readPNG(path, data)
	case len(data) >= 4 && (string(data[:2]) == "II" || string(data[:2]) == "MM"):
		l, err = readTIFF(path, data)
	default:
		return nil, &ReadFormatError{path, "neither a TIFF (II/MM header) nor a PNG signature at byte 0"}
	}
	if err != nil {
		return nil, err
	}
	applySidecar(path, l, sc)
	if !l.Origin {
		l.Notes = append(l.Notes, "the file gives no origin: positions are measured from the centre of column 0 / row 0")
	}
	if !l.Raw {
		l.Notes = append(l.Notes, "the file holds tone-mapped values (8 or 16 bits), not frame values: statistics are in those units")
	}
	return l, nil
}

func readSidecar(path string) *sidecarFile {
	b, err := os.ReadFile(SidecarPath(path))
	if err != nil {
		return nil
	}
	var sc sidecarFile
	if json.Unmarshal(b, &sc) != nil || sc.Format != SidecarFormat {
		return nil
	}
	// A sidecar lists the exports made from its recipe; it describes this
	// file when it names it (as the last export or among the others) or
	// when it names nothing else.
	if sc.File != "" && !sidecarNames(sc, filepath.Base(path)) {
		return nil
	}
	return &sc
}

// sidecarNames says whether a sidecar lists the file name among its exports.
func sidecarNames(sc sidecarFile, name string) bool {
	if sc.File == name {
		return true
	}
	for _, e := range sc.Exports {
		if e.File == name {
			return true
		}
	}
	return false
}

// applySidecar takes the origin, report and recipe from the sidecar where
// the file itself had none, page by page when the sizes match.
func applySidecar(path string, l *Loaded, sc *sidecarFile) {
	if sc == nil {
		return
	}
	if !l.Recipe && len(sc.Recipe) > 0 {
		if r, err := recipe.Parse(sc.Recipe); err == nil {
			for _, f := range l.Frames {
				f.Recipe = r
			}
			l.Recipe = true
		}
	}
	if len(sc.Pages) != len(l.Frames) {
		return
	}
	for i, f := range l.Frames {
		p := sc.Pages[i]
		if p.Columns != f.Width || p.Rows != f.Height {
			return
		}
	}
	for i, f := range l.Frames {
		p := sc.Pages[i]
		if !l.Origin {
			f.OriginXMM, f.OriginYMM = p.OriginXMM, p.OriginYMM
		}
		f.Stroke = p.Stroke
		// pHYs holds whole pixels per metre; the sidecar the exact pitch.
		if math.Abs(p.PitchXMM-f.PitchXMM) < 0.01*f.PitchXMM && math.Abs(p.PitchYMM-f.PitchYMM) < 0.01*f.PitchYMM {
			f.PitchXMM, f.PitchYMM = p.PitchXMM, p.PitchYMM
		}
		if f.Report.Lines == 0 {
			f.Report = sc.Report
			f.Report.Columns, f.Report.Rows, f.Report.Coverage = f.Width, f.Height, p.Coverage
			f.Report.OriginXMM, f.Report.OriginYMM = f.OriginXMM, f.OriginYMM
		}
	}
	l.Origin = true
	l.Notes = append(l.Notes, "origin and build report from "+filepath.Base(SidecarPath(path)))
}

// tiffField is one IFD entry read back: its type, count and value bytes.
type tiffField struct {
	typ   uint16
	count uint32
	data  []byte
}

// tiffTypeSize is the size in bytes of one value of each TIFF field type
// (TIFF 6.0 Section 2, "IFD Entry", Types).
func tiffTypeSize(typ uint16) int {
	switch typ {
	case 1, 2, 6, 7: // BYTE, ASCII, SBYTE, UNDEFINED
		return 1
	case typeSHORT, 8: // SHORT, SSHORT
		return 2
	case typeLONG, 9, typeFLOAT: // LONG, SLONG, FLOAT
		return 4
	case typeRATIONAL, 10, 12: // RATIONAL, SRATIONAL, DOUBLE
		return 8
	}
	return 0
}

// uints returns a SHORT or LONG field's values.
func (f tiffField) uints(bo binary.ByteOrder) []uint32 {
	var out []uint32
	switch f.typ {
	case typeSHORT:
		for i := 0; i+2 <= len(f.data); i += 2 {
			out = append(out, uint32(bo.Uint16(f.data[i:])))
		}
	case typeLONG:
		for i := 0; i+4 <= len(f.data); i += 4 {
			out = append(out, bo.Uint32(f.data[i:]))
		}
	}
	return out
}

func readTIFF(path string, data []byte) (*Loaded, error) {
	var bo binary.ByteOrder = binary.LittleEndian
	if string(data[:2]) == "MM" {
		bo = binary.BigEndian
	}
	if len(data) < tiffHeaderSize || bo.Uint16(data[2:]) != tiffMagic {
		return nil, &ReadFormatError{path, "the TIFF header lacks the number 42 at byte 2 (TIFF 6.0 Section 2)"}
	}
	l := &Loaded{Raw: true}
	seen := map[uint32]bool{}
	for off := bo.Uint32(data[4:]); off != 0; {
		if seen[off] {
			return nil, &ReadFormatError{path, fmt.Sprintf("the IFD at byte %d is reached twice", off)}
		}
		seen[off] = true
		fields, next, err := readIFD(path, data, bo, off)
		if err != nil {
			return nil, err
		}
		f, raw, desc, err := tiffPageFrame(path, data, bo, fields, len(l.Frames)+1)
		if err != nil {
			return nil, err
		}
		l.Raw = l.Raw && raw
		if desc != "" {
			if r, err := recipe.Parse([]byte(desc)); err == nil {
				f.Recipe = r
				l.Recipe = true
			}
		}
		l.Frames = append(l.Frames, f)
		off = next
	}
	if len(l.Frames) == 0 {
		return nil, &ReadFormatError{path, "the TIFF has no image (first IFD offset 0)"}
	}
	return l, nil
}

func readIFD(path string, data []byte, bo binary.ByteOrder, off uint32) (map[uint16]tiffField, uint32, error) {
	if int64(off)+2 > int64(len(data)) {
		return nil, 0, &ReadFormatError{path, fmt.Sprintf("the IFD offset %d is past the end of the %d-byte file", off, len(data))}
	}
	n := int(bo.Uint16(data[off:]))
	end := int64(off) + 2 + int64(n)*tiffEntrySize + 4
	if end > int64(len(data)) {
		return nil, 0, &ReadFormatError{path, fmt.Sprintf("the IFD at byte %d with %d entries runs past the end of the file", off, n)}
	}
	fields := map[uint16]tiffField{}
	for e := 0; e < n; e++ {
		b := data[int(off)+2+e*tiffEntrySize:]
		tag, typ, count := bo.Uint16(b), bo.Uint16(b[2:]), bo.Uint32(b[4:])
		size := int64(tiffTypeSize(typ)) * int64(count)
		if tiffTypeSize(typ) == 0 {
			continue // unknown types are skipped (TIFF 6.0 Section 2)
		}
		var val []byte
		if size <= 4 {
			val = b[8 : 8+size]
		} else {
			at := int64(bo.Uint32(b[8:]))
			if at+size > int64(len(data)) {
				return nil, 0, &ReadFormatError{path, fmt.Sprintf("tag %d's %d bytes at byte %d run past the end of the file", tag, size, at)}
			}
			val = data[at : at+size]
		}
		fields[tag] = tiffField{typ, count, val}
	}
	return fields, bo.Uint32(data[end-4:]), nil
}

// tiffPageFrame decodes one IFD's image into a frame.
func tiffPageFrame(path string, data []byte, bo binary.ByteOrder, fields map[uint16]tiffField, page int) (*recon.Frame, bool, string, error) {
	pr := tiffPageReader{path: path, where: fmt.Sprintf("page %d", page), data: data, bo: bo, fields: fields}
	t, err := pr.tags()
	if err != nil {
		return nil, false, "", err
	}
	if err := pr.supported(t); err != nil {
		return nil, false, "", err
	}
	pixels, err := pr.strips(t)
	if err != nil {
		return nil, false, "", err
	}
	f := &recon.Frame{Width: int(t.width), Height: int(t.height),
		Pix: make([]float32, int(t.width)*int(t.height)), Covered: make([]bool, int(t.width)*int(t.height)),
		Recipe: recipe.Default()}
	decodeTIFFPixels(f, pixels, t, bo)
	px, errX := tiffPitch(fields[tagXResolution], bo, fields, tagXResolution)
	py, errY := tiffPitch(fields[tagYResolution], bo, fields, tagYResolution)
	if errX != nil || errY != nil {
		return nil, false, "", &ReadUnsupportedError{path, pr.where + ": " + errors.Join(errX, errY).Error() + ": the pitch is unknown"}
	}
	f.PitchXMM, f.PitchYMM = px, py
	desc := strings.TrimRight(string(fields[tagImageDescription].data), "\x00")
	return f, t.bits == 32, desc, nil
}

// tiffPageReader reads one page of a TIFF file: where names it in errors.
type tiffPageReader struct {
	path, where string
	data        []byte
	bo          binary.ByteOrder
	fields      map[uint16]tiffField
}

// tiffPageTags are the baseline tags of a page that decide how it reads.
type tiffPageTags struct {
	width, height, bits, comp, photo, spp, format, predictor, planar, rowsPerStrip uint32
}

func (pr tiffPageReader) tags() (tiffPageTags, error) {
	one := func(tag uint16, def uint32) (uint32, error) {
		f, ok := pr.fields[tag]
		if !ok {
			return def, nil
		}
		v := f.uints(pr.bo)
		if len(v) == 0 {
			return 0, &ReadFormatError{pr.path, fmt.Sprintf("%s: tag %d has no SHORT or LONG value", pr.where, tag)}
		}
		return v[0], nil
	}
	var t tiffPageTags
	var err error
	for _, g := range []struct {
		dst *uint32
		tag uint16
		def uint32
	}{
		{&t.width, tagImageWidth, 0}, {&t.height, tagImageLength, 0}, {&t.bits, tagBitsPerSample, 1},
		{&t.comp, tagCompression, compressionNone}, {&t.photo, tagPhotometricInterpretation, 99},
		{&t.spp, tagSamplesPerPixel, 1}, {&t.format, tagSampleFormat, sampleFormatUInt},
		{&t.predictor, 317, 1}, {&t.planar, tagPlanarConfiguration, planarChunky}, {&t.rowsPerStrip, tagRowsPerStrip, math.MaxUint32},
	} {
		if *g.dst, err = one(g.tag, g.def); err != nil {
			return t, err
		}
	}
	return t, nil
}

// supported refuses a page this reader cannot read.
func (pr tiffPageReader) supported(t tiffPageTags) error {
	unsupported := func(msg string) error { return &ReadUnsupportedError{pr.path, pr.where + ": " + msg} }
	switch {
	case t.width == 0 || t.height == 0:
		return &ReadFormatError{pr.path, fmt.Sprintf("%s: the image is %d × %d pixels", pr.where, t.width, t.height)}
	case uint64(t.width)*uint64(t.height) > maxReadPixels:
		return unsupported(fmt.Sprintf("%d × %d pixels is more than this reader takes", t.width, t.height))
	case t.spp != 1 || (t.photo != photometricBlackIsZero && t.photo != 0):
		return unsupported(fmt.Sprintf("%d samples per pixel, photometric %d: only one-sample gray frames are read", t.spp, t.photo))
	case t.predictor != 1:
		return unsupported(fmt.Sprintf("predictor %d", t.predictor))
	case !(t.bits == 8 && t.format == sampleFormatUInt) && !(t.bits == 16 && t.format == sampleFormatUInt) && !(t.bits == 32 && t.format == sampleFormatIEEEFP):
		return unsupported(fmt.Sprintf("%d-bit samples of format %d: 8/16-bit unsigned or 32-bit float (SampleFormat 3) are read", t.bits, t.format))
	case t.comp != compressionNone && t.comp != compressionLZW && t.comp != compressionDeflate && t.comp != 32946:
		return unsupported(fmt.Sprintf("compression %d: none, LZW or Deflate are read", t.comp))
	}
	return nil
}

// strips decodes the page's strips into its pixel bytes.
func (pr tiffPageReader) strips(t tiffPageTags) ([]byte, error) {
	offsets, counts := pr.fields[tagStripOffsets].uints(pr.bo), pr.fields[tagStripByteCounts].uints(pr.bo)
	if t.rowsPerStrip == 0 {
		return nil, &ReadFormatError{pr.path, fmt.Sprintf("%s: RowsPerStrip is 0; a strip holds at least one row (TIFF 6.0, Section 3)", pr.where)}
	}
	rowsPerStrip := min(t.rowsPerStrip, t.height)
	strips := int((uint64(t.height) + uint64(rowsPerStrip) - 1) / uint64(rowsPerStrip))
	if len(offsets) != strips || len(counts) != strips {
		return nil, &ReadFormatError{pr.path, fmt.Sprintf("%s: %d strip offsets and %d byte counts for %d strips of %d rows", pr.where, len(offsets), len(counts), strips, rowsPerStrip)}
	}
	bytesPerPixel := int(t.bits / 8)
	var pixels []byte // grown as strips decode, so a forged size allocates nothing
	for s := 0; s < strips; s++ {
		if int64(offsets[s])+int64(counts[s]) > int64(len(pr.data)) {
			return nil, &ReadFormatError{pr.path, fmt.Sprintf("%s: strip %d (%d bytes at byte %d) runs past the end of the file", pr.where, s, counts[s], offsets[s])}
		}
		rows := min(rowsPerStrip, t.height-uint32(s)*rowsPerStrip)
		want := int(rows) * int(t.width) * bytesPerPixel
		raw := pr.data[offsets[s] : offsets[s]+counts[s]]
		var r io.Reader = bytes.NewReader(raw)
		switch t.comp {
		case compressionLZW:
			r = lzw.NewReader(r, lzw.MSB, 8)
		case compressionDeflate, 32946:
			var err error
			if r, err = zlib.NewReader(r); err != nil {
				return nil, &ReadFormatError{pr.path, fmt.Sprintf("%s: strip %d: %v", pr.where, s, err)}
			}
		}
		got, err := io.ReadAll(io.LimitReader(r, int64(want)))
		if err != nil || len(got) != want {
			return nil, &ReadFormatError{pr.path, fmt.Sprintf("%s: strip %d holds %d of its %d bytes (%v)", pr.where, s, len(got), want, err)}
		}
		pixels = append(pixels, got...)
	}
	return pixels, nil
}

// decodeTIFFPixels fills f's pixels and coverage from the page's bytes:
// NaN and infinite floats are no data; WhiteIsZero integers are turned
// over.
func decodeTIFFPixels(f *recon.Frame, pixels []byte, t tiffPageTags, bo binary.ByteOrder) {
	for i := range f.Pix {
		switch t.bits {
		case 8:
			f.Pix[i] = float32(pixels[i])
		case 16:
			f.Pix[i] = float32(bo.Uint16(pixels[2*i:]))
		case 32:
			f.Pix[i] = math.Float32frombits(bo.Uint32(pixels[4*i:]))
		}
		v := float64(f.Pix[i])
		f.Covered[i] = !math.IsNaN(v) && !math.IsInf(v, 0)
	}
	if t.photo == 0 && t.bits != 32 { // WhiteIsZero
		top := float32(int(1)<<t.bits - 1)
		for i := range f.Pix {
			f.Pix[i] = top - f.Pix[i]
		}
	}
}

// tiffPitch is the pitch in mm from a resolution tag and the
// ResolutionUnit (TIFF 6.0 Section 8: 2 = inch, the default, 3 = cm).
func tiffPitch(res tiffField, bo binary.ByteOrder, fields map[uint16]tiffField, tag uint16) (float64, error) {
	if res.typ != typeRATIONAL || len(res.data) < 8 {
		return 0, fmt.Errorf("no resolution tag %d", tag)
	}
	num, den := float64(bo.Uint32(res.data)), float64(bo.Uint32(res.data[4:]))
	if !(num > 0 && den > 0) {
		return 0, fmt.Errorf("resolution tag %d is %g/%g", tag, num, den)
	}
	unit := uint32(2)
	if u := fields[tagResolutionUnit].uints(bo); len(u) > 0 {
		unit = u[0]
	}
	perUnit := num / den
	switch unit {
	case resolutionUnitCentimeter:
		return 10 / perUnit, nil
	case 2:
		return 25.4 / perUnit, nil
	}
	return 0, fmt.Errorf("resolution unit %d has no length", unit)
}

func readPNG(path string, data []byte) (*Loaded, error) {
	img, err := png.Decode(bytes.NewReader(data))
	if err != nil {
		return nil, &ReadFormatError{path, err.Error()}
	}
	b := img.Bounds()
	if int64(b.Dx())*int64(b.Dy()) > maxReadPixels {
		return nil, &ReadUnsupportedError{path, fmt.Sprintf("%d × %d pixels is more than this reader takes", b.Dx(), b.Dy())}
	}
	f := &recon.Frame{Width: b.Dx(), Height: b.Dy(), Pix: make([]float32, b.Dx()*b.Dy()), Covered: make([]bool, b.Dx()*b.Dy()),
		Recipe: recipe.Default()}
	scale := float32(1)
	if _, ok := img.(*image.Gray); ok {
		scale = 1.0 / 257 // keep 8-bit files in 0 … 255
	}
	for y := 0; y < b.Dy(); y++ {
		for x := 0; x < b.Dx(); x++ {
			g := color.Gray16Model.Convert(img.At(b.Min.X+x, b.Min.Y+y)).(color.Gray16)
			f.Pix[y*f.Width+x] = float32(g.Y) * scale
			f.Covered[y*f.Width+x] = true
		}
	}
	l := &Loaded{Frames: []*recon.Frame{f}}
	// Chunks after the signature (PNG §5.3): length, type, data, CRC;
	// image/png has checked the CRCs already.
	for off := len(pngSignature); off+12 <= len(data); {
		n := int(binary.BigEndian.Uint32(data[off:]))
		if n < 0 || off+12+n > len(data) {
			break
		}
		typ, body := string(data[off+4:off+8]), data[off+8:off+8+n]
		off += 12 + n
		switch typ {
		case pngChunkPHYs:
			if len(body) == 9 && body[8] == pngUnitMetre {
				if x, y := binary.BigEndian.Uint32(body), binary.BigEndian.Uint32(body[4:]); x > 0 && y > 0 {
					f.PitchXMM, f.PitchYMM = 1000/float64(x), 1000/float64(y)
				}
			}
		case pngChunkTEXt:
			key, text, ok := bytes.Cut(body, []byte{0})
			if !ok {
				continue
			}
			switch string(key) {
			case keywordRecipe:
				if r, err := recipe.Parse(text); err == nil {
					f.Recipe = r
					l.Recipe = true
				}
			case keywordReport:
				var rep recon.Report
				var keys map[string]json.RawMessage
				if json.Unmarshal(text, &rep) == nil && json.Unmarshal(text, &keys) == nil {
					f.Report = rep
					_, hasX := keys["origin_x_mm"]
					_, hasY := keys["origin_y_mm"]
					if hasX && hasY {
						f.OriginXMM, f.OriginYMM = rep.OriginXMM, rep.OriginYMM
						l.Origin = true
					}
				}
			}
		}
	}
	if !(f.PitchXMM > 0) {
		return nil, &ReadUnsupportedError{path, "no pHYs chunk in pixels per metre (PNG §11.3.5.3): the pitch is unknown"}
	}
	return l, nil
}
