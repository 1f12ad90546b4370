package capture

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// WriteWAV writes rec as a RIFF/WAVE file with sample type "uint8", "int16",
// "int24", "int32", "float32" or "float64". Samples are written as given
// with ±1.0 as full scale; integer samples are rounded and clipped to the
// range. Captures with more than two channels or more than 16 bits are
// written as WAVE_FORMAT_EXTENSIBLE, as that definition asks; IEEE float
// files carry a fact chunk. The sample rate must be a whole number of hertz.
func WriteWAV(w io.Writer, rec *Recording, sampleType string) error {
	if err := rec.Validate(); err != nil {
		return fmt.Errorf("write WAV: %v", err)
	}
	if len(rec.Channels) > MaxChannels {
		return fmt.Errorf("write WAV: %d channels: expected at most %d", len(rec.Channels), MaxChannels)
	}
	rate := math.Round(rec.SampleRateHz)
	if rate != rec.SampleRateHz || rate > math.MaxUint32 {
		return fmt.Errorf("write WAV: sample rate %g Hz: expected a whole number of hertz below 2^32 (WAV stores an integer rate)", rec.SampleRateHz)
	}
	kind, tag, err := wavSampleKind(sampleType)
	if err != nil {
		return fmt.Errorf("write WAV: %v", err)
	}
	nch := len(rec.Channels)
	size := kindSize[kind]
	frames := int64(rec.Frames())
	dataBytes := frames * int64(nch*size)
	header, _, err := wavHeader(nch, uint32(rate), kind, tag, frames, true)
	if err != nil {
		return fmt.Errorf("write WAV: %v", err)
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.Write(header)
	var fullScale float64
	if kind != kindFloat32 && kind != kindFloat64 {
		fullScale = float64(uint64(1) << (8*size - 1))
	}
	if err := writeInterleaved(bw, rec, kind, false, func(int) (float64, float64) {
		if fullScale == 0 {
			return 1, 0
		}
		if kind == kindUint8 {
			return 1 / fullScale, -1
		}
		return 1 / fullScale, 0
	}); err != nil {
		return fmt.Errorf("write WAV: %w", err)
	}
	if dataBytes&1 == 1 {
		bw.WriteByte(0) // RIFF pad byte
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("write WAV: %w", err)
	}
	return nil
}

// wavSampleKind maps a WAV sample type name to its kind and format tag.
func wavSampleKind(sampleType string) (sampleKind, uint16, error) {
	switch sampleType {
	case "uint8":
		return kindUint8, waveFormatPCM, nil
	case "int16":
		return kindInt16, waveFormatPCM, nil
	case "int24":
		return kindInt24, waveFormatPCM, nil
	case "int32":
		return kindInt32, waveFormatPCM, nil
	case "float32":
		return kindFloat32, waveFormatIEEEFloat, nil
	case "float64":
		return kindFloat64, waveFormatIEEEFloat, nil
	}
	return 0, 0, fmt.Errorf("sample type %q: expected uint8, int16, int24, int32, float32 or float64", sampleType)
}

// wavSizeFields are the byte offsets of the header's size fields, which a
// streaming writer rewrites as samples arrive.
type wavSizeFields struct {
	riff, fact, data int64 // fact is 0 when there is no fact chunk
}

// wavHeader builds the RIFF, fmt, optional fact and data chunk headers of a
// file with the given number of frames. padded counts the RIFF pad byte
// after an odd data chunk in the RIFF size (a finished file); a file still
// being written has no pad byte yet. Captures with more than two channels or
// more than 16 bits use WAVE_FORMAT_EXTENSIBLE, as that definition asks;
// IEEE float files carry a fact chunk.
func wavHeader(nch int, rate uint32, kind sampleKind, tag uint16, frames int64, padded bool) ([]byte, wavSizeFields, error) {
	size := kindSize[kind]
	dataBytes := frames * int64(nch*size)
	extensible := nch > 2 || 8*size > 16
	fmtSize := fmtPCMSize
	switch {
	case extensible:
		fmtSize = fmtExtensibleSize
	case tag == waveFormatIEEEFloat:
		fmtSize = fmtExSize
	}
	var fields wavSizeFields
	header := make([]byte, 0, 80)
	le := binary.LittleEndian
	header = append(header, idRIFF[:]...)
	riffSize := 4 + chunkHeaderSize + int64(fmtSize) + chunkHeaderSize + dataBytes
	if padded {
		riffSize += dataBytes & 1
	}
	if tag == waveFormatIEEEFloat {
		riffSize += chunkHeaderSize + 4
	}
	if riffSize > math.MaxUint32 {
		return nil, fields, fmt.Errorf("%d bytes of samples: expected under 4 GiB (RIFF sizes are 32-bit)", dataBytes)
	}
	fields.riff = int64(len(header))
	header = le.AppendUint32(header, uint32(riffSize))
	header = append(header, idWAVE[:]...)
	header = append(header, idFmt[:]...)
	header = le.AppendUint32(header, uint32(fmtSize))
	storedTag := tag
	if extensible {
		storedTag = waveFormatExtensible
	}
	header = le.AppendUint16(header, storedTag)
	header = le.AppendUint16(header, uint16(nch))
	header = le.AppendUint32(header, rate)
	header = le.AppendUint32(header, rate*uint32(nch*size))
	header = le.AppendUint16(header, uint16(nch*size))
	header = le.AppendUint16(header, uint16(8*size))
	switch {
	case extensible:
		header = le.AppendUint16(header, extensibleCbSize)
		header = le.AppendUint16(header, uint16(8*size)) // wValidBitsPerSample
		header = le.AppendUint32(header, 0)              // dwChannelMask: no speaker positions
		sub := ksSubtype(tag, binary.LittleEndian)
		header = append(header, sub[:]...)
	case tag == waveFormatIEEEFloat:
		header = le.AppendUint16(header, 0) // cbSize
	}
	if tag == waveFormatIEEEFloat {
		header = append(header, idFact[:]...)
		header = le.AppendUint32(header, 4)
		fields.fact = int64(len(header))
		header = le.AppendUint32(header, uint32(frames)) // dwSampleLength
	}
	header = append(header, idData[:]...)
	fields.data = int64(len(header))
	header = le.AppendUint32(header, uint32(dataBytes))
	return header, fields, nil
}

// writeInterleaved writes the samples frame by frame in the given kind. For
// each channel, scaleOf gives the scale and offset of the stored values
// (v = stored·scale + offset), so stored = (v − offset)/scale.
func writeInterleaved(bw *bufio.Writer, rec *Recording, kind sampleKind, bigEndian bool, scaleOf func(c int) (scale, offset float64)) error {
	enc := newSampleEncoder(kind, bigEndian, len(rec.Channels), scaleOf)
	frames := rec.Frames()
	buf := make([]byte, 0, 1<<16)
	for i := 0; i < frames; i++ {
		for c := range rec.Channels {
			buf = enc.append(buf, c, rec.Channels[c].Samples[i])
		}
		if len(buf) >= 1<<16-8*MaxRawChannels {
			if _, err := bw.Write(buf); err != nil {
				return err
			}
			buf = buf[:0]
		}
	}
	_, err := bw.Write(buf)
	return err
}

// sampleEncoder turns values back into stored samples of one kind.
type sampleEncoder struct {
	kind      sampleKind
	bigEndian bool
	inverse   []float64 // 1/scale per channel
	offset    []float64
	lo, hi    float64 // the kind's integer range
}

func newSampleEncoder(kind sampleKind, bigEndian bool, channels int, scaleOf func(int) (float64, float64)) *sampleEncoder {
	e := &sampleEncoder{kind: kind, bigEndian: bigEndian, inverse: make([]float64, channels), offset: make([]float64, channels)}
	for c := range e.inverse {
		s, o := scaleOf(c)
		e.inverse[c], e.offset[c] = 1/s, o
	}
	switch kind {
	case kindInt8:
		e.lo, e.hi = math.MinInt8, math.MaxInt8
	case kindUint8:
		e.lo, e.hi = 0, math.MaxUint8
	case kindInt16:
		e.lo, e.hi = math.MinInt16, math.MaxInt16
	case kindUint16:
		e.lo, e.hi = 0, math.MaxUint16
	case kindInt24:
		e.lo, e.hi = -1<<23, 1<<23-1
	case kindInt32:
		e.lo, e.hi = math.MinInt32, math.MaxInt32
	case kindUint32:
		e.lo, e.hi = 0, math.MaxUint32
	}
	return e
}

// appendFrames encodes the interleaved frames x of nch channels as append
// does, each kind little-endian in a loop of its own (a WAV's kinds: the
// kind is decided once per block, not per sample).
func (e *sampleEncoder) appendFrames(buf []byte, x []float32, nch int) []byte {
	fast := e.kind == kindInt16 || e.kind == kindInt24 || e.kind == kindFloat32
	if e.bigEndian || len(e.inverse) != nch || !fast {
		for i, v := range x {
			buf = e.append(buf, i%nch, v)
		}
		return buf
	}
	size := kindSize[e.kind]
	at := len(buf)
	buf = slices.Grow(buf, len(x)*size)[:at+len(x)*size]
	out := buf[at:]
	step := nch * size
	// One loop per kind, so that the kind is not tested for every sample.
	for c := 0; c < nch; c++ {
		inv, off := e.inverse[c], e.offset[c]
		j := c * size
		switch e.kind {
		case kindFloat32:
			for i := c; i < len(x); i, j = i+nch, j+step {
				binary.LittleEndian.PutUint32(out[j:j+4], math.Float32bits(float32((float64(x[i])-off)*inv)))
			}
		case kindInt16:
			for i := c; i < len(x); i, j = i+nch, j+step {
				u := uint32(e.integer((float64(x[i]) - off) * inv))
				o := out[j : j+2 : j+2]
				o[0], o[1] = byte(u), byte(u>>8)
			}
		default: // kindInt24
			for i := c; i < len(x); i, j = i+nch, j+step {
				u := uint32(e.integer((float64(x[i]) - off) * inv))
				o := out[j : j+3 : j+3]
				o[0], o[1], o[2] = byte(u), byte(u>>8), byte(u>>16)
			}
		}
	}
	return buf
}

// roundHalfAway is math.Round(x), to the nearest integer with halves away
// from zero, through math.Trunc, which the compiler makes one instruction
// where the processor has it (math.Round it does not, on amd64): the
// writers' cost per sample. x − Trunc(x) is exact, so the result is too.
func roundHalfAway(x float64) float64 {
	t := math.Trunc(x)
	if math.Abs(x-t) >= 0.5 {
		t += math.Copysign(1, x)
	}
	return t
}

// integer is the stored integer of scaled value x: rounded to nearest,
// clipped to the kind's range, NaN as 0.
func (e *sampleEncoder) integer(x float64) int64 {
	x = roundHalfAway(x)
	switch {
	case x != x:
		x = 0
	case x < e.lo:
		x = e.lo
	case x > e.hi:
		x = e.hi
	}
	return int64(x)
}

// append encodes value v of channel c, rounding to nearest and clipping
// integers to their range (NaN becomes 0).
func (e *sampleEncoder) append(buf []byte, c int, v float32) []byte {
	x := (float64(v) - e.offset[c]) * e.inverse[c]
	switch e.kind {
	case kindFloat32:
		return e.put32(buf, math.Float32bits(float32(x)))
	case kindFloat64:
		if e.bigEndian {
			return binary.BigEndian.AppendUint64(buf, math.Float64bits(x))
		}
		return binary.LittleEndian.AppendUint64(buf, math.Float64bits(x))
	}
	x = float64(e.integer(x))
	switch e.kind {
	case kindInt8, kindUint8:
		return append(buf, byte(int64(x)))
	case kindInt16, kindUint16:
		u := uint16(int64(x))
		if e.bigEndian {
			return append(buf, byte(u>>8), byte(u))
		}
		return append(buf, byte(u), byte(u>>8))
	case kindInt24:
		u := uint32(int64(x))
		if e.bigEndian {
			return append(buf, byte(u>>16), byte(u>>8), byte(u))
		}
		return append(buf, byte(u), byte(u>>8), byte(u>>16))
	default: // int32, uint32
		return e.put32(buf, uint32(int64(x)))
	}
}

func (e *sampleEncoder) put32(buf []byte, u uint32) []byte {
	if e.bigEndian {
		return binary.BigEndian.AppendUint32(buf, u)
	}
	return binary.LittleEndian.AppendUint32(buf, u)
}

// WriteRaw writes rec as bare samples following layout: the header bytes
// as zeros, then the samples interleaved or planar. Values are turned back
// into stored numbers with the layout's scale and offset (or full scale for
// integers without a scale), rounded and clipped. The layout's channel count
// must match the recording; its rate, names and units are not checked, so
// write the layout with WriteLayoutFile to describe the file.
func WriteRaw(w io.Writer, rec *Recording, layout RawLayout) error {
	if err := rec.Validate(); err != nil {
		return fmt.Errorf("write raw: %v", err)
	}
	if err := layout.Validate(); err != nil {
		return fmt.Errorf("write raw: layout: %v", err)
	}
	if layout.Channels != len(rec.Channels) {
		return fmt.Errorf("write raw: layout has %d channels, recording has %d", layout.Channels, len(rec.Channels))
	}
	kind, big := layout.kind()
	scaleOf := func(c int) (float64, float64) {
		s, o, _ := layout.channelScale(c)
		return s, o
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	if _, err := bw.Write(make([]byte, layout.HeaderBytes)); err != nil {
		return fmt.Errorf("write raw: %w", err)
	}
	if layout.Interleaved {
		if err := writeInterleaved(bw, rec, kind, big, scaleOf); err != nil {
			return fmt.Errorf("write raw: %w", err)
		}
	} else {
		enc := newSampleEncoder(kind, big, len(rec.Channels), scaleOf)
		buf := make([]byte, 0, 1<<16)
		for c, ch := range rec.Channels {
			for _, v := range ch.Samples {
				buf = enc.append(buf, c, v)
				if len(buf) >= 1<<16-8 {
					bw.Write(buf)
					buf = buf[:0]
				}
			}
		}
		bw.Write(buf)
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("write raw: %w", err)
	}
	return nil
}

// WriteCSV writes rec as comma-separated text: the preamble lines as they
// are, a header row "time (s),NAME (UNIT),...", then one row per frame with
// the time i/rate and each sample in the shortest form that reads back to
// the same float32. Fields are quoted as RFC 4180 asks when they hold a
// comma, a quote or a line break.
func WriteCSV(w io.Writer, rec *Recording, preamble []string) error {
	if err := rec.Validate(); err != nil {
		return fmt.Errorf("write CSV: %v", err)
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	for _, line := range preamble {
		line = strings.NewReplacer("\r\n", " ", "\n", " ", "\r", " ").Replace(line)
		bw.WriteString(line)
		bw.WriteString("\r\n")
	}
	fields := []string{"time (s)"}
	for _, c := range rec.Channels {
		name := c.Name
		if c.Unit != "" {
			name += " (" + c.Unit + ")"
		}
		fields = append(fields, name)
	}
	for i, f := range fields {
		if i > 0 {
			bw.WriteByte(',')
		}
		bw.WriteString(quoteCSV(f))
	}
	bw.WriteString("\r\n")
	buf := make([]byte, 0, 256)
	for i := 0; i < rec.Frames(); i++ {
		buf = strconv.AppendFloat(buf[:0], float64(i)/rec.SampleRateHz, 'g', -1, 64)
		for _, c := range rec.Channels {
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, float64(c.Samples[i]), 'g', -1, 32)
		}
		buf = append(buf, '\r', '\n')
		if _, err := bw.Write(buf); err != nil {
			return fmt.Errorf("write CSV: %w", err)
		}
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("write CSV: %w", err)
	}
	return nil
}

// quoteCSV quotes a field as RFC 4180 section 2 rules 6 and 7 ask.
func quoteCSV(s string) string {
	if !strings.ContainsAny(s, ",\"\r\n") && strings.TrimSpace(s) == s {
		return s
	}
	return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
}
