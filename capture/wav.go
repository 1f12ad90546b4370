package capture

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
)

// wavChunk is one chunk found while walking the RIFF form.
type wavChunk struct {
	id     [4]byte
	offset int64 // of the chunk header
	size   int64 // ckSize as stored, without the pad byte
}

// body is the offset of the chunk's first data byte.
func (c wavChunk) body() int64 { return c.offset + chunkHeaderSize }

// fourCCAt reports whether the 4 bytes at off are printable ASCII, as
// chunk IDs are (RIFF 1.0: FOURCC).
func fourCCAt(r io.ReaderAt, size, off int64) bool {
	if off < 0 || off+4 > size {
		return false
	}
	var id [4]byte
	if _, err := r.ReadAt(id[:], off); err != nil {
		return false
	}
	for _, c := range id {
		if c < 0x20 || c > 0x7E {
			return false
		}
	}
	return true
}

// wavFormat is the decoded fmt chunk.
type wavFormat struct {
	tag            uint16 // wFormatTag, or the sub-format for EXTENSIBLE
	extensible     bool
	channels       int
	sampleRate     uint32
	blockAlign     int
	bitsPerSample  int // as the header states it
	containerBytes int // bytes per sample: bitsPerSample rounded up to whole bytes
	validBits      int
}

// sampleType names the stored container the way Source.SampleType does.
func (f wavFormat) sampleType() string {
	if f.tag == waveFormatIEEEFloat {
		return fmt.Sprintf("float%d", f.bitsPerSample)
	}
	if f.containerBytes == 1 {
		return "uint8"
	}
	return fmt.Sprintf("int%d", 8*f.containerBytes)
}

// wavFile is what one walk over a RIFF (or RIFX) WAVE form found.
type wavFile struct {
	order    binary.ByteOrder // little-endian for RIFF, big-endian for RIFX
	fmtChunk wavChunk
	fmtBytes []byte
	data     wavChunk
	// dataBytes is how much of the data chunk is read: its size, or, for a
	// chunk cut short (cut), what the file holds after its header.
	dataBytes int64
	cut       bool
	// beyond is how many bytes after the stated data chunk were read as
	// more of it: samples a recorder wrote after it last rewrote the sizes.
	beyond   int64
	warnings []string
}

// wavWalker walks the chunks of a RIFF form once, in file order, checking
// every size it reads against the size of the file.
type wavWalker struct {
	r     io.ReaderAt
	size  int64
	order binary.ByteOrder
}

func (w *wavWalker) bad(off int64, problem, expected string) error {
	return &FormatError{Format: "wav", Place: AtByte(off), Problem: problem, Expected: expected}
}

// header reads the 8-byte chunk header at off; ok is false when fewer than
// 8 bytes are left.
func (w *wavWalker) header(off int64) (c wavChunk, ok bool, err error) {
	if off+chunkHeaderSize > w.size {
		return c, false, nil
	}
	var ch [chunkHeaderSize]byte
	if _, err := w.r.ReadAt(ch[:], off); err != nil {
		return c, false, w.bad(off, "cannot read chunk header: "+err.Error(), "")
	}
	return wavChunk{id: [4]byte(ch[0:4]), offset: off, size: int64(w.order.Uint32(ch[4:8]))}, true, nil
}

// next is the offset after chunk c. RIFF 1.0 pads chunk data to an even
// length, and the pad byte is not counted in ckSize. Some writers leave it
// out: when the byte after an odd chunk starts a chunk ID and the pad
// position does not, there is no pad.
func (w *wavWalker) next(c wavChunk) int64 {
	off := c.body() + c.size
	if c.size&1 == 1 && (fourCCAt(w.r, w.size, off+1) || !fourCCAt(w.r, w.size, off)) {
		off++
	}
	return off
}

