package boundedio

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Regular files within the limit are read whole; a directory, a device and
// a file past the limit are refused with the reason (POSIX: /dev/zero and
// /dev/null are character devices; a file that is exactly at the limit is
// accepted, one byte more is not).
func TestReadFile(t *testing.T) {
	dir := t.TempDir()
	ok := filepath.Join(dir, "ok.csv")
	if err := os.WriteFile(ok, []byte("week,revenue\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	b, err := ReadFile(ok, 13)
	if err != nil || string(b) != "week,revenue\n" {
		t.Fatalf("ReadFile at the limit: %q, %v", b, err)
	}
	if _, err := ReadFile(ok, 12); !errors.Is(err, ErrTooLarge) || !strings.Contains(err.Error(), "limit") {
		t.Errorf("one byte past the limit: %v", err)
	}
	for _, p := range []string{dir, "/dev/zero", "/dev/null"} {
		if _, err := os.Stat(p); err != nil {
			continue
		}
		_, err := ReadFile(p, MaxInput)
		if !errors.Is(err, ErrNotRegular) {
			t.Errorf("%s: %v, want not a regular file", p, err)
		}
	}
	if _, err := ReadFile(filepath.Join(dir, "missing"), MaxInput); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

// A file that grows past the limit after it was opened (a log still being
// written) fails while it is read, not after reading all of it.
func TestGrowsPastLimit(t *testing.T) {
	path := filepath.Join(t.TempDir(), "growing.csv")
	if err := os.WriteFile(path, []byte("0123456789"), 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := Open(path, 16)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := os.WriteFile(path, []byte("0123456789abcdefXYZ"), 0o644); err != nil {
		t.Fatal(err)
	}
	b, err := io.ReadAll(f)
	if !errors.Is(err, ErrTooLarge) || len(b) != 16 {
		t.Fatalf("read %d bytes, error %v; want 16 bytes and ErrTooLarge", len(b), err)
	}
}
