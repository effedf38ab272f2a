package atomicfile

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"sync"

	"golang.org/x/sys/unix"
)

// openUnnamed opens a file without a name in dir (O_TMPFILE); ok is false
// where the file system cannot, and the caller falls back to a named
// temporary file.
func openUnnamed(dir string, perm os.FileMode) (*os.File, bool) {
	if !procFD() {
		return nil, false // linking needs /proc/self/fd
	}
	fd, err := unix.Open(dir, unix.O_TMPFILE|unix.O_WRONLY|unix.O_CLOEXEC, uint32(perm.Perm()))
	if err != nil {
		return nil, false
	}
	return os.NewFile(uintptr(fd), filepath.Join(dir, "(unnamed)")), true
}

var procFD = sync.OnceValue(func() bool {
	_, err := os.Stat("/proc/self/fd")
	return err == nil
})

// linkUnnamed gives the unnamed file f the name path, which must not exist.
func linkUnnamed(f *os.File, path string) error {
	if err := unix.Linkat(unix.AT_FDCWD, "/proc/self/fd/"+strconv.Itoa(int(f.Fd())), unix.AT_FDCWD, path, unix.AT_SYMLINK_FOLLOW); err != nil {
		return fmt.Errorf("atomicfile: link %s: %w", path, err)
	}
	return nil
}

// writeInSet writes data to path from a file that has no name until it is
// complete: opened with O_TMPFILE in path's directory, written, synced,
// then linked at path (the old file removed first; inside a set the
// manifest is already gone, so no reader takes the directory for a
// complete set meanwhile). A process killed at any point leaves no
// temporary file. Where the file system cannot make unnamed files it
// falls back to [Write].
func writeInSet(path string, data []byte, perm os.FileMode) error {
	f, ok := openUnnamed(filepath.Dir(path), perm)
	if !ok {
		return Write(path, data, perm)
	}
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
	return linkUnnamed(f, path)
}