// walkWAV checks the RIFF structure against the real size of the file and
// finds the fmt and data chunks. A data chunk that claims more than the
// file holds (a recorder that stopped before it wrote the sizes) is read as
// far as the file goes; a RIFF size that disagrees with the file and bytes
// after the last chunk are warnings. Nothing is allocated from a header size
// before it has been compared with what the file holds.
func walkWAV(r io.ReaderAt, size int64) (wavFile, error) {
	w := &wavWalker{r: r, size: size, order: binary.LittleEndian}
	var f wavFile
	var head [riffHeaderSize]byte
	if size < riffHeaderSize {
		return f, w.bad(0, fmt.Sprintf("file is %d bytes, too short for a RIFF header", size), "at least 12 bytes \"RIFF\" size \"WAVE\"")
	}
	if _, err := r.ReadAt(head[:], 0); err != nil {
		return f, w.bad(0, "cannot read the RIFF header: "+err.Error(), "")
	}
	switch id := [4]byte(head[0:4]); id {
	case idRIFF:
	case idRIFX:
		w.order = binary.BigEndian
	case idRF64:
		return f, &UnsupportedError{Format: "wav", Place: AtByte(0), Feature: fmt.Sprintf("%q form", id[:]), Expected: "a \"RIFF\" or \"RIFX\" WAVE file"}
	default:
		return f, w.bad(0, fmt.Sprintf("file starts with %q", head[0:4]), "\"RIFF\"")
	}
	f.order = w.order
	if [4]byte(head[8:12]) != idWAVE {
		return f, w.bad(8, fmt.Sprintf("RIFF form type is %q", head[8:12]), "\"WAVE\"")
	}
	haveFmt := false
	off := int64(riffHeaderSize)
	for {
		c, ok, err := w.header(off)
		if err != nil {
			return f, err
		}
		if !ok {
			if !haveFmt {
				return f, w.bad(off, fmt.Sprintf("file ends after %d bytes without a fmt chunk", size), "a \"fmt \" chunk before the data")
			}
			return f, w.bad(off, fmt.Sprintf("file ends after %d bytes without a data chunk", size), "a \"data\" chunk")
		}
		if c.id == idData {
			if !haveFmt {
				return f, w.bad(off, "data chunk comes before any fmt chunk", "the \"fmt \" chunk first (RIFF WAVE form)")
			}
			f.data = c
			w.dataExtent(&f)
			break
		}
		if c.body()+c.size > size {
			return f, w.bad(off, fmt.Sprintf("chunk %q claims %d bytes from byte %d, but the file ends at byte %d", c.id[:], c.size, c.body(), size),
				fmt.Sprintf("at most %d bytes (file truncated or header damaged)", size-c.body()))
		}
		if c.id == idFmt {
			if haveFmt {
				return f, w.bad(off, "second fmt chunk", "one \"fmt \" chunk")
			}
			if c.size < fmtPCMSize || c.size > maxFmtSize {
				return f, w.bad(off, fmt.Sprintf("fmt chunk is %d bytes", c.size), "16, 18 or 40 bytes")
			}
			f.fmtChunk, f.fmtBytes = c, make([]byte, c.size)
			if _, err := r.ReadAt(f.fmtBytes, c.body()); err != nil {
				return f, w.bad(c.body(), "cannot read fmt chunk: "+err.Error(), "")
			}
			haveFmt = true
		}
		off = w.next(c)
	}
	if f.cut {
		return f, nil
	}
	statedRIFF := chunkHeaderSize + int64(w.order.Uint32(head[4:8]))
	tail := w.tail(w.next(f.data))
	if tail != nil && w.samplesBeyond(f.data, statedRIFF) {
		f.beyond = size - f.data.body() - f.data.size
		f.dataBytes += f.beyond
		return f, nil
	}
	f.warnings = append(f.warnings, tail...)
	f.warnings = append(f.warnings, w.riffSize(statedRIFF)...)
	return f, nil
}

// samplesBeyond reports whether the bytes after the stated data chunk c,
// which are not whole chunks, are more samples of it: a recorder that
// rewrites the sizes now and then (WAVStream) and was killed in between
// leaves a header whose RIFF form ends with the data chunk and samples
// after it. They are taken for samples when the RIFF size ends the form at
// the data chunk (with or without its pad byte), so the data chunk was the
// last chunk written, and they start neither a chunk ID nor a tag that
// other programs append to WAV files (ID3v2 "ID3", ID3v1 "TAG").
func (w *wavWalker) samplesBeyond(c wavChunk, statedRIFF int64) bool {
	end := c.body() + c.size
	if statedRIFF != end && statedRIFF != end+1 {
		return false
	}
	if fourCCAt(w.r, w.size, end) {
		return false
	}
	var tag [3]byte
	if _, err := w.r.ReadAt(tag[:], end); err == nil && (string(tag[:]) == "ID3" || string(tag[:]) == "TAG") {
		return false
	}
	return true
}

