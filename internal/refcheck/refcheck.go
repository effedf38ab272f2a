// Package refcheck runs the live cross-checks against general-purpose
// reference libraries (SciPy, statsmodels, R from Debian's packages). A test
// that needs one calls Python or R; on a developer machine without the
// library the test is skipped, under CI (CI=true) it fails, so CI always
// really runs the reference library.
package refcheck

import (
	"bytes"
	"os"
	"os/exec"
	"testing"
)

// DebianPython is the interpreter Debian's python3-* packages install into.
// A python3 earlier on PATH (pyenv, a virtualenv) would not see them.
const DebianPython = "/usr/bin/python3"

// Python runs script (a path) with Debian's python3, writing stdin to it, and
// returns its standard output. modules are imported first to decide whether
// the reference library is present.
func Python(t testing.TB, modules []string, script string, stdin []byte, args ...string) []byte {
	t.Helper()
	for _, m := range modules {
		if err := exec.Command(DebianPython, "-c", "import "+m).Run(); err != nil {
			unavailable(t, "python module "+m+" ("+DebianPython+")")
		}
	}
	return run(t, DebianPython, append([]string{script}, args...), stdin)
}

// R runs an R script with Rscript and returns its standard output. packages
// are loaded first to decide whether R and they are present.
func R(t testing.TB, packages []string, script string, stdin []byte, args ...string) []byte {
	t.Helper()
	if _, err := exec.LookPath("Rscript"); err != nil {
		unavailable(t, "Rscript")
	}
	for _, p := range packages {
		if err := exec.Command("Rscript", "-e", "library("+p+")").Run(); err != nil {
			unavailable(t, "R package "+p)
		}
	}
	return run(t, "Rscript", append([]string{script}, args...), stdin)
}

func run(t testing.TB, name string, args []string, stdin []byte) []byte {
	t.Helper()
	cmd := exec.Command(name, args...)
	cmd.Stdin = bytes.NewReader(stdin)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("%s %v: %v\n%s", name, args, err, stderr.String())
	}
	return out
}

func unavailable(t testing.TB, what string) {
	t.Helper()
	if os.Getenv("CI") != "" {
		t.Fatalf("reference check needs %s, which is not installed; .ci/run must install it", what)
	}
	t.Skipf("reference check skipped: %s not installed (CI installs it)", what)
}
