package capture

import (
	"errors"
	"fmt"
	"io"
	"runtime"
	"sync"
)

// readBufferBytes is the size of the read buffer each conversion worker
// uses.
const readBufferBytes = 1 << 18

// parallelMinBytes is the size from which a binary file is converted by
// several workers, one contiguous stretch of frames each.
const parallelMinBytes = 8 << 20

// maxReadWorkers caps the workers, and so the buffers, of one read.
const maxReadWorkers = 4

// readFrames reads frames interleaved frames of frameBytes bytes starting
// at start, converting them block by block into dst. Large files are split
// between up to GOMAXPROCS workers (at most maxReadWorkers), each with its
// own fixed buffer; progress is reported from one goroutine at a time.
func readFrames(r io.ReaderAt, start, frames int64, frameBytes int, dst [][]float32, conv frameConverter, progress func(float64), format string) error {
	workers := 1
	if frames*int64(frameBytes) >= parallelMinBytes {
		workers = min(runtime.GOMAXPROCS(0), maxReadWorkers)
	}
	var mu sync.Mutex
	var done int64
	report := func(n int64) {
		if progress == nil {
			return
		}
		mu.Lock()
		done += n
		progress(float64(done) / float64(frames))
		mu.Unlock()
	}
	if workers == 1 {
		return readStretch(r, start, 0, frames, frameBytes, dst, conv, report, format)
	}
	errs := make([]error, workers)
	var wg sync.WaitGroup
	per := (frames + int64(workers) - 1) / int64(workers)
	for w := 0; w < workers; w++ {
		first, last := int64(w)*per, min(int64(w+1)*per, frames)
		if first >= last {
			break
		}
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			errs[w] = readStretch(r, start, first, last, frameBytes, dst, conv, report, format)
		}(w)
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// readStretch converts frames [first, last) of the block at start.
func readStretch(r io.ReaderAt, start, first, last int64, frameBytes int, dst [][]float32, conv frameConverter, report func(int64), format string) error {
	perBlock := int64(max(readBufferBytes/frameBytes, 1))
	buf := make([]byte, perBlock*int64(frameBytes))
	for at := first; at < last; {
		n := min(perBlock, last-at)
		b := buf[:n*int64(frameBytes)]
		if err := readBlock(r, b, start+at*int64(frameBytes), format); err != nil {
			return err
		}
		conv(dst, int(at), b)
		at += n
		report(n)
	}
	return nil
}

// readBlock fills b from offset off, or says where the file ends early.
func readBlock(r io.ReaderAt, b []byte, off int64, format string) error {
	if got, err := r.ReadAt(b, off); err != nil && !(errors.Is(err, io.EOF) && got == len(b)) {
		return &FormatError{Format: format, Place: AtByte(off + int64(got)), Problem: "file ends early: " + err.Error(), Expected: fmt.Sprintf("%d more bytes", int64(len(b)-got))}
	}
	return nil
}
