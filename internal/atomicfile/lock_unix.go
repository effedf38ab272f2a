//go:build unix

package atomicfile

import (
	"errors"
	"fmt"
	"os"

	"golang.org/x/sys/unix"
)

// ErrLocked is wrapped when another process holds a directory's lock.
var ErrLocked = errors.New("another sluice process is writing there")

// LockDir takes an exclusive advisory lock (flock) on the directory itself,
// so no lock file is left behind, and returns the function that releases
// it. It does not wait: a directory another sluice process is writing is
// refused with [ErrLocked]. The kernel releases the lock if the process
// dies.
func LockDir(dir string) (unlock func(), err error) {
	d, err := os.Open(dir)
	if err != nil {
		return nil, err
	}
	if err := unix.Flock(int(d.Fd()), unix.LOCK_EX|unix.LOCK_NB); err != nil {
		d.Close()
		if errors.Is(err, unix.EWOULDBLOCK) {
			return nil, fmt.Errorf("%s: %w", dir, ErrLocked)
		}
		return nil, fmt.Errorf("atomicfile: lock %s: %w", dir, err)
	}
	return func() { unix.Flock(int(d.Fd()), unix.LOCK_UN); d.Close() }, nil
}
