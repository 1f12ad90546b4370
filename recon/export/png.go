package export

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"image"
	"image/png"
	"io"
	"strings"
)

// pngText is one tEXt chunk: a keyword and Latin-1 text.
type pngText struct {
	keyword string
	text    string
}

// encodePNG writes img (image.Gray or image.Gray16) with the standard
// library's encoder and adds, after IHDR and before the first IDAT, a pHYs
// chunk with the pixel pitch and one tEXt chunk per text (PNG §5.6 chunk
// ordering: pHYs before IDAT; tEXt anywhere between IHDR and IEND).
func encodePNG(w io.Writer, img image.Image, pixelsPerMetreX, pixelsPerMetreY uint32, texts []pngText, level png.CompressionLevel) error {
	var extra bytes.Buffer
	var phys [9]byte
	binary.BigEndian.PutUint32(phys[0:], pixelsPerMetreX)
	binary.BigEndian.PutUint32(phys[4:], pixelsPerMetreY)
	phys[8] = pngUnitMetre
	writeChunk(&extra, pngChunkPHYs, phys[:])
	for _, t := range texts {
		if err := checkKeyword(t.keyword); err != nil {
			return err
		}
		data, err := latin1(t.text)
		if err != nil {
			return fmt.Errorf("png tEXt %q: %w", t.keyword, err)
		}
		chunk := make([]byte, 0, len(t.keyword)+1+len(data))
		chunk = append(chunk, t.keyword...)
		chunk = append(chunk, 0)
		chunk = append(chunk, data...)
		writeChunk(&extra, pngChunkTEXt, chunk)
	}
	sw := &spliceWriter{w: w, extra: extra.Bytes()}
	enc := png.Encoder{CompressionLevel: level}
	if err := enc.Encode(sw, img); err != nil {
		return err
	}
	if sw.err != nil {
		return sw.err
	}
	if !sw.spliced {
		return fmt.Errorf("png: the encoder wrote %d bytes, fewer than a signature and IHDR", sw.n)
	}
	return nil
}

// writeChunk appends one chunk: length, type, data and the CRC-32 of type
// and data (PNG §5.3 chunk layout, §5.5 CRC algorithm = ISO 3309 / ITU-T
// V.42, the IEEE polynomial of hash/crc32).
func writeChunk(buf *bytes.Buffer, typ string, data []byte) {
	var n [4]byte
	binary.BigEndian.PutUint32(n[:], uint32(len(data)))
	buf.Write(n[:])
	crc := crc32.NewIEEE()
	crc.Write([]byte(typ))
	crc.Write(data)
	buf.WriteString(typ)
	buf.Write(data)
	binary.BigEndian.PutUint32(n[:], crc.Sum32())
	buf.Write(n[:])
}

// spliceWriter passes the PNG signature and the IHDR chunk through, then
// inserts the extra chunks, then passes the rest. IHDR is always the first
// chunk and always 13 bytes of data (PNG §11.2.2), so its end is at a fixed
// offset; the bytes are checked rather than assumed.
type spliceWriter struct {
	w       io.Writer
	extra   []byte
	head    []byte // the first 33 bytes, kept to check them
	n       int64
	spliced bool
	err     error
}

const pngHeadSize = len(pngSignature) + 4 + 4 + pngIHDRSize + 4

func (s *spliceWriter) Write(p []byte) (int, error) {
	if s.err != nil {
		return 0, s.err
	}
	total := len(p)
	if !s.spliced {
		take := min(len(p), pngHeadSize-len(s.head))
		s.head = append(s.head, p[:take]...)
		if _, err := s.w.Write(p[:take]); err != nil {
			s.err = err
			return 0, err
		}
		s.n += int64(take)
		p = p[take:]
		if len(s.head) < pngHeadSize {
			return total, nil
		}
		if string(s.head[:8]) != pngSignature || binary.BigEndian.Uint32(s.head[8:]) != pngIHDRSize || string(s.head[12:16]) != pngChunkIHDR {
			s.err = fmt.Errorf("png: the encoder's output does not start with a signature and a 13-byte IHDR")
			return 0, s.err
		}
		if _, err := s.w.Write(s.extra); err != nil {
			s.err = err
			return 0, err
		}
		s.n += int64(len(s.extra))
		s.spliced = true
	}
	if len(p) > 0 {
		if _, err := s.w.Write(p); err != nil {
			s.err = err
			return 0, err
		}
		s.n += int64(len(p))
	}
	return total, nil
}

// checkKeyword applies PNG §11.3.4.2: 1 to 79 bytes of printable Latin-1
// (32–126, 161–255), no leading, trailing or consecutive spaces.
func checkKeyword(k string) error {
	if len(k) == 0 || len(k) > pngKeywordMaxLen {
		return fmt.Errorf("png keyword %q: a keyword has 1 to %d bytes", k, pngKeywordMaxLen)
	}
	if k[0] == ' ' || k[len(k)-1] == ' ' || strings.Contains(k, "  ") {
		return fmt.Errorf("png keyword %q: no leading, trailing or double spaces", k)
	}
	for i := 0; i < len(k); i++ {
		if c := k[i]; c < 32 || c > 126 {
			return fmt.Errorf("png keyword %q: byte %d is 0x%02x, keywords here are printable ASCII", k, i, c)
		}
	}
	return nil
}

// latin1 converts UTF-8 text to ISO 8859-1 as tEXt requires (PNG
// §11.3.4.3): NUL is not allowed, line breaks are a single LF, and a
// character outside Latin-1 is an error (callers pass ASCII-escaped JSON).
func latin1(text string) ([]byte, error) {
	out := make([]byte, 0, len(text))
	for i, r := range text {
		switch {
		case r == 0:
			return nil, fmt.Errorf("text has a NUL at byte %d", i)
		case r == '\r':
			continue
		case r > 0xff:
			return nil, fmt.Errorf("character %q at byte %d is not in Latin-1", r, i)
		}
		out = append(out, byte(r))
	}
	return out, nil
}
