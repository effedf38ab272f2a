package atomicfile

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"

	"golang.org/x/sys/unix"
)

// writeInSet writes data to path from a file that has no name until it is
// complete: opened with O_TMPFILE in path's directory, written, synced,
// then linked at path (the old file removed first; inside a set the
// manifest is already gone, so no reader takes the directory for a
// complete set meanwhile). A process killed at any point leaves no
// temporary file. Where the file system cannot make unnamed files it
// falls back to [Write].
func writeInSet(path string, data []byte, perm os.FileMode) error {
	dir := filepath.Dir(path)
	fd, err := unix.Open(dir, unix.O_TMPFILE|unix.O_WRONLY|unix.O_CLOEXEC, uint32(perm.Perm()))
	if err != nil {
		if errors.Is(err, unix.EOPNOTSUPP) || errors.Is(err, unix.EISDIR) || errors.Is(err, unix.EINVAL) {
			return Write(path, data, perm)
		}
		return fmt.Errorf("atomicfile: %s: %w", dir, err)
	}
	f := os.NewFile(uintptr(fd), path)
	defer f.Close()
	if err := f.Chmod(perm); err != nil {
		return err
	}
	if _, err := f.Write(data); err != nil {
		return err
	}
	if err := f.Sync(); err != nil {
		return err
	}
	if err := os.Remove(path); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	if err := unix.Linkat(unix.AT_FDCWD, "/proc/self/fd/"+strconv.Itoa(int(f.Fd())), unix.AT_FDCWD, path, unix.AT_SYMLINK_FOLLOW); err != nil {
		return fmt.Errorf("atomicfile: link %s: %w", path, err)
	}
	return nil
}
