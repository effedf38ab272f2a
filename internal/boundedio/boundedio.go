// Package boundedio reads input files that must be regular files within a
// size limit, so that a device (/dev/zero), a pipe, a directory or an
// unexpectedly huge file given as data, policy, plan or record is refused
// with a clear message instead of being read until memory runs out.
package boundedio

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
)

// Size limits of input files, stated in the README.
const (
	// MaxInput bounds every input file except draws: panels, lift tests,
	// specs, plans, policies, proposals, records, signatures, keys and
	// sluice.yaml. 5 years of 100 channels in CSV is under 1 MiB.
	MaxInput = 64 << 20
	// MaxDraws bounds a draws file (bootstrap refits, one JSON line each:
	// 100,000 draws of a 16-channel model take about 200 MiB) and a
	// rehearsal shard's rehearsal.json (about 4.5 KB a world).
	MaxDraws = 1 << 30
)

// ErrNotRegular reports a path that is not a regular file.
var ErrNotRegular = errors.New("not a regular file")

// ErrTooLarge reports a file beyond its size limit.
var ErrTooLarge = errors.New("file too large")

// Error is a refused input file; Hint says what to do.
type Error struct {
	Path string
	Err  error // ErrNotRegular or ErrTooLarge
	Msg  string
	Hint string
}

func (e *Error) Error() string { return e.Path + ": " + e.Msg }
func (e *Error) Unwrap() error { return e.Err }

// MiB writes a limit for messages.
func MiB(n int64) string { return fmt.Sprintf("%d MiB", n>>20) }

func check(path string, fi os.FileInfo, limit int64) error {
	if !fi.Mode().IsRegular() {
		kind := "a special file"
		switch {
		case fi.IsDir():
			kind = "a directory"
		case fi.Mode()&os.ModeDevice != 0:
			kind = "a device"
		case fi.Mode()&os.ModeNamedPipe != 0:
			kind = "a named pipe"
		case fi.Mode()&os.ModeSocket != 0:
			kind = "a socket"
		}
		return &Error{Path: path, Err: ErrNotRegular, Msg: "is " + kind + ", not a regular file",
			Hint: "give the path of a file saved on disk"}
	}
	if fi.Size() > limit {
		return tooLarge(path, limit)
	}
	return nil
}

func tooLarge(path string, limit int64) error {
	return &Error{Path: path, Err: ErrTooLarge, Msg: "is larger than the " + MiB(limit) + " limit for this kind of input",
		Hint: "check that this is the intended file; the limits are in the README (\"Inputs and their limits\")"}
}

// ReadFile reads the regular file at path, refusing anything else and any
// file of more than limit bytes (also one that grows past the limit while
// it is read).
func ReadFile(path string, limit int64) ([]byte, error) {
	f, err := Open(path, limit)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return io.ReadAll(f)
}

// File is an open input file whose reads fail with ErrTooLarge past the
// limit.
type File struct {
	f     *os.File
	path  string
	limit int64
	read  int64
}

// Open opens the regular file at path for reading within limit bytes.
func Open(path string, limit int64) (*File, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	fi, err := f.Stat()
	if err == nil {
		err = check(path, fi, limit)
	}
	if err != nil {
		f.Close()
		return nil, err
	}
	return &File{f: f, path: path, limit: limit}, nil
}

// Read reads from the file; past the limit it returns an *Error.
func (b *File) Read(p []byte) (int, error) {
	if b.read >= b.limit {
		// One byte more tells a file that is exactly at the limit from one
		// that grew past it.
		var one [1]byte
		if n, _ := b.f.Read(one[:]); n > 0 {
			return 0, tooLarge(b.path, b.limit)
		}
		return 0, io.EOF
	}
	if rest := b.limit - b.read; int64(len(p)) > rest {
		p = p[:rest]
	}
	n, err := b.f.Read(p)
	b.read += int64(n)
	return n, err
}

// Close closes the file.
func (b *File) Close() error { return b.f.Close() }

// SHA256 hashes the file at path as it streams, within limit, and returns
// the hex digest.
func SHA256(path string, limit int64) (string, error) {
	f, err := Open(path, limit)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
