//go:build !linux

package atomicfile

import "os"

// writeInSet writes data to path through a named temporary file (see
// [Write]); a process killed meanwhile leaves it for the next WriteSet in
// the directory to remove.
func writeInSet(path string, data []byte, perm os.FileMode) error {
	return Write(path, data, perm)
}
