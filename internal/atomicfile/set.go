package atomicfile

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
)

// ManifestName is the file, written last, that marks a directory's output
// set as complete: it lists each file of the set with its SHA-256. A
// directory without it holds no complete set (a run was interrupted, or
// is still writing).
const ManifestName = "outputs.json"

// ManifestFormat tags a manifest.
const ManifestFormat = "sluice.outputs.v1"

// ErrIncomplete is wrapped by [CheckSet] when a directory holds no complete
// set or a file differs from the one the set was written with.
var ErrIncomplete = errors.New("incomplete output set")

// File is one file of a set.
type File struct {
	Name string // base name, no directory
	Data []byte
	Perm os.FileMode
}

// SetOptions tune [WriteSet].
type SetOptions struct {
	// Keep keeps the entries of the directory's current manifest for files
	// not written now (e.g. rendering the brief again keeps the record);
	// false starts a new set.
	Keep bool
	// Guard runs with the directory locked, just before anything is
	// written; an error stops the write and leaves the directory as it
	// was. It is where "never overwrite a signed record" is decided, at
	// write time rather than before a long computation.
	Guard func() error
}

type manifest struct {
	Format string            `json:"format"`
	Files  map[string]string `json:"files"` // name → hex SHA-256
}

// WriteSet writes files into dir as one set, all or nothing for a reader
// that checks the set with [CheckSet]: with dir locked against other
// sluice writers, it runs the guard, removes the manifest (from here on
// the directory holds no complete set), writes each file (see [Write]:
// never half-written), and writes the manifest last. A run killed at any
// point leaves either the previous complete set or a directory without a
// manifest; on Linux no temporary file survives even SIGKILL (files are
// written unnamed, O_TMPFILE, and linked in place), elsewhere a stale
// temporary file is removed by the next WriteSet in dir.
func WriteSet(dir string, files []File, o SetOptions) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	unlock, err := LockDir(dir)
	if err != nil {
		return err
	}
	defer unlock()
	removeStaleTemps(dir)
	if o.Guard != nil {
		if err := o.Guard(); err != nil {
			return err
		}
	}
	m := manifest{Format: ManifestFormat, Files: map[string]string{}}
	if o.Keep {
		old, err := readManifest(dir)
		if err != nil {
			return err
		}
		m.Files = old.Files
	}
	for _, f := range files {
		if f.Name != filepath.Base(f.Name) || f.Name == ManifestName || strings.HasPrefix(f.Name, ".") {
			return fmt.Errorf("atomicfile: %q is not a plain file name for a set", f.Name)
		}
	}
	mp := filepath.Join(dir, ManifestName)
	if err := os.Remove(mp); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	if err := syncDir(dir); err != nil {
		return err
	}
	for i, f := range files {
		if crashHook != nil {
			crashHook(i)
		}
		if err := writeInSet(filepath.Join(dir, f.Name), f.Data, f.Perm); err != nil {
			return err
		}
		sum := sha256.Sum256(f.Data)
		m.Files[f.Name] = hex.EncodeToString(sum[:])
	}
	if crashHook != nil {
		crashHook(len(files))
	}
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return err
	}
	if err := writeInSet(mp, append(b, '\n'), 0o644); err != nil {
		return err
	}
	return syncDir(dir)
}

// crashHook, when set by a test, runs before file i of a set is written
// (i = len(files): before the manifest), so a test can stop the process
// there.
var crashHook func(i int)

func readManifest(dir string) (*manifest, error) {
	mp := filepath.Join(dir, ManifestName)
	b, err := os.ReadFile(mp)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("%s: %w: no %s (an interrupted run, or files not written by sluice); write the set again", dir, ErrIncomplete, ManifestName)
	}
	if err != nil {
		return nil, err
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	var m manifest
	if err := dec.Decode(&m); err != nil || m.Format != ManifestFormat || m.Files == nil {
		return nil, fmt.Errorf("%s: not a sluice output manifest (%s)", mp, ManifestFormat)
	}
	return &m, nil
}

// CheckSet checks that dir holds a complete set and that each named file
// is the one the set was written with. Errors wrap [ErrIncomplete].
func CheckSet(dir string, names ...string) error {
	m, err := readManifest(dir)
	if err != nil {
		return err
	}
	for _, n := range names {
		want, ok := m.Files[n]
		if !ok {
			return fmt.Errorf("%s: %w: %s does not list %s", dir, ErrIncomplete, ManifestName, n)
		}
		b, err := os.ReadFile(filepath.Join(dir, n))
		if err != nil {
			return fmt.Errorf("%s: %w: %v", dir, ErrIncomplete, err)
		}
		sum := sha256.Sum256(b)
		if got := hex.EncodeToString(sum[:]); got != want {
			return fmt.Errorf("%s: %w: %s is not the file the set was written with (sha256 %s, %s lists %s)",
				dir, ErrIncomplete, n, got[:12], ManifestName, want[:12])
		}
	}
	return nil
}

// tempPrefix starts the name of every temporary file this package makes.
const tempPrefix = ".sluice-tmp-"

// removeStaleTemps removes temporary files left by a killed writer. The
// caller holds the directory's lock, so no live writer owns them.
func removeStaleTemps(dir string) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return
	}
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), tempPrefix) && e.Type().IsRegular() {
			os.Remove(filepath.Join(dir, e.Name()))
		}
	}
}

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	d.Sync() // some file systems cannot sync a directory; the links still hold
	return nil
}
