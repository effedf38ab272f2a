//go:build !linux

package atomicfile

import "os"

// openUnnamed is not available here: Write uses a named temporary file.
func openUnnamed(dir string, perm os.FileMode) (*os.File, bool) { return nil, false }

func linkUnnamed(f *os.File, path string) error { panic("atomicfile: no unnamed files here") }

// writeInSet writes data to path through a named temporary file (see
// [Write]); a process killed meanwhile leaves it for the next WriteSet in
// the directory to remove.
func writeInSet(path string, data []byte, perm os.FileMode) error {
	return Write(path, data, perm)
}
