package capture

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
)

// StreamFile is what a WAVStream writes to: an *os.File, or in tests a
// file that fails on purpose.
type StreamFile interface {
	io.WriterAt
	Sync() error
	Close() error
}

// ErrWAVSizeLimit is returned when a stream reaches the 4 GiB a RIFF file
// can hold (its sizes are 32-bit; RIFF 1.0, 3-2).
var ErrWAVSizeLimit = errors.New("the WAV file reached its 4 GiB size limit (RIFF sizes are 32-bit)")

// WAVStream writes a WAV file while its samples arrive, so that a file cut
// off at any moment (a kill, a crash, a power cut) is still a valid WAV: the
// header's sizes are rewritten, and the file synced, at every Commit, and
// samples that reached the file after the last Commit (at a Flush, or when
// the buffer filled) follow the data chunk its header states, where
// capture.Open finds and reads them. It never holds more than one buffer of
// samples in memory.
//
// A WAVStream is not safe for concurrent use; a recorder calls it from its
// own goroutine, never from an audio callback.
type WAVStream struct {
	name     string
	file     StreamFile
	channels int
	kind     sampleKind
	tag      uint16
	rate     uint32
	enc      *sampleEncoder
	fields   wavSizeFields
	dataAt   int64 // file offset of the first sample byte
	frames   int64 // whole frames on disk or in buf
	flushed  int64 // data bytes handed to the file so far
	buf      []byte
	err      error // first write error; the stream takes no more samples
	closed   bool
}

// WAVStreamFormat says what a WAVStream stores: a whole number of hertz,
// 1 to MaxChannels channels and a WAV sample type (see WriteWAV).
type WAVStreamFormat struct {
	RateHz     int
	Channels   int
	SampleType string
}

// CreateWAVStream creates path, which must not exist yet (a recording never
// overwrites a file), and starts a WAV stream in it.
func CreateWAVStream(path string, format WAVStreamFormat) (*WAVStream, error) {
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, os.ErrExist) {
			return nil, fmt.Errorf("%s already exists; a recording never overwrites a file, choose another name", path)
		}
		if dir := filepath.Dir(path); errors.Is(err, fs.ErrNotExist) {
			if _, serr := os.Stat(dir); errors.Is(serr, fs.ErrNotExist) {
				return nil, fmt.Errorf("%s: the folder %s does not exist; create it or record elsewhere", path, dir)
			}
		}
		return nil, err
	}
	s, err := NewWAVStream(path, f, format)
	if err != nil {
		f.Close()
		os.Remove(path)
		return nil, err
	}
	return s, nil
}

// NewWAVStream starts a WAV stream in file, named name in messages, and
// writes its header (for zero frames) at once.
func NewWAVStream(name string, file StreamFile, format WAVStreamFormat) (*WAVStream, error) {
	if format.Channels < 1 || format.Channels > MaxChannels {
		return nil, fmt.Errorf("%s: %d channels: expected 1 to %d", name, format.Channels, MaxChannels)
	}
	if format.RateHz < 1 || format.RateHz > maxWAVRateHz {
		return nil, fmt.Errorf("%s: sample rate %d Hz: expected 1 to %g Hz", name, format.RateHz, float64(maxWAVRateHz))
	}
	kind, tag, err := wavSampleKind(format.SampleType)
	if err != nil {
		return nil, fmt.Errorf("%s: %v", name, err)
	}
	s := &WAVStream{name: name, file: file, channels: format.Channels, kind: kind, tag: tag, rate: uint32(format.RateHz)}
	s.enc = newSampleEncoder(kind, false, format.Channels, func(int) (float64, float64) {
		if kind == kindFloat32 || kind == kindFloat64 {
			return 1, 0
		}
		fullScale := float64(uint64(1) << (8*kindSize[kind] - 1))
		if kind == kindUint8 {
			return 1 / fullScale, -1
		}
		return 1 / fullScale, 0
	})
	header, fields, err := wavHeader(s.channels, s.rate, kind, tag, 0, false)
	if err != nil {
		return nil, fmt.Errorf("%s: %v", name, err)
	}
	s.fields, s.dataAt = fields, int64(len(header))
	if _, err := file.WriteAt(header, 0); err != nil {
		return nil, fmt.Errorf("write %s: %w", name, err)
	}
	s.buf = make([]byte, 0, 1<<16)
	return s, nil
}

// Frames is the number of frames taken so far (committed or not).
func (s *WAVStream) Frames() int64 { return s.frames }

// frameBytes is the size of one stored frame.
func (s *WAVStream) frameBytes() int64 { return int64(s.channels * kindSize[s.kind]) }

// Write appends interleaved frames (±1.0 full scale for integer types);
// len(interleaved) must be a whole number of frames. After a write error
// every call returns that error.
func (s *WAVStream) Write(interleaved []float32) error { return s.write(nil, interleaved) }

// WriteKept is Write, and it also puts into kept what a reader of the
// finished file gets for these frames (as ReadBack), decoded from the very
// bytes written, so a live view fed kept sees exactly the samples the file
// keeps without encoding them twice. kept must be as long as interleaved;
// the two may be the same slice. On an error kept's content is undefined.
func (s *WAVStream) WriteKept(kept, interleaved []float32) error {
	if len(kept) != len(interleaved) {
		return fmt.Errorf("%s: %d kept values for %d samples", s.name, len(kept), len(interleaved))
	}
	return s.write(kept, interleaved)
}

