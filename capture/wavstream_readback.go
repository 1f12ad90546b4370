package capture

// ReadBack writes into dst what a reader of the finished file gets for the
// interleaved frames given to Write: each value rounded and clipped to the
// stored type and decoded as capture.Open decodes it. A live view fed
// these values sees exactly the samples the file keeps. dst must be as
// long as interleaved; the two may be the same slice.
func (s *WAVStream) ReadBack(dst, interleaved []float32) {
	size := kindSize[s.kind]
	fb := s.channels * size
	const chunk = 1024
	var buf []byte
	col := make([]float32, chunk)
	for at := 0; at < len(interleaved); at += chunk * s.channels {
		block := interleaved[at:min(at+chunk*s.channels, len(interleaved))]
		buf = buf[:0]
		for i, v := range block {
			buf = s.enc.append(buf, i%s.channels, v)
		}
		n := len(block) / s.channels
		for c := 0; c < s.channels; c++ {
			scale, offset := float32(1/s.enc.inverse[c]), float32(s.enc.offset[c])
			decodeInto(col[:n], buf[c*size:], fb, s.kind, false, scale, offset)
			for i := 0; i < n; i++ {
				dst[at+i*s.channels+c] = col[i]
			}
		}
	}
}
