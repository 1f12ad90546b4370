// Package faultydisk makes WAV streams on a disk that misbehaves: one that
// fills up, one that stalls. The tests of the recorder and of the window
// give one to a recording to see it stop with what it wrote still
// readable, or lose frames and mark them, without a real faulty disk.
package faultydisk

import (
	"os"
	"sync"
	"syscall"
	"time"

	"spotloom/capture"
)

// Full returns a live.Options.Create that makes the WAV at path as a
// new file (never replacing one) on which the first limit bytes fit and
// every write beyond them fails with ENOSPC, as write(2) does on a full
// disk: a write that straddles the limit stores its part before it.
func Full(limit int64) func(path string, f capture.WAVStreamFormat) (*capture.WAVStream, error) {
	return func(path string, f capture.WAVStreamFormat) (*capture.WAVStream, error) {
		file, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o644)
		if err != nil {
			return nil, err
		}
		return capture.NewWAVStream(path, &disk{f: file, limit: limit}, f)
	}
}

// disk is a file that holds limit bytes.
type disk struct {
	f     *os.File
	limit int64
}

func (d *disk) WriteAt(b []byte, off int64) (int, error) {
	if off+int64(len(b)) <= d.limit {
		return d.f.WriteAt(b, off)
	}
	room := max(d.limit-off, 0)
	n, _ := d.f.WriteAt(b[:room], off)
	return n, syscall.ENOSPC
}

func (d *disk) Sync() error  { return d.f.Sync() }
func (d *disk) Close() error { return d.f.Close() }

// Stalling returns a live.Options.Create whose disk stops answering for d
// once, at the first write that reaches byte at, as a disk busy with
// another program or spun down may.
func Stalling(at int64, d time.Duration) func(path string, f capture.WAVStreamFormat) (*capture.WAVStream, error) {
	return func(path string, f capture.WAVStreamFormat) (*capture.WAVStream, error) {
		file, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o644)
		if err != nil {
			return nil, err
		}
		return capture.NewWAVStream(path, &stalling{f: file, at: at, d: d}, f)
	}
}

// stalling is a file whose writes wait for d once, at byte at.
type stalling struct {
	f    *os.File
	at   int64
	d    time.Duration
	once sync.Once
}

func (s *stalling) WriteAt(b []byte, off int64) (int, error) {
	if off+int64(len(b)) > s.at {
		s.once.Do(func() { time.Sleep(s.d) })
	}
	return s.f.WriteAt(b, off)
}

func (s *stalling) Sync() error  { return s.f.Sync() }
func (s *stalling) Close() error { return s.f.Close() }
