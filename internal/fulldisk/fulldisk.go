// Package fulldisk makes WAV streams on a disk that fills up: the tests of
// the recorder and of the window give one to a recording to see it stop
// with what it wrote still readable, without filling a real disk.
package fulldisk

import (
	"os"
	"syscall"

	"spotloom/capture"
)

// Create returns a live.Options.Create that makes the WAV at path as a
// new file (never replacing one) on which the first limit bytes fit and
// every write beyond them fails with ENOSPC, as write(2) does on a full
// disk: a write that straddles the limit stores its part before it.
func Create(limit int64) func(path string, f capture.WAVStreamFormat) (*capture.WAVStream, error) {
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
