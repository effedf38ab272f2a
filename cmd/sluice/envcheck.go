package main

import (
	"fmt"
	"os"
	"strconv"
	"strings"

	"github.com/spf13/viper"
	"github.com/urfave/cli/v2"
)

// envName is the environment variable that gives flag name a default.
func envName(name string) string {
	return "SLUICE_" + strings.ToUpper(strings.ReplaceAll(name, "-", "_"))
}

// checkSources refuses a number flag's default from the environment or
// sluice.yaml that is not a number, naming where it came from: a bad
// SLUICE_VALUE_PER_KPI=abc must not reach the command as 0.
func checkSources(v *viper.Viper, c *cli.Context) error {
	if c.Command == nil {
		return nil
	}
	for _, f := range c.Command.Flags {
		name := f.Names()[0]
		if c.IsSet(name) || !v.IsSet(name) {
			continue
		}
		var parse func(string) error
		switch f.(type) {
		case *cli.Float64Flag:
			parse = func(s string) error { _, err := strconv.ParseFloat(s, 64); return err }
		case *cli.IntFlag:
			parse = func(s string) error { _, err := strconv.Atoi(s); return err }
		case *cli.Uint64Flag:
			parse = func(s string) error { _, err := strconv.ParseUint(s, 10, 64); return err }
		case *cli.BoolFlag:
			parse = func(s string) error { _, err := strconv.ParseBool(s); return err }
		default:
			continue
		}
		raw := strings.TrimSpace(v.GetString(name))
		if parse(raw) == nil {
			continue
		}
		what := "a number"
		if _, ok := f.(*cli.BoolFlag); ok {
			what = "true or false"
		}
		if env, ok := os.LookupEnv(envName(name)); ok {
			return withHint(fmt.Errorf("%s=%s: --%s must be %s", envName(name), env, name, what),
				"fix or unset %s (it gives --%s its default)", envName(name), name)
		}
		return withHint(fmt.Errorf("%s: %s: %q: --%s must be %s", configFile, name, raw, name, what),
			"fix the key %s in %s", name, configFile)
	}
	return nil
}
