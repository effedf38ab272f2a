package main

import (
	"os"
	"testing"

	"github.com/rogpeppe/go-internal/testscript"
)

func TestMain(m *testing.M) {
	testscript.Main(m, map[string]func(){"sluice": func() { os.Exit(run(os.Args, os.Stdout, os.Stderr)) }})
}

// End-to-end tests of the commands: txtar scripts in testdata/script, named
// by subcommand, embedding their inputs.
func TestScripts(t *testing.T) {
	testscript.Run(t, testscript.Params{Dir: "testdata/script"})
}
