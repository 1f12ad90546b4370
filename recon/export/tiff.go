package export

import (
	"bufio"
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"time"
)

// tiffPage is one image of a TIFF file with its samples already laid out
// as the file stores them: rows top to bottom, little-endian.
type tiffPage struct {
	width, height int
	bitsPerSample int    // 8, 16 or 32
	sampleFormat  uint16 // sampleFormatUInt or sampleFormatIEEEFP
	samples       []byte // width*height*bitsPerSample/8 bytes
	pixelsPerCMX  float64
	pixelsPerCMY  float64
	description   string      // ASCII (the recipe JSON)
	valueRange    *[2]float32 // float pages: least and greatest value with data, or nil
	pageName      string      // ASCII, may be empty
}

// tiffFile holds what is common to every page.
type tiffFile struct {
	compression uint16 // compressionNone, compressionLZW or compressionDeflate
	software    string
	created     time.Time
}

// tiffStripTarget is the uncompressed size a strip aims for. TIFF 6.0
// Section 3 suggests about 8 KiB so that old readers can buffer a strip;
// 64 KiB gives Deflate and LZW room to find repeats and keeps the strip
// tables short, and is still small for any reader of this century.
const tiffStripTarget = 64 << 10

// ifdEntry is one field of an IFD before it is placed in the file.
type ifdEntry struct {
	tag   uint16
	typ   uint16
	count uint32
	data  []byte // the values, little-endian; placed in the entry when ≤ 4 bytes
}

// pageLayout is a page whose strips are coded and whose offsets are fixed.
type pageLayout struct {
	strips    [][]byte
	ifdOffset uint32
	entries   []ifdEntry
	extra     uint32 // offset of the values that do not fit in their entry
}

// encodeTIFF writes pages as one little-endian TIFF 6.0 file, one IFD per
// page, chained in order. Everything is laid out before the first byte is
// written, so the file goes out in one sequential pass.
func encodeTIFF(w io.Writer, pages []tiffPage, file tiffFile) error {
	if len(pages) == 0 {
		return fmt.Errorf("tiff: no pages to write")
	}
	layouts := make([]pageLayout, len(pages))
	offset := uint64(tiffHeaderSize)
	var lzw *lzwEncoder
	var deflate *zlib.Writer
	for i := range pages {
		p := &pages[i]
		strips, rowsPerStrip, err := codeStrips(p, file.compression, &lzw, &deflate)
		if err != nil {
			return fmt.Errorf("tiff page %d: %w", i+1, err)
		}
		stripOffsets := make([]uint32, len(strips))
		stripCounts := make([]uint32, len(strips))
		for s, strip := range strips {
			stripOffsets[s] = uint32(offset)
			stripCounts[s] = uint32(len(strip))
			offset += uint64(len(strip))
		}
		offset += offset & 1 // the IFD starts on a word boundary (Section 2)
		entries, err := pageEntries(p, file, len(pages), i, rowsPerStrip, stripOffsets, stripCounts)
		if err != nil {
			return fmt.Errorf("tiff page %d: %w", i+1, err)
		}
		layouts[i] = pageLayout{strips: strips, ifdOffset: uint32(offset), entries: entries}
		offset += 2 + tiffEntrySize*uint64(len(entries)) + 4
		layouts[i].extra = uint32(offset)
		for _, e := range entries {
			if len(e.data) > 4 {
				offset += uint64(len(e.data)) + uint64(len(e.data)&1)
			}
		}
		if offset > tiffMaxFileSize {
			return fmt.Errorf("tiff: the file would be %d bytes or more; a TIFF addresses at most 4 GiB (offsets are 32-bit): use a coarser pitch, compression or fewer pages", offset)
		}
	}

	bw := bufio.NewWriterSize(w, 256<<10)
	le := binary.LittleEndian
	var header [tiffHeaderSize]byte
	copy(header[:], tiffByteOrderLittle)
	le.PutUint16(header[2:], tiffMagic)
	le.PutUint32(header[4:], layouts[0].ifdOffset)
	bw.Write(header[:])
	pos := uint64(tiffHeaderSize)
	for i, l := range layouts {
		for _, strip := range l.strips {
			bw.Write(strip)
			pos += uint64(len(strip))
		}
		for ; pos < uint64(l.ifdOffset); pos++ {
			bw.WriteByte(0) // word-boundary padding before the IFD
		}
		var count [2]byte
		le.PutUint16(count[:], uint16(len(l.entries)))
		bw.Write(count[:])
		extraAt := l.extra
		var extra []byte
		for _, e := range l.entries {
			var entry [tiffEntrySize]byte
			le.PutUint16(entry[0:], e.tag)
			le.PutUint16(entry[2:], e.typ)
			le.PutUint32(entry[4:], e.count)
			if len(e.data) <= 4 {
				copy(entry[8:], e.data) // left-justified (Section 2)
			} else {
				le.PutUint32(entry[8:], extraAt)
				extra = append(extra, e.data...)
				if len(e.data)&1 == 1 {
					extra = append(extra, 0)
				}
				extraAt += uint32(len(e.data) + len(e.data)&1)
			}
			bw.Write(entry[:])
		}
		var next [4]byte
		if i+1 < len(layouts) {
			le.PutUint32(next[:], layouts[i+1].ifdOffset)
		}
		bw.Write(next[:])
		bw.Write(extra)
		pos = uint64(l.extra) + uint64(len(extra))
	}
	return bw.Flush()
}

