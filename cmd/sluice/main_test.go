package main

import (
	"bytes"
	"os"
	"testing"

	"github.com/rogpeppe/go-internal/testscript"
)

func TestMain(m *testing.M) {
	testscript.Main(m, map[string]func(){
		"sluice": func() { os.Exit(run(os.Args, os.Stdout, os.Stderr)) },
	})
}

// TestScripts runs the end-to-end scripts in testdata/script, named by
// subcommand first.
func TestScripts(t *testing.T) {
	testscript.Run(t, testscript.Params{Dir: "testdata/script", Cmds: map[string]func(*testscript.TestScript, bool, []string){
		// demo-tamper changes one digit of a file: the first "seed" value.
		"demo-tamper": func(ts *testscript.TestScript, neg bool, args []string) {
			if len(args) != 1 {
				ts.Fatalf("usage: demo-tamper FILE")
			}
			path := ts.MkAbs(args[0])
			b, err := os.ReadFile(path)
			ts.Check(err)
			i := bytes.Index(b, []byte(`"seed": `))
			if i < 0 {
				ts.Fatalf("no seed in %s", path)
			}
			j := i + len(`"seed": `)
			b[j] = '0' + (b[j]-'0'+1)%10
			ts.Check(os.WriteFile(path, b, 0o644))
		},
	}})
}
