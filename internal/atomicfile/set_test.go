//go:build unix

package atomicfile

import (
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// The subprocess side of the kill tests: TestMain runs it when the
// environment asks, instead of the tests.
func TestMain(m *testing.M) {
	switch os.Getenv("ATOMICFILE_CHILD") {
	case "crash":
		// Write generation 1 completely, then generation 2 with a SIGKILL
		// before file ATOMICFILE_AT (len: before the manifest).
		dir := os.Getenv("ATOMICFILE_DIR")
		at, _ := strconv.Atoi(os.Getenv("ATOMICFILE_AT"))
		must(WriteSet(dir, generation(1), SetOptions{}))
		crashHook = func(i int) {
			if i == at {
				syscall.Kill(os.Getpid(), syscall.SIGKILL)
				time.Sleep(time.Minute)
			}
		}
		must(WriteSet(dir, generation(2), SetOptions{}))
		os.Exit(0)
	case "loop":
		// Write generation after generation until killed.
		dir := os.Getenv("ATOMICFILE_DIR")
		for g := 1; ; g++ {
			if err := WriteSet(dir, generation(g), SetOptions{}); err != nil && !errors.Is(err, ErrLocked) {
				fmt.Fprintln(os.Stderr, err)
				os.Exit(2)
			}
		}
	}
	os.Exit(m.Run())
}

func must(err error) {
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(2)
	}
}

var setNames = []string{"decision.json", "brief.json", "report.html"}

// generation g's files each hold "g <name>" and enough bytes that writing
// them takes a moment.
func generation(g int) []File {
	var fs []File
	for _, n := range setNames {
		fs = append(fs, File{Name: n, Data: []byte(fmt.Sprintf("%d %s\n%s", g, n, strings.Repeat("x", 64<<10))), Perm: 0o644})
	}
	return fs
}

// checkDir asserts the invariant a reader relies on: either the directory
// holds a complete set whose files all come from one generation, or
// CheckSet says it is incomplete; and no temporary file is left. It
// returns the generation, 0 for an incomplete set.
func checkDir(t *testing.T, dir string) int {
	t.Helper()
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), ".") {
			t.Errorf("temporary file survived: %s", e.Name())
		}
	}
	err := CheckSet(dir, setNames...)
	if err != nil {
		if !errors.Is(err, ErrIncomplete) {
			t.Fatalf("CheckSet: %v", err)
		}
		return 0
	}
	gen := -1
	for _, n := range setNames {
		b, _ := os.ReadFile(filepath.Join(dir, n))
		var g int
		fmt.Sscanf(string(b), "%d", &g)
		if gen >= 0 && g != gen {
			t.Fatalf("complete set mixes generations %d and %d", gen, g)
		}
		gen = g
	}
	return gen
}

// A SIGKILL before each file of the set, and before the manifest: the
// directory never passes for a complete set, never holds a temporary file,
// and the next WriteSet completes.
func TestWriteSetKilledAtEachPoint(t *testing.T) {
	for at := 0; at <= len(setNames); at++ {
		t.Run(fmt.Sprint("before file ", at), func(t *testing.T) {
			dir := t.TempDir()
			cmd := exec.Command(os.Args[0], "-test.run=^$")
			cmd.Env = append(os.Environ(), "ATOMICFILE_CHILD=crash", "ATOMICFILE_DIR="+dir, "ATOMICFILE_AT="+strconv.Itoa(at))
			err := cmd.Run()
			var ee *exec.ExitError
			if !errors.As(err, &ee) || ee.ProcessState.Sys().(syscall.WaitStatus).Signal() != syscall.SIGKILL {
				t.Fatalf("child did not die by SIGKILL: %v", err)
			}
			if g := checkDir(t, dir); g != 0 {
				t.Fatalf("killed before file %d, the directory passes as complete generation %d", at, g)
			}
			if err := WriteSet(dir, generation(3), SetOptions{}); err != nil {
				t.Fatal(err)
			}
			if g := checkDir(t, dir); g != 3 {
				t.Fatalf("after rewriting: generation %d", g)
			}
		})
	}
}

// Kill trials: a writer rewriting the set in a loop is SIGKILLed after a
// varying delay, 30 times. Every time the directory is a complete set of
// one generation or marked incomplete, with no temporary file.
func TestWriteSetKillTrials(t *testing.T) {
	if testing.Short() {
		t.Skip("kill trials take a few seconds")
	}
	complete := 0
	for trial := range 30 {
		dir := t.TempDir()
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), "ATOMICFILE_CHILD=loop", "ATOMICFILE_DIR="+dir)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		time.Sleep(time.Duration(20+trial*7%50) * time.Millisecond)
		cmd.Process.Kill()
		cmd.Wait()
		if checkDir(t, dir) > 0 {
			complete++
		}
	}
	t.Logf("30 kill trials: %d left a complete set, %d a set marked incomplete, none mixed", complete, 30-complete)
}

// The guard runs under the lock, before anything is written; its error
// leaves the directory as it was. A second writer is refused while the
// lock is held.
func TestWriteSetGuardAndLock(t *testing.T) {
	dir := t.TempDir()
	if err := WriteSet(dir, generation(1), SetOptions{}); err != nil {
		t.Fatal(err)
	}
	stop := errors.New("signed meanwhile")
	err := WriteSet(dir, generation(2), SetOptions{Guard: func() error {
		if err := WriteSet(dir, generation(9), SetOptions{}); !errors.Is(err, ErrLocked) {
			t.Errorf("second writer while locked: %v, want ErrLocked", err)
		}
		return stop
	}})
	if !errors.Is(err, stop) {
		t.Fatalf("guard error not returned: %v", err)
	}
	if g := checkDir(t, dir); g != 1 {
		t.Fatalf("after a refusing guard: generation %d, want 1 untouched", g)
	}
	// Keep: rewriting one file keeps the other entries.
	if err := WriteSet(dir, []File{{Name: "report.html", Data: []byte("1 report.html again"), Perm: 0o644}}, SetOptions{Keep: true}); err != nil {
		t.Fatal(err)
	}
	if err := CheckSet(dir, setNames...); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(dir, "report.html"), []byte("edited"), 0o644)
	if err := CheckSet(dir, "report.html"); !errors.Is(err, ErrIncomplete) || !strings.Contains(err.Error(), "not the file the set was written with") {
		t.Fatalf("edited file: %v", err)
	}
}
