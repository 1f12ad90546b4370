//go:build !unix

package export

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"time"
)

// staleLock is how old a lock file must be to be taken for one a killed
// run left: without flock(2) the system does not release it.
const staleLock = 10 * time.Minute

// lock takes the lock of path: a lock file beside it, made only if it is
// not there. It waits for another holder until ctx is cancelled. The
// returned function releases the lock by removing the file.
func lock(ctx context.Context, path string) (func(), error) {
	name := lockName(path)
	for {
		f, err := os.OpenFile(name, os.O_CREATE|os.O_EXCL|os.O_RDWR, 0o644)
		if err == nil {
			f.Close()
			return func() { os.Remove(name) }, nil
		}
		if !errors.Is(err, fs.ErrExist) {
			return nil, fmt.Errorf("%s: cannot make the lock file %s: %w", path, name, err)
		}
		if st, err := os.Stat(name); err == nil && time.Since(st.ModTime()) > staleLock {
			os.Remove(name)
			continue
		}
		select {
		case <-ctx.Done():
			return nil, ctx.Err()
		case <-time.After(20 * time.Millisecond):
		}
	}
}