// dataExtent decides how much of the data chunk there is to read. A size
// of 0 or 0xFFFFFFFF with samples after the header, or a size past the end
// of the file, is a chunk whose size was never written: everything up to
// the end of the file is read.
func (w *wavWalker) dataExtent(f *wavFile) {
	c := f.data
	avail := w.size - c.body()
	f.dataBytes = c.size
	switch {
	case c.size > avail, c.size == 0xFFFFFFFF:
		f.cut = true
	case c.size == 0 && avail > 0:
		// an empty data chunk followed by another whole chunk is empty
		if n, ok, _ := w.header(c.body()); !ok || !fourCCAt(w.r, w.size, c.body()) || n.body()+n.size > w.size {
			f.cut = true
		}
	}
	if f.cut {
		f.dataBytes = avail
	}
}

// tail walks the chunks after the data and describes bytes that are not a
// whole chunk.
func (w *wavWalker) tail(off int64) []string {
	for off < w.size {
		c, ok, err := w.header(off)
		if err != nil || !ok || !fourCCAt(w.r, w.size, off) || c.body()+c.size > w.size {
			return []string{fmt.Sprintf("bytes %d to %d after the last chunk are not a whole RIFF chunk and were ignored", off, w.size)}
		}
		off = w.next(c)
	}
	return nil
}

// riffSize compares the file size the RIFF header states with the real one
// (one missing final pad byte is no disagreement).
func (w *wavWalker) riffSize(stated int64) []string {
	if stated == w.size || stated == w.size+1 {
		return nil
	}
	return []string{fmt.Sprintf("the RIFF header gives the file as %d bytes, but it is %d bytes; the chunks were read as they stand", stated, w.size)}
}

// ksSubtype is the KSDATAFORMAT_SUBTYPE GUID {0000XXXX-0000-0010-8000-00AA00389B71}
// of a format tag, its first three fields in the file's byte order.
func ksSubtype(tag uint16, order binary.ByteOrder) [16]byte {
	var g [16]byte
	order.PutUint32(g[0:], uint32(tag))
	order.PutUint16(g[4:], 0)
	order.PutUint16(g[6:], 0x0010)
	copy(g[8:], ksSubtypeTail[:])
	return g
}

// parseFmt decodes and checks the fmt chunk c with bytes b.
func parseFmt(b []byte, c wavChunk, order binary.ByteOrder) (wavFormat, error) {
	at := func(field int) Place { return AtByte(c.body() + int64(field)) }
	bad := func(field int, problem, expected string) error {
		return &FormatError{Format: "wav", Place: at(field), Problem: problem, Expected: expected}
	}
	unsupported := func(field int, feature, expected string) error {
		return &UnsupportedError{Format: "wav", Place: at(field), Feature: feature, Expected: expected}
	}
	f := wavFormat{
		tag:           order.Uint16(b[0:]),
		channels:      int(order.Uint16(b[2:])),
		sampleRate:    order.Uint32(b[4:]),
		blockAlign:    int(order.Uint16(b[12:])),
		bitsPerSample: int(order.Uint16(b[14:])),
	}
	f.validBits = f.bitsPerSample
	if f.tag == waveFormatExtensible {
		if len(b) < fmtExtensibleSize || order.Uint16(b[16:]) < extensibleCbSize {
			return f, bad(16, fmt.Sprintf("WAVE_FORMAT_EXTENSIBLE fmt chunk of %d bytes", len(b)), "40 bytes with cbSize 22")
		}
		f.extensible = true
		f.validBits = int(order.Uint16(b[18:]))
		switch sub := [16]byte(b[24:40]); sub {
		case ksSubtype(waveFormatPCM, order):
			f.tag = waveFormatPCM
		case ksSubtype(waveFormatIEEEFloat, order):
			f.tag = waveFormatIEEEFloat
		default:
			return f, unsupported(24, fmt.Sprintf("extensible sub-format % x", sub[:]), "KSDATAFORMAT_SUBTYPE_PCM or _IEEE_FLOAT")
		}
	}
	switch {
	case f.channels == 0:
		return f, bad(2, "zero channels", fmt.Sprintf("1 to %d channels", MaxChannels))
	case f.channels > MaxChannels:
		return f, unsupported(2, fmt.Sprintf("%d channels", f.channels), fmt.Sprintf("1 to %d channels", MaxChannels))
	case f.sampleRate == 0 || float64(f.sampleRate) > maxWAVRateHz:
		return f, bad(4, fmt.Sprintf("sample rate %d Hz", f.sampleRate), fmt.Sprintf("1 Hz to %g Hz", maxWAVRateHz))
	}
	switch f.tag {
	case waveFormatPCM:
		// RIFF 1.0, WAVE "Data Packing for PCM": a sample of any width is
		// stored left-justified in the smallest whole number of bytes.
		if f.bitsPerSample < 1 || f.bitsPerSample > maxPCMBits {
			return f, unsupported(14, fmt.Sprintf("%d-bit PCM", f.bitsPerSample), fmt.Sprintf("1 to %d bits", maxPCMBits))
		}
	case waveFormatIEEEFloat:
		if f.bitsPerSample != 32 && f.bitsPerSample != 64 {
			return f, bad(14, fmt.Sprintf("%d-bit IEEE float", f.bitsPerSample), "32 or 64 bits")
		}
	default:
		return f, unsupported(0, fmt.Sprintf("format tag 0x%04X (compressed audio)", f.tag), "PCM (1), IEEE float (3) or extensible (0xFFFE)")
	}
	f.containerBytes = (f.bitsPerSample + 7) / 8
	if f.validBits == 0 || f.validBits > 8*f.containerBytes {
		return f, bad(18, fmt.Sprintf("%d valid bits in a %d-bit container", f.validBits, 8*f.containerBytes), fmt.Sprintf("1 to %d", 8*f.containerBytes))
	}
	if want := f.channels * f.containerBytes; f.blockAlign != want {
		return f, bad(12, fmt.Sprintf("block align %d", f.blockAlign), fmt.Sprintf("%d (%d channels × %d bytes)", want, f.channels, f.containerBytes))
	}
	return f, nil
}

