package capture

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"

	"github.com/go-audio/wav"
)

// wavChunk is one chunk found while walking the RIFF form.
type wavChunk struct {
	id     [4]byte
	offset int64 // of the chunk header
	size   int64 // ckSize as stored, without the pad byte
	// unpadded marks an odd-sized chunk written without its pad byte.
	unpadded bool
}

// fourCCAt reports whether the 4 bytes at off are printable ASCII, as
// chunk IDs are (RIFF 1.0: FOURCC).
func fourCCAt(r io.ReaderAt, size, off int64) bool {
	if off+4 > size {
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
	tag           uint16 // wFormatTag, or the sub-format for EXTENSIBLE
	extensible    bool
	channels      int
	sampleRate    uint32
	blockAlign    int
	bitsPerSample int // container size
	validBits     int
}

// sampleType names the stored sample type the way Source.SampleType does.
func (f wavFormat) sampleType() string {
	if f.tag == waveFormatIEEEFloat {
		return fmt.Sprintf("float%d", f.bitsPerSample)
	}
	if f.bitsPerSample == 8 {
		return "uint8"
	}
	return fmt.Sprintf("int%d", f.bitsPerSample)
}

// walkWAV checks the RIFF structure against the real size of the file and
// returns the chunks up to and including data, the fmt chunk's bytes, and
// the data chunk. Nothing is allocated from a header size before it has been
// compared with what the file holds.
func walkWAV(r io.ReaderAt, size int64) (chunks []wavChunk, fmtBytes []byte, data wavChunk, err error) {
	bad := func(off int64, problem, expected string) error {
		return &FormatError{Format: "wav", Place: AtByte(off), Problem: problem, Expected: expected}
	}
	var head [riffHeaderSize]byte
	if size < riffHeaderSize {
		return nil, nil, data, bad(0, fmt.Sprintf("file is %d bytes, too short for a RIFF header", size), "at least 12 bytes \"RIFF\" size \"WAVE\"")
	}
	if _, err := r.ReadAt(head[:], 0); err != nil {
		return nil, nil, data, bad(0, "cannot read the RIFF header: "+err.Error(), "")
	}
	switch id := [4]byte(head[0:4]); id {
	case idRIFF:
	case idRIFX, idRF64:
		return nil, nil, data, &UnsupportedError{Format: "wav", Place: AtByte(0), Feature: fmt.Sprintf("%q form", id[:]), Expected: "a little-endian \"RIFF\" WAVE file"}
	default:
		return nil, nil, data, bad(0, fmt.Sprintf("file starts with %q", head[0:4]), "\"RIFF\"")
	}
	if [4]byte(head[8:12]) != idWAVE {
		return nil, nil, data, bad(8, fmt.Sprintf("RIFF form type is %q", head[8:12]), "\"WAVE\"")
	}
	haveFmt := false
	off := int64(riffHeaderSize)
	for {
		if off+chunkHeaderSize > size {
			if !haveFmt {
				return nil, nil, data, bad(off, fmt.Sprintf("file ends after %d bytes without a fmt chunk", size), "a \"fmt \" chunk before the data")
			}
			return nil, nil, data, bad(off, fmt.Sprintf("file ends after %d bytes without a data chunk", size), "a \"data\" chunk")
		}
		var ch [chunkHeaderSize]byte
		if _, err := r.ReadAt(ch[:], off); err != nil {
			return nil, nil, data, bad(off, "cannot read chunk header: "+err.Error(), "")
		}
		c := wavChunk{id: [4]byte(ch[0:4]), offset: off, size: int64(binary.LittleEndian.Uint32(ch[4:8]))}
		body := off + chunkHeaderSize
		if body+c.size > size {
			return nil, nil, data, bad(off, fmt.Sprintf("chunk %q claims %d bytes from byte %d, but the file ends at byte %d", c.id[:], c.size, body, size),
				fmt.Sprintf("at most %d bytes (file truncated or header damaged)", size-body))
		}
		chunks = append(chunks, c)
		switch c.id {
		case idFmt:
			if haveFmt {
				return nil, nil, data, bad(off, "second fmt chunk", "one \"fmt \" chunk")
			}
			if c.size < fmtPCMSize || c.size > maxFmtSize {
				return nil, nil, data, bad(off, fmt.Sprintf("fmt chunk is %d bytes", c.size), "16, 18 or 40 bytes")
			}
			fmtBytes = make([]byte, c.size)
			if _, err := r.ReadAt(fmtBytes, body); err != nil {
				return nil, nil, data, bad(body, "cannot read fmt chunk: "+err.Error(), "")
			}
			haveFmt = true
		case idData:
			if !haveFmt {
				return nil, nil, data, bad(off, "data chunk comes before any fmt chunk", "the \"fmt \" chunk first (RIFF WAVE form)")
			}
			return chunks, fmtBytes, c, nil
		}
		// RIFF 1.0: chunk data is padded to an even length; the pad byte is
		// not counted in ckSize. Some writers leave it out: when the byte
		// after an odd chunk starts a chunk ID and the pad position does
		// not, there is no pad.
		off = body + c.size
		if c.size&1 == 1 {
			if !fourCCAt(r, size, off+1) && fourCCAt(r, size, off) {
				chunks[len(chunks)-1].unpadded = true
			} else {
				off++
			}
		}
	}
}

// parseFmt decodes and checks a fmt chunk found at byte off.
func parseFmt(b []byte, off int64) (wavFormat, error) {
	bad := func(at int, problem, expected string) error {
		return &FormatError{Format: "wav", Place: AtByte(off + chunkHeaderSize + int64(at)), Problem: problem, Expected: expected}
	}
	le := binary.LittleEndian
	f := wavFormat{
		tag:           le.Uint16(b[0:]),
		channels:      int(le.Uint16(b[2:])),
		sampleRate:    le.Uint32(b[4:]),
		blockAlign:    int(le.Uint16(b[12:])),
		bitsPerSample: int(le.Uint16(b[14:])),
	}
	f.validBits = f.bitsPerSample
	if f.tag == waveFormatExtensible {
		if len(b) < fmtExtensibleSize || le.Uint16(b[16:]) < extensibleCbSize {
			return f, bad(16, fmt.Sprintf("WAVE_FORMAT_EXTENSIBLE fmt chunk of %d bytes", len(b)), "40 bytes with cbSize 22")
		}
		f.extensible = true
		f.validBits = int(le.Uint16(b[18:]))
		switch sub := [16]byte(b[24:40]); sub {
		case subtypePCM:
			f.tag = waveFormatPCM
		case subtypeIEEEFloat:
			f.tag = waveFormatIEEEFloat
		default:
			return f, &UnsupportedError{Format: "wav", Place: AtByte(off + chunkHeaderSize + 24), Feature: fmt.Sprintf("extensible sub-format % x", sub[:]), Expected: "KSDATAFORMAT_SUBTYPE_PCM or _IEEE_FLOAT"}
		}
	}
	switch {
	case f.channels == 0:
		return f, bad(2, "zero channels", fmt.Sprintf("1 to %d channels", MaxChannels))
	case f.channels > MaxChannels:
		return f, &UnsupportedError{Format: "wav", Place: AtByte(off + chunkHeaderSize + 2), Feature: fmt.Sprintf("%d channels", f.channels), Expected: fmt.Sprintf("1 to %d channels", MaxChannels)}
	case f.sampleRate == 0 || float64(f.sampleRate) > maxWAVRateHz:
		return f, bad(4, fmt.Sprintf("sample rate %d Hz", f.sampleRate), fmt.Sprintf("1 Hz to %g Hz", maxWAVRateHz))
	}
	switch f.tag {
	case waveFormatPCM:
		switch f.bitsPerSample {
		case 8, 16, 24, 32:
		default:
			return f, &UnsupportedError{Format: "wav", Place: AtByte(off + chunkHeaderSize + 14), Feature: fmt.Sprintf("%d-bit PCM", f.bitsPerSample), Expected: "8, 16, 24 or 32 bits"}
		}
	case waveFormatIEEEFloat:
		if f.bitsPerSample != 32 && f.bitsPerSample != 64 {
			return f, bad(14, fmt.Sprintf("%d-bit IEEE float", f.bitsPerSample), "32 or 64 bits")
		}
	default:
		return f, &UnsupportedError{Format: "wav", Place: AtByte(off + chunkHeaderSize), Feature: fmt.Sprintf("format tag 0x%04X (compressed audio)", f.tag), Expected: "PCM (1), IEEE float (3) or extensible (0xFFFE)"}
	}
	if f.validBits == 0 || f.validBits > f.bitsPerSample {
		return f, bad(18, fmt.Sprintf("%d valid bits in a %d-bit container", f.validBits, f.bitsPerSample), fmt.Sprintf("1 to %d", f.bitsPerSample))
	}
	if want := f.channels * f.bitsPerSample / 8; f.blockAlign != want {
		return f, bad(12, fmt.Sprintf("block align %d", f.blockAlign), fmt.Sprintf("%d (%d channels × %d bytes)", want, f.channels, f.bitsPerSample/8))
	}
	return f, nil
}

// crossCheckWAV lets go-audio/wav walk the chunks and read the fmt fields,
// and compares its view with ours. It walks a view of the file in which the
// LIST, smpl and cue chunks before data are left out, because that package
// allocates buffers from the sizes written inside those chunks.
func crossCheckWAV(r io.ReaderAt, chunks []wavChunk, data wavChunk, f wavFormat) error {
	var parts []io.ReaderAt
	var lengths []int64
	add := func(ra io.ReaderAt, n int64) { parts, lengths = append(parts, ra), append(lengths, n) }
	add(io.NewSectionReader(r, 0, riffHeaderSize), riffHeaderSize)
	for _, c := range chunks {
		if c.id == idData {
			break
		}
		if id := string(c.id[:]); id == "LIST" || id == "smpl" || id == "cue " {
			continue
		}
		n := chunkHeaderSize + c.size
		add(io.NewSectionReader(r, c.offset, n), n)
		if c.size&1 == 1 {
			if c.unpadded {
				add(bytes.NewReader([]byte{0}), 1) // the pad go-audio/wav expects
			} else {
				add(io.NewSectionReader(r, c.offset+n, 1), 1)
			}
		}
	}
	add(io.NewSectionReader(r, data.offset, chunkHeaderSize), chunkHeaderSize)
	view := io.NewSectionReader(newSplice(parts, lengths), 0, totalLen(lengths))
	dec := wav.NewDecoder(view)
	if err := dec.FwdToPCM(); err != nil || dec.PCMChunk == nil {
		if err == nil {
			err = dec.Err()
		}
		return &FormatError{Format: "wav", Place: AtByte(data.offset), Problem: fmt.Sprintf("RIFF chunk walk failed: %v", err), Expected: "a well-formed chunk list"}
	}
	pos, _ := view.Seek(0, io.SeekCurrent)
	wantPos := totalLen(lengths) // the view ends with the data chunk header
	rawTag := f.tag
	if f.extensible {
		rawTag = waveFormatExtensible
	}
	if pos != wantPos || int(dec.NumChans) != f.channels || dec.SampleRate != f.sampleRate ||
		int(dec.BitDepth) != f.bitsPerSample || uint16(dec.WavAudioFormat) != rawTag {
		return &FormatError{Format: "wav", Place: AtByte(data.offset), Problem: fmt.Sprintf(
			"chunk walk disagrees: data at %d, %d channels, %d Hz, %d bits, tag %d; fmt chunk says data at %d, %d channels, %d Hz, %d bits, tag %d",
			pos-wantPos+data.offset+chunkHeaderSize, dec.NumChans, dec.SampleRate, dec.BitDepth, dec.WavAudioFormat,
			data.offset+chunkHeaderSize, f.channels, f.sampleRate, f.bitsPerSample, rawTag), Expected: "one consistent fmt chunk"}
	}
	return nil
}

// readWAV decodes a whole RIFF/WAVE file of the given size.
func readWAV(r io.ReaderAt, size int64, opts Options) (*Recording, error) {
	chunks, fmtBytes, data, err := walkWAV(r, size)
	if err != nil {
		return nil, err
	}
	var fmtOff int64
	for _, c := range chunks {
		if c.id == idFmt {
			fmtOff = c.offset
		}
	}
	f, err := parseFmt(fmtBytes, fmtOff)
	if err != nil {
		return nil, err
	}
	if err := crossCheckWAV(r, chunks, data, f); err != nil {
		return nil, err
	}
	dataStart := data.offset + chunkHeaderSize
	if data.size%int64(f.blockAlign) != 0 {
		return nil, &FormatError{Format: "wav", Place: AtByte(data.offset), Problem: fmt.Sprintf("data chunk of %d bytes is not a whole number of %d-byte frames", data.size, f.blockAlign),
			Expected: fmt.Sprintf("a multiple of %d bytes", f.blockAlign)}
	}
	frames := data.size / int64(f.blockAlign)
	if frames == 0 {
		return nil, &FormatError{Format: "wav", Place: AtByte(data.offset), Problem: "data chunk holds no samples", Expected: "at least one frame"}
	}
	conv := wavConverter(f)
	rec := &Recording{
		SampleRateHz: float64(f.sampleRate),
		Channels:     make([]Channel, f.channels),
		Source:       Source{Format: "wav", SampleType: f.sampleType(), BitDepth: f.bitsPerSample},
	}
	dst := make([][]float32, f.channels)
	for c := range rec.Channels {
		dst[c] = make([]float32, frames)
		rec.Channels[c] = Channel{Name: fmt.Sprintf("ch%d", c), Unit: UnitFullScale, Samples: dst[c]}
	}
	if err := readFrames(r, dataStart, frames, f.blockAlign, dst, conv, opts.Progress, "wav"); err != nil {
		return nil, err
	}
	if f.tag == waveFormatIEEEFloat {
		if n := replaceNonFinite(dst); n > 0 {
			rec.Warnings = append(rec.Warnings, fmt.Sprintf("%d samples were NaN or infinite and were set to 0", n))
		}
	}
	return rec, nil
}

// frameConverter turns whole frames of stored bytes into float32 samples,
// writing channel c of frame i to dst[c][at+i].
type frameConverter func(dst [][]float32, at int, src []byte)

// wavConverter picks the bulk converter for a WAV format. Integer samples map
// to ±1.0 full scale: the stored value divided by 2^(bits-1); 8-bit PCM is
// unsigned with 128 as zero (RIFF 1.0, WAVE "Data Packing for PCM").
func wavConverter(f wavFormat) frameConverter {
	kind, scale, offset := kindInt32, float32(1.0/(1<<31)), float32(0)
	switch {
	case f.tag == waveFormatIEEEFloat && f.bitsPerSample == 32:
		kind, scale = kindFloat32, 1
	case f.tag == waveFormatIEEEFloat:
		kind, scale = kindFloat64, 1
	case f.bitsPerSample == 8:
		kind, scale, offset = kindUint8, 1.0/128, -1
	case f.bitsPerSample == 16:
		kind, scale = kindInt16, 1.0/32768
	case f.bitsPerSample == 24:
		kind, scale = kindInt24, 1.0/(1<<23)
	}
	size := f.bitsPerSample / 8
	frameBytes := f.blockAlign
	return func(dst [][]float32, at int, src []byte) {
		n := len(src) / frameBytes
		for c := range dst {
			decodeInto(dst[c][at:at+n], src[c*size:], frameBytes, kind, false, scale, offset)
		}
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

// splice joins sections of readers into one io.ReaderAt.
type splice struct {
	parts   []io.ReaderAt
	lengths []int64
}

func newSplice(parts []io.ReaderAt, lengths []int64) *splice { return &splice{parts, lengths} }

func totalLen(lengths []int64) int64 {
	var t int64
	for _, n := range lengths {
		t += n
	}
	return t
}

func (s *splice) ReadAt(p []byte, off int64) (int, error) {
	read := 0
	for i, n := range s.lengths {
		if off >= n {
			off -= n
			continue
		}
		for len(p) > 0 && off < n {
			want := p
			if int64(len(want)) > n-off {
				want = want[:n-off]
			}
			got, err := s.parts[i].ReadAt(want, off)
			read += got
			p = p[got:]
			off += int64(got)
			if err != nil && !errors.Is(err, io.EOF) {
				return read, err
			}
			if got < len(want) {
				return read, io.ErrUnexpectedEOF
			}
		}
		if len(p) == 0 {
			return read, nil
		}
		off = 0
	}
	return read, io.EOF
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
