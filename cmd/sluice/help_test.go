package main

import (
	"io"
	"slices"
	"strings"
	"testing"
)

// TestExamplesUseKnownFlags: every command has one or two examples, each
// starts with "sluice COMMAND", and every flag they use is the command's
// own under its current spelling (a renamed flag's old spelling is hidden
// and must not be taught).
func TestExamplesUseKnownFlags(t *testing.T) {
	app := newApp(io.Discard, io.Discard)
	for _, c := range app.Commands {
		if c.Name == "help" {
			continue
		}
		ex := commandExamples[c.Name]
		var runs []string
		for _, line := range ex {
			if !strings.HasPrefix(line, "#") {
				runs = append(runs, line)
			}
		}
		if len(runs) < 1 || len(runs) > 2 {
			t.Errorf("%s: %d examples, want one or two", c.Name, len(runs))
		}
		for _, run := range runs {
			f := strings.Fields(run)
			if len(f) < 2 || f[0] != "sluice" || f[1] != c.Name {
				t.Errorf("%s: example %q does not start with sluice %s", c.Name, run, c.Name)
				continue
			}
			for _, w := range f[2:] {
				if !strings.HasPrefix(w, "--") {
					continue
				}
				name := strings.TrimPrefix(w, "--")
				fl := flagNamed(c, name)
				if fl == nil {
					t.Errorf("%s: example uses --%s, which the command does not have", c.Name, name)
					continue
				}
				if slices.ContainsFunc(renames, func(r rename) bool { return r.command == c.Name && r.old == name }) {
					t.Errorf("%s: example uses the old spelling --%s", c.Name, name)
				}
			}
		}
	}
}