// readWAV decodes a whole RIFF/WAVE (or big-endian RIFX) file of the given
// size.
func readWAV(r io.ReaderAt, size int64, opts Options) (*Recording, error) {
	file, err := walkWAV(r, size)
	if err != nil {
		return nil, err
	}
	f, err := parseFmt(file.fmtBytes, file.fmtChunk, file.order)
	if err != nil {
		return nil, err
	}
	data := file.data
	if !file.cut && data.size%int64(f.blockAlign) != 0 {
		return nil, &FormatError{Format: "wav", Place: AtByte(data.offset), Problem: fmt.Sprintf("data chunk of %d bytes is not a whole number of %d-byte frames", data.size, f.blockAlign),
			Expected: fmt.Sprintf("a multiple of %d bytes", f.blockAlign)}
	}
	frames := file.dataBytes / int64(f.blockAlign)
	if frames == 0 {
		problem := "data chunk holds no samples"
		if file.cut {
			problem = fmt.Sprintf("data chunk claims %s but the file holds %d bytes after its header, not one whole frame", claimedSize(data.size), file.dataBytes)
		}
		return nil, &FormatError{Format: "wav", Place: AtByte(data.offset), Problem: problem, Expected: "at least one frame"}
	}
	rec := &Recording{
		SampleRateHz: float64(f.sampleRate),
		Channels:     make([]Channel, f.channels),
		Source:       Source{Format: "wav", SampleType: f.sampleType(), BitDepth: 8 * f.containerBytes},
		Warnings:     file.warnings,
	}
	if file.cut {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("the data chunk at byte %d claims %s but the file ends %d bytes after its header (a recording that was never finished); the %d whole frames there were read, %.6g s",
			data.offset, claimedSize(data.size), file.dataBytes, frames, float64(frames)/float64(f.sampleRate)))
	}
	if file.beyond > 0 {
		rec.Warnings = append(rec.Warnings, beyondText(data, file, f, frames))
	}
	for c := range rec.Channels {
		rec.Channels[c] = Channel{Name: fmt.Sprintf("ch%d", c), Unit: UnitFullScale}
	}
	if sum := opts.summary; sum != nil {
		sum.start(f.channels, frames)
		if err := streamFrames(r, data.body(), frames, f.blockAlign, f.channels, 0, wavConverter(f, file.order), opts.Progress, "wav", sum); err != nil {
			return nil, err
		}
		rec.Warnings = append(rec.Warnings, sum.nonFiniteWarning()...)
		return rec, nil
	}
	dst := make([][]float32, f.channels)
	for c := range rec.Channels {
		dst[c] = make([]float32, frames)
		rec.Channels[c].Samples = dst[c]
	}
	if err := readFrames(r, data.body(), frames, f.blockAlign, dst, wavConverter(f, file.order), opts.Progress, "wav"); err != nil {
		return nil, err
	}
	if f.tag == waveFormatIEEEFloat {
		if n := replaceNonFinite(dst); n > 0 {
			rec.Warnings = append(rec.Warnings, nonFiniteText(n))
		}
	}
	return rec, nil
}