// codeStrips cuts a page into strips of whole rows and compresses each.
func codeStrips(p *tiffPage, compression uint16, lzw **lzwEncoder, deflate **zlib.Writer) ([][]byte, int, error) {
	rowBytes := p.width * p.bitsPerSample / 8
	if rowBytes <= 0 || p.height <= 0 || len(p.samples) != rowBytes*p.height {
		return nil, 0, fmt.Errorf("%d×%d page at %d bits has %d sample bytes, want %d", p.width, p.height, p.bitsPerSample, len(p.samples), rowBytes*p.height)
	}
	rowsPerStrip := max(1, min(p.height, tiffStripTarget/rowBytes))
	strips := make([][]byte, 0, (p.height+rowsPerStrip-1)/rowsPerStrip)
	for row := 0; row < p.height; row += rowsPerStrip {
		raw := p.samples[row*rowBytes : min(row+rowsPerStrip, p.height)*rowBytes]
		switch compression {
		case compressionNone:
			strips = append(strips, raw)
		case compressionLZW:
			if *lzw == nil {
				*lzw = new(lzwEncoder)
			}
			strips = append(strips, (*lzw).encode(make([]byte, 0, len(raw)/2), raw))
		case compressionDeflate:
			var buf bytes.Buffer
			buf.Grow(len(raw) / 2)
			if *deflate == nil {
				zw, err := zlib.NewWriterLevel(&buf, zlib.DefaultCompression)
				if err != nil {
					return nil, 0, err
				}
				*deflate = zw
			} else {
				(*deflate).Reset(&buf)
			}
			if _, err := (*deflate).Write(raw); err != nil {
				return nil, 0, err
			}
			if err := (*deflate).Close(); err != nil {
				return nil, 0, err
			}
			strips = append(strips, buf.Bytes())
		default:
			return nil, 0, fmt.Errorf("compression %d is not written", compression)
		}
	}
	return strips, rowsPerStrip, nil
}

