package main

import (
	"fmt"
	"os"

	"github.com/spf13/viper"
	"github.com/urfave/cli/v2"
)

// rename is a flag spelled differently before this release. The old
// spelling still works for one release, with a note on stderr; giving both
// is an error.
type rename struct{ command, old, new string }

// renames give each flag one meaning across commands: --draws is always a
// draws file (in bootstrap it was a count: now --bootstrap-draws, as in
// propose and validate), --out always a file (a directory is --dir, a
// key-file prefix --prefix), and curves writes its CSV with --out.
var renames = []rename{
	{"bootstrap", "draws", "bootstrap-draws"},
	{"propose", "out", "dir"},
	{"demo", "out", "dir"},
	{"simulate", "out", "dir"},
	{"rehearse", "out", "dir"},
	{"rehearse-merge", "out", "dir"},
	{"keygen", "out", "prefix"},
	{"curves", "csv", "out"},
}

// applyRenames adds the old spellings as hidden flags and a Before step
// that moves their value to the new name.
func applyRenames(cmds []*cli.Command) {
	for _, c := range cmds {
		var mine []rename
		for _, r := range renames {
			if r.command == c.Name && hasFlag(c, r.new) && !hasFlag(c, r.old) {
				mine = append(mine, r)
				c.Flags = append(c.Flags, hiddenLike(flagNamed(c, r.new), r.old))
			}
		}
		if len(mine) == 0 {
			continue
		}
		before := c.Before
		c.Before = func(ctx *cli.Context) error {
			for _, r := range mine {
				if !ctx.IsSet(r.old) {
					// A default for the old name in SLUICE_* or sluice.yaml
					// still counts, with the same note.
					if v, from, ok := oldDefault(r.old); ok && !ctx.IsSet(r.new) && !hasDefault(r.new) {
						fmt.Fprintf(ctx.App.ErrWriter, "sluice: note: %s gives %s --%s, now --%s; the old name is read until the next release\n", from, r.command, r.old, r.new)
						if err := ctx.Set(r.new, v); err != nil {
							return fmt.Errorf("%s: %s: %w", from, r.old, err)
						}
					}
					continue
				}
				if ctx.IsSet(r.new) {
					return withHint(fmt.Errorf("%s: --%s and --%s are the same flag", r.command, r.old, r.new), "give --%s only", r.new)
				}
				fmt.Fprintf(ctx.App.ErrWriter, "sluice: note: %s --%s is now --%s; the old spelling is accepted until the next release\n", r.command, r.old, r.new)
				if err := ctx.Set(r.new, ctx.String(r.old)); err != nil {
					return fmt.Errorf("%s --%s: %w", r.command, r.old, err)
				}
			}
			if before != nil {
				return before(ctx)
			}
			return nil
		}
	}
}

// oldDefault is the default SLUICE_* or sluice.yaml gives flag name, and
// where it comes from.
func oldDefault(name string) (value, from string, ok bool) {
	if v, set := os.LookupEnv(envName(name)); set && v != "" {
		return v, envName(name), true
	}
	if _, err := os.Stat(configFile); err != nil {
		return "", "", false
	}
	v := viper.New()
	v.SetConfigFile(configFile)
	v.SetConfigType("yaml")
	if v.ReadInConfig() != nil || !v.IsSet(name) {
		return "", "", false
	}
	return v.GetString(name), configFile, true
}

func hasDefault(name string) bool {
	_, _, ok := oldDefault(name)
	return ok
}

func hasFlag(c *cli.Command, name string) bool { return flagNamed(c, name) != nil }

func flagNamed(c *cli.Command, name string) cli.Flag {
	for _, f := range c.Flags {
		for _, n := range f.Names() {
			if n == name {
				return f
			}
		}
	}
	return nil
}

// hiddenLike is a hidden flag named old of the same kind as f, with no
// default: only a value given on the command line is moved.
func hiddenLike(f cli.Flag, old string) cli.Flag {
	switch f.(type) {
	case *cli.IntFlag:
		return &cli.IntFlag{Name: old, Hidden: true}
	case *cli.Uint64Flag:
		return &cli.Uint64Flag{Name: old, Hidden: true}
	case *cli.Float64Flag:
		return &cli.Float64Flag{Name: old, Hidden: true}
	case *cli.BoolFlag:
		return &cli.BoolFlag{Name: old, Hidden: true}
	default:
		return &cli.StringFlag{Name: old, Hidden: true}
	}
}