// beyondText is the warning for samples read after the stated data chunk.
func beyondText(data wavChunk, file wavFile, f wavFormat, frames int64) string {
	block := int64(f.blockAlign)
	stated := data.size / block
	text := fmt.Sprintf("the data chunk at byte %d states %d frames, but %d more follow it to the end of the file (samples written after the header was last rewritten, as by a recording that was killed); %.6g s were recovered beyond the header",
		data.offset, stated, frames-stated, float64(frames-stated)/float64(f.sampleRate))
	if part := file.dataBytes % block; part != 0 {
		text += fmt.Sprintf(", and the last %d bytes, less than a frame, were ignored", part)
	}
	return text
}

// claimedSize describes a data chunk's stated size for messages.
func claimedSize(n int64) string {
	switch n {
	case 0:
		return "0 bytes"
	case 0xFFFFFFFF:
		return "0xFFFFFFFF bytes (a size never filled in)"
	}
	return fmt.Sprintf("%d bytes", n)
}

// frameConverter turns whole frames of stored bytes into float32 samples,
// writing channel c of frame i to dst[c][at+i].
type frameConverter func(dst [][]float32, at int, src []byte)

// wavConverter picks the bulk converter for a WAV format. Integer samples
// map to ±1.0 full scale of their container: the stored value divided by
// 2^(8·bytes−1), so a 12-bit sample left-justified in 16 bits is read on
// the 16-bit scale; 8-bit and narrower PCM is unsigned with 128 as zero
// (RIFF 1.0, WAVE "Data Packing for PCM").
func wavConverter(f wavFormat, order binary.ByteOrder) frameConverter {
	size, frameBytes := f.containerBytes, f.blockAlign
	bigEndian := order == binary.BigEndian
	if f.tag != waveFormatIEEEFloat && size > 4 {
		return func(dst [][]float32, at int, src []byte) {
			n := len(src) / frameBytes
			for c := range dst {
				decodeWide(dst[c][at:at+n], src[c*size:], frameBytes, size, bigEndian)
			}
		}
	}
	kind, scale, offset := kindInt32, float32(1.0/(1<<31)), float32(0)
	switch {
	case f.tag == waveFormatIEEEFloat && f.bitsPerSample == 32:
		kind, scale = kindFloat32, 1
	case f.tag == waveFormatIEEEFloat:
		kind, scale = kindFloat64, 1
	case size == 1:
		kind, scale, offset = kindUint8, 1.0/128, -1
	case size == 2:
		kind, scale = kindInt16, 1.0/32768
	case size == 3:
		kind, scale = kindInt24, 1.0/(1<<23)
	}
	return func(dst [][]float32, at int, src []byte) {
		n := len(src) / frameBytes
		for c := range dst {
			decodeInto(dst[c][at:at+n], src[c*size:], frameBytes, kind, bigEndian, scale, offset)
		}
	}
}

// decodeWide converts signed integers of 5 to 8 bytes (PCM of 33 to 64
// bits) to ±1.0 full scale: each is placed in the top bytes of an int64,
// which is then divided by 2^63.
func decodeWide(out []float32, src []byte, stride, size int, bigEndian bool) {
	for i := range out {
		b := src[i*stride : i*stride+size]
		var u uint64
		for k := range size {
			if bigEndian {
				u |= uint64(b[k]) << (8 * (7 - k))
			} else {
				u |= uint64(b[k]) << (8 * (8 - size + k))
			}
		}
		out[i] = float32(float64(int64(u)) / (1 << 63))
	}
}

// replaceNonFinite sets NaN and infinite samples to 0 and counts them.
func replaceNonFinite(dst [][]float32) int {
	n := 0
	for _, ch := range dst {
		for i, v := range ch {
			if v-v != 0 { // NaN or ±Inf
				ch[i] = 0
				n++
			}
		}
	}
	return n
}

// isWAV reports whether head starts like a RIFF WAVE file (or one of the
// RIFF variants walkWAV names when it refuses them).
func isWAV(head []byte) bool {
	if len(head) < 4 {
		return false
	}
	id := [4]byte(head[0:4])
	if id == idRIFX || id == idRF64 {
		return true
	}
	return id == idRIFF && (len(head) < 12 || bytes.Equal(head[8:12], idWAVE[:]))
}