// pageEntries lists the fields of one page's IFD in ascending tag order,
// as TIFF 6.0 Section 2 requires.
func pageEntries(p *tiffPage, file tiffFile, pageCount, page, rowsPerStrip int, stripOffsets, stripCounts []uint32) ([]ifdEntry, error) {
	xNum, xDen, err := rational(p.pixelsPerCMX)
	if err != nil {
		return nil, fmt.Errorf("XResolution: %w", err)
	}
	yNum, yDen, err := rational(p.pixelsPerCMY)
	if err != nil {
		return nil, fmt.Errorf("YResolution: %w", err)
	}
	entries := []ifdEntry{}
	if pageCount > 1 {
		entries = append(entries, longs(tagNewSubfileType, subfilePageOfMany))
	}
	entries = append(entries,
		longs(tagImageWidth, uint32(p.width)),
		longs(tagImageLength, uint32(p.height)),
		shorts(tagBitsPerSample, uint16(p.bitsPerSample)),
		shorts(tagCompression, file.compression),
		shorts(tagPhotometricInterpretation, photometricBlackIsZero),
	)
	if p.description != "" {
		entries = append(entries, ascii(tagImageDescription, p.description))
	}
	entries = append(entries,
		longs(tagStripOffsets, stripOffsets...),
		shorts(tagOrientation, orientationTopLeft),
		shorts(tagSamplesPerPixel, 1),
		longs(tagRowsPerStrip, uint32(rowsPerStrip)),
		longs(tagStripByteCounts, stripCounts...),
		rationals(tagXResolution, xNum, xDen),
		rationals(tagYResolution, yNum, yDen),
		shorts(tagPlanarConfiguration, planarChunky),
	)
	if p.pageName != "" {
		entries = append(entries, ascii(tagPageName, p.pageName))
	}
	entries = append(entries, shorts(tagResolutionUnit, resolutionUnitCentimeter))
	if pageCount > 1 {
		entries = append(entries, shorts(tagPageNumber, uint16(page), uint16(pageCount)))
	}
	if file.software != "" {
		entries = append(entries, ascii(tagSoftware, file.software))
	}
	entries = append(entries,
		ascii(tagDateTime, file.created.Format("2006:01:02 15:04:05")),
		shorts(tagSampleFormat, p.sampleFormat),
	)
	if p.valueRange != nil && p.sampleFormat == sampleFormatIEEEFP {
		// A display range for readers of float data, which has no
		// implied black and white (Section 19).
		entries = append(entries, floats(tagSMinSampleValue, p.valueRange[0]), floats(tagSMaxSampleValue, p.valueRange[1]))
	}
	for i := 1; i < len(entries); i++ {
		if entries[i].tag <= entries[i-1].tag {
			return nil, fmt.Errorf("internal: tag %d after tag %d", entries[i].tag, entries[i-1].tag)
		}
	}
	return entries, nil
}

func shorts(tag uint16, values ...uint16) ifdEntry {
	data := make([]byte, 2*len(values))
	for i, v := range values {
		binary.LittleEndian.PutUint16(data[2*i:], v)
	}
	return ifdEntry{tag: tag, typ: typeSHORT, count: uint32(len(values)), data: data}
}

func longs(tag uint16, values ...uint32) ifdEntry {
	data := make([]byte, 4*len(values))
	for i, v := range values {
		binary.LittleEndian.PutUint32(data[4*i:], v)
	}
	return ifdEntry{tag: tag, typ: typeLONG, count: uint32(len(values)), data: data}
}

func floats(tag uint16, values ...float32) ifdEntry {
	data := make([]byte, 4*len(values))
	for i, v := range values {
		binary.LittleEndian.PutUint32(data[4*i:], math.Float32bits(v))
	}
	return ifdEntry{tag: tag, typ: typeFLOAT, count: uint32(len(values)), data: data}
}

func rationals(tag uint16, num, den uint32) ifdEntry {
	data := make([]byte, 8)
	binary.LittleEndian.PutUint32(data[0:], num)
	binary.LittleEndian.PutUint32(data[4:], den)
	return ifdEntry{tag: tag, typ: typeRATIONAL, count: 1, data: data}
}

// ascii makes an ASCII field: the text and its terminating NUL, the count
// including the NUL (Section 2). The caller passes 7-bit text.
func ascii(tag uint16, text string) ifdEntry {
	data := append([]byte(text), 0)
	return ifdEntry{tag: tag, typ: typeASCII, count: uint32(len(data)), data: data}
}

// rational returns num/den for v > 0: the denominator is the largest power
// of ten up to 10^6 for which the numerator still fits 32 bits, and the
// fraction is reduced, so 40 px/cm is 40/1 and a 0.3 mm pitch (33.33… px/cm) is
// 33333333/1000000.
func rational(v float64) (num, den uint32, err error) {
	if !(v > 0) || math.IsInf(v, 0) {
		return 0, 0, fmt.Errorf("resolution %g pixels per cm is not a positive number", v)
	}
	d := uint64(1000000)
	for d > 1 && v*float64(d) > math.MaxUint32 {
		d /= 10
	}
	n := uint64(math.Round(v * float64(d)))
	if n == 0 || n > math.MaxUint32 {
		return 0, 0, fmt.Errorf("resolution %g pixels per cm cannot be written as a TIFF RATIONAL", v)
	}
	g := gcd(n, d)
	return uint32(n / g), uint32(d / g), nil
}

func gcd(a, b uint64) uint64 {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}
