//go:build unix

package export

import (
	"context"
	"errors"
	"fmt"
	"os"
	"syscall"
	"time"
)

// lock takes the lock of path: an flock(2) on a lock file beside it,
// which the system releases if the process dies, so a killed run never
// leaves a lock that blocks the next. It waits for another holder until
// ctx is cancelled. The returned function releases the lock and removes
// the lock file.
func lock(ctx context.Context, path string) (func(), error) {
	name := lockName(path)
	for {
		f, err := os.OpenFile(name, os.O_CREATE|os.O_RDWR, 0o644)
		if err != nil {
			return nil, fmt.Errorf("%s: cannot make the lock file %s: %w", path, name, err)
		}
		for {
			err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
			if err == nil {
				break
			}
			if !errors.Is(err, syscall.EWOULDBLOCK) && !errors.Is(err, syscall.EINTR) {
				f.Close()
				return nil, fmt.Errorf("%s: cannot lock %s: %w", path, name, err)
			}
			select {
			case <-ctx.Done():
				f.Close()
				return nil, ctx.Err()
			case <-time.After(20 * time.Millisecond):
			}
		}
		// The holder before us removes the lock file as it lets go: a lock
		// on a file no longer under that name locks nothing, so try again.
		held, errHeld := f.Stat()
		now, errNow := os.Stat(name)
		if errHeld == nil && errNow == nil && os.SameFile(held, now) {
			return func() {
				os.Remove(name)
				f.Close()
			}, nil
		}
		f.Close()
	}
}