// write encodes interleaved into the buffer a buffer-full at a time,
// flushing each full buffer; kept (nil for none) gets each buffer-full's
// values decoded back. The frames that fit under the RIFF size limit are
// taken before the limit's error.
func (s *WAVStream) write(kept, interleaved []float32) error {
	if s.err != nil {
		return s.err
	}
	if len(interleaved)%s.channels != 0 {
		return fmt.Errorf("%s: %d samples are not a whole number of %d-channel frames", s.name, len(interleaved), s.channels)
	}
	fb := s.frameBytes()
	frames := int64(len(interleaved) / s.channels)
	fit := min(frames, (math.MaxUint32-1-s.dataAt)/fb-s.frames)
	for at := int64(0); at < fit; {
		n := min(fit-at, max((int64(cap(s.buf)-len(s.buf)))/fb-1, 1))
		from, to := int(at)*s.channels, int(at+n)*s.channels
		start := len(s.buf)
		s.buf = s.enc.appendFrames(s.buf, interleaved[from:to], s.channels)
		if kept != nil {
			s.decodeKept(kept[from:to], s.buf[start:])
		}
		s.frames += n
		at += n
		if len(s.buf) >= cap(s.buf)-int(fb) {
			if err := s.flush(); err != nil {
				return err
			}
		}
	}
	if fit < frames {
		return s.roomFor(frames - fit)
	}
	return nil
}

// decodeKept decodes the interleaved stored frames of b into kept as
// capture.Open decodes them.
func (s *WAVStream) decodeKept(kept []float32, b []byte) {
	size := kindSize[s.kind]
	fb := s.channels * size
	var col [1024]float32
	for at := 0; at*fb < len(b); at += len(col) {
		n := min(len(col), len(b)/fb-at)
		for c := 0; c < s.channels; c++ {
			scale, offset := float32(1/s.enc.inverse[c]), float32(s.enc.offset[c])
			decodeInto(col[:n], b[at*fb+c*size:], fb, s.kind, false, scale, offset)
			for i, v := range col[:n] {
				kept[(at+i)*s.channels+c] = v
			}
		}
	}
}

// WriteSilence appends frames of zeros: the mark of samples that were
// lost, so that every later sample keeps its place in time.
func (s *WAVStream) WriteSilence(frames int64) error {
	zero := make([]float32, s.channels*1024)
	for frames > 0 {
		n := min(frames, 1024)
		if err := s.Write(zero[:n*int64(s.channels)]); err != nil {
			return err
		}
		frames -= n
	}
	return nil
}

// roomFor checks that n more frames still fit under the RIFF size limit.
func (s *WAVStream) roomFor(n int64) error {
	data := (s.frames + n) * s.frameBytes()
	if s.dataAt+data+1 > math.MaxUint32 {
		s.err = fmt.Errorf("%s: %w", s.name, ErrWAVSizeLimit)
		return s.err
	}
	return nil
}

// flush hands the buffered samples to the file. On a short write only the
// whole frames that reached the file count.
func (s *WAVStream) flush() error {
	if len(s.buf) == 0 {
		return nil
	}
	n, err := s.file.WriteAt(s.buf, s.dataAt+s.flushed)
	if err != nil {
		kept := (s.flushed + int64(n)) / s.frameBytes()
		s.flushed = kept * s.frameBytes()
		s.frames = kept
		s.buf = s.buf[:0]
		s.err = fmt.Errorf("write %s: %w", s.name, err)
		return s.err
	}
	s.flushed += int64(n)
	s.buf = s.buf[:0]
	return nil
}

// Flush hands the buffered samples to the file without rewriting the
// header or syncing: cheap enough for every block a recorder takes, so
// that a process killed at any moment loses none of them (the operating
// system keeps what was written; only a power cut needs the Commit's sync).
func (s *WAVStream) Flush() error {
	if s.err != nil {
		return s.err
	}
	return s.flush()
}

// Commit writes the buffered samples, rewrites the header's sizes to cover
// every whole frame on disk and syncs the file. After a write error it still
// rewrites the sizes for what reached the file, so that stays readable, and
// returns the write error.
func (s *WAVStream) Commit() error {
	werr := s.flush()
	if err := s.writeSizes(false); err != nil && werr == nil {
		werr = err
	}
	if err := s.file.Sync(); err != nil && werr == nil {
		werr = fmt.Errorf("sync %s: %w", s.name, err)
	}
	return werr
}

// writeSizes rewrites the RIFF, fact and data sizes for the frames flushed.
func (s *WAVStream) writeSizes(padded bool) error {
	frames := s.flushed / s.frameBytes()
	header, _, err := wavHeader(s.channels, s.rate, s.kind, s.tag, frames, padded)
	if err != nil {
		return fmt.Errorf("%s: %v", s.name, err)
	}
	for _, at := range []int64{s.fields.riff, s.fields.fact, s.fields.data} {
		if at == 0 {
			continue
		}
		if _, err := s.file.WriteAt(header[at:at+4], at); err != nil {
			return fmt.Errorf("write %s header: %w", s.name, err)
		}
	}
	return nil
}

// Close commits what is left, adds the RIFF pad byte after an odd-sized
// data chunk, and closes the file. It returns the first error the stream
// met, so a recording stopped by a full disk reports that.
func (s *WAVStream) Close() error {
	if s.closed {
		return s.err
	}
	s.closed = true
	err := s.Commit()
	if data := s.flushed; err == nil && data&1 == 1 {
		if _, perr := s.file.WriteAt([]byte{0}, s.dataAt+data); perr == nil {
			err = s.writeSizes(true)
		}
	}
	if cerr := s.file.Close(); cerr != nil && err == nil {
		err = fmt.Errorf("close %s: %w", s.name, cerr)
	}
	if s.err != nil {
		return s.err
	}
	return err
}
