// Command sluice sizes next quarter's paid-media reallocation to what the
// evidence supports: it fits a weekly response model, bootstraps it,
// validates it, proposes a constrained reallocation, gates it by a written
// policy and writes a decision record and brief. See README.md.
package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/urfave/cli/v2"

	"sluice/internal/boundedio"
	"sluice/model"
)

// version is the tool version written into every output.
const version = "0.1.0"

func main() {
	os.Exit(run(os.Args, os.Stdout, os.Stderr))
}

// run executes the CLI and returns the exit code; errors are printed once,
// as one line, with a hint line where a fix is likely.
func run(args []string, stdout, stderr io.Writer) int {
	app := newApp(stdout, stderr)
	err := app.Run(args)
	if err == nil {
		return 0
	}
	var exit cli.ExitCoder
	if errors.As(err, &exit) && exit.ExitCode() == 0 {
		return 0
	}
	if err.Error() != "" {
		printError(stderr, err)
	}
	var code interface{ ExitCode() int }
	if errors.As(err, &code) && code.ExitCode() != 0 {
		return code.ExitCode()
	}
	return 1
}

func printError(w io.Writer, err error) {
	msg := err.Error()
	fmt.Fprintf(w, "sluice: %s\n", firstLine(msg))
	var de *model.DataError
	if errors.As(err, &de) && de.Hint != "" {
		fmt.Fprintf(w, "hint: %s\n", de.Hint)
	}
	if errors.Is(err, model.ErrBaseDependent) {
		fmt.Fprintln(w, "hint: leave that column out of --controls (or the spec's controls); a control that only repeats the trend or the season adds nothing the base does not have")
	}
	var be *boundedio.Error
	if errors.As(err, &be) && be.Hint != "" {
		fmt.Fprintf(w, "hint: %s\n", be.Hint)
	}
	var h hinted
	if errors.As(err, &h) {
		fmt.Fprintf(w, "hint: %s\n", h.hint)
	}
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// hinted is an error with a suggested fix.
type hinted struct {
	err  error
	hint string
}

func (h hinted) Error() string { return h.err.Error() }
func (h hinted) Unwrap() error { return h.err }

func withHint(err error, format string, a ...any) error {
	return hinted{err: err, hint: fmt.Sprintf(format, a...)}
}

func newApp(stdout, stderr io.Writer) *cli.App {
	cmds := []*cli.Command{
		fitCommand(),
		simulateCommand(),
		demoCommand(),
		bootstrapCommand(),
		mergeCommand(),
		curvesCommand(),
		validateCommand(),
		allocateCommand(),
		proposeCommand(),
		rehearseCommand(),
		rehearseMergeCommand(),
		verifyCommand(),
		reportCommand(),
		keygenCommand(),
		signCommand(),
	}
	// Old spellings of renamed flags keep working for one release; every
	// command's help ends with examples.
	applyRenames(cmds)
	addExamples(cmds)
	return &cli.App{
		Name:    "sluice",
		Usage:   "size next quarter's media reallocation to what the evidence supports",
		Version: version,
		Writer:  stdout, ErrWriter: stderr,
		// `sluice help` and `sluice help COMMAND` print the same as --help.
		HideHelpCommand: false,
		ExitErrHandler:  func(*cli.Context, error) {}, // run prints errors once
		Commands:        cmds,
	}
}
