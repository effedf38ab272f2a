// Package atomicfile writes files so that a reader never sees a half-written
// one: the content goes to a temporary file in the same directory, which is
// synced and then renamed over the destination.
package atomicfile

import (
	"bytes"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
)

// Write writes data to path atomically with the given permissions.
func Write(path string, data []byte, perm os.FileMode) error {
	return WriteFunc(path, perm, func(w io.Writer) error {
		_, err := io.Copy(w, bytes.NewReader(data))
		return err
	})
}

// WriteFunc calls fill with a temporary file in path's directory and, if fill
// succeeds, renames it to path. On any error the temporary file is removed and
// path is left as it was. On Linux the file has no name while fill writes it
// (O_TMPFILE): it is linked under a temporary name only for the instant
// before the rename, so a killed process leaves a temporary file only if
// killed in that instant (and the next [WriteSet] in the directory removes
// it).
func WriteFunc(path string, perm os.FileMode, fill func(w io.Writer) error) (err error) {
	dir := filepath.Dir(path)
	if f, ok := openUnnamed(dir, perm); ok {
		defer f.Close()
		if err = f.Chmod(perm); err != nil {
			return err
		}
		if err = fill(f); err != nil {
			return err
		}
		if err = f.Sync(); err != nil {
			return err
		}
		name := filepath.Join(dir, tempPrefix+filepath.Base(path)+"-"+strconv.FormatUint(rand.Uint64(), 36))
		if err = linkUnnamed(f, name); err != nil {
			return err
		}
		if err = os.Rename(name, path); err != nil {
			os.Remove(name)
			return fmt.Errorf("atomicfile: %w", err)
		}
		return nil
	}
	tmp, err := os.CreateTemp(dir, tempPrefix+filepath.Base(path)+"-*")
	if err != nil {
		return err
	}
	name := tmp.Name()
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(name)
		}
	}()
	if err = tmp.Chmod(perm); err != nil {
		return err
	}
	if err = fill(tmp); err != nil {
		return err
	}
	if err = tmp.Sync(); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	if err = os.Rename(name, path); err != nil {
		return fmt.Errorf("atomicfile: %w", err)
	}
	return nil
}
